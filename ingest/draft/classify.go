package draft

import (
	"fmt"
	"strings"

	"github.com/dewline/dewline/metrics"
)

// Confidence says how sure a mapping is.
type Confidence int

// Confidence levels. Low is a guess a person must check.
const (
	Low Confidence = iota + 1
	Medium
	High
)

func (c Confidence) String() string {
	switch c {
	case High:
		return "high"
	case Medium:
		return "medium"
	case Low:
		return "low"
	}
	return "none"
}

// verdict is what the evidence says about one point.
type verdict struct {
	role     metrics.Role // "" when no role fits
	conf     Confidence
	evidence []string // what was read, for the comment
	note     string   // why no role, or what to check
	shared   bool     // a site-wide point (outdoor air) every air handler may use
	facts    feature  // system words (chilled water, hot water, hot gas, electric) for the equipment facts
}

// Notes for points no role takes yet.
const (
	noteSetpoint = "a set point, not a measurement"
	noteOther    = "a quantity no role uses (status, pressure, speed, damper, energy, ...)"
	noteUnknown  = "the name says nothing dewline reads"
)

// decide turns the features of a point into a role.
func decide(f feature) verdict {
	v := verdict{conf: High, facts: f & (fChw | fHotWat | fHotGas | fElec)}
	// "RH" beside a valve, kW or stage is reheat, not humidity.
	if f&fAmbigRH != 0 && f&(fValve|fPower) != 0 && f&(fTemp|fDew) == 0 {
		f = f&^fRH | fReheat
	}
	switch {
	case f&fSetpt != 0:
		return verdict{note: noteSetpoint}
	case f&fPreheat != 0:
		return verdict{note: "a preheat coil point: preheat is not reheat and has no role"}
	case f&fExhaust != 0:
		return verdict{note: "exhaust or relief air: no role"}
	}
	q := f & (fTemp | fRH | fDew | fFlow | fPower | fValve)
	// Dew point beats temperature ("MA Dewpoint Temp"), humidity beats
	// temperature ("Zone Humidity Temp" is rare; "RH" is the quantity).
	switch {
	case q&fDew != 0:
		q = fDew
	case q&fRH != 0 && q&(fPower|fValve) == 0:
		q = fRH
	case q&fPower != 0:
		q = fPower
	case q&fValve != 0:
		q = fValve
	case q&fFlow != 0:
		q = fFlow
	case q&fTemp != 0:
		q = fTemp
	}
	if q == 0 {
		if f&fOther != 0 {
			return verdict{note: noteOther}
		}
		return verdict{note: noteUnknown}
	}
	if f&fOther != 0 && q != fPower {
		// "Supply Fan Status", "SA Static Pressure": the quantity is the other one.
		return verdict{note: noteOther}
	}
	if f&fGuess != 0 {
		v.conf = Medium
	}
	if f&fDoubt != 0 {
		v.conf = Low
		v.evidence = append(v.evidence, "an abbreviation with two meanings")
	}
	coilLeaving := f&fLeaving != 0 && f&(fCoil|fCool) != 0 ||
		f&fCoil != 0 && f&fSupply != 0 // "CC Discharge Temp", "DAT Coil"
	entering := f&fMix != 0 || f&fEntering != 0
	switch q {
	case fTemp, fRH, fDew:
		var loc string
		switch {
		case coilLeaving:
			loc = "leaving"
		case f&fReturn != 0:
			loc = "return"
		case entering && f&fOutdoor == 0:
			loc = "entering"
		case f&fLeaving != 0 && f&fSupply == 0:
			// "LAT": leaving air of the unit's coil, most often.
			loc, v.conf = "leaving", min(v.conf, Medium)
			v.evidence = append(v.evidence, "leaving air taken as the cooling coil's")
		case f&fSupply != 0:
			loc = "supply"
		case f&fOutdoor != 0:
			loc, v.shared = "outdoor", true
		case f&fSpace != 0:
			loc = "space"
		case f&fCoil != 0:
			loc, v.conf = "leaving", Medium
		default:
			return verdict{note: "a " + quantityName(q) + " whose location (mixed, coil leaving, supply, outdoor, space) the name does not say"}
		}
		r, note := airRole(loc, q)
		if r == "" {
			return verdict{note: note}
		}
		v.role = r
		if note != "" {
			v.evidence = append(v.evidence, note)
			v.conf = min(v.conf, Medium)
		}
		if q == fDew && f&fAmbigDP != 0 {
			v.evidence = append(v.evidence, "DP read as dew point")
		}
		if q == fRH && f&fAmbigRH != 0 && f&(fHeat|fReheat) != 0 {
			v.conf = Low
		}
	case fFlow:
		switch {
		case f&(fReturn|fExhaust) != 0:
			return verdict{note: "return or exhaust airflow: no role (the supply and outdoor airflows are the ones used)"}
		case f&fOutdoor != 0:
			v.role = metrics.RoleOutdoorFlow // the unit's own outdoor-air station, not the site's
		case f&fSupply != 0:
			v.role = metrics.RoleSupplyFlow
		default:
			v.role, v.conf = metrics.RoleSupplyFlow, min(v.conf, Medium)
			v.evidence = append(v.evidence, "the unit's only named airflow taken as supply")
		}
	case fPower:
		switch {
		case f&fFan != 0:
			v.role = metrics.RoleFanPower
		case f&(fReheat|fHotGas) != 0 || f&fHeat != 0 && f&fElec != 0:
			v.role = metrics.RoleReheatPower
		case f&fCool != 0:
			v.role = metrics.RoleCoolingPower
		case f&fHeat != 0:
			v.role, v.conf = metrics.RoleReheatPower, Low
			v.evidence = append(v.evidence, "heating power taken as reheat; a preheat coil would not be")
		default:
			return verdict{note: "electric power of what (compressor, reheat, fan) the name does not say"}
		}
	case fValve:
		switch {
		case f&(fReheat|fHotGas) != 0:
			v.role = metrics.RoleReheatValve
		case f&fCool != 0:
			v.role = metrics.RoleCoolingValve
		case f&fHeat != 0:
			v.role, v.conf = metrics.RoleReheatValve, min(v.conf, Medium)
			v.evidence = append(v.evidence, "a heating valve on a dehumidifying unit taken as reheat (after the cooling coil); a preheat valve would not be")
		default:
			return verdict{note: "a valve or command of what (cooling, reheat) the name does not say"}
		}
	}
	return v
}

// airRoleNote is the role of a quantity of air at a location, or why it
// has none (or how it was read).
type airRoleNote struct {
	role metrics.Role
	note string
}

// airRoles are the roles by "location/quantity".
var airRoles = map[string]airRoleNote{
	"entering/temperature": {metrics.RoleEnteringTemp, ""},
	"entering/humidity":    {metrics.RoleEnteringRH, ""},
	"entering/dew point":   {metrics.RoleEnteringDewPoint, ""},
	"leaving/temperature":  {metrics.RoleLeavingTemp, ""},
	"leaving/humidity":     {metrics.RoleLeavingRH, ""},
	"leaving/dew point":    {metrics.RoleLeavingDewPoint, ""},
	"supply/temperature":   {metrics.RoleSupplyTemp, ""},
	"supply/dew point":     {metrics.RoleLeavingDewPoint, "supply dew point taken as the coil's leaving dew point (reheat adds no moisture)"},
	"supply/humidity":      {"", "supply RH: no role (after reheat its RH differs from the coil's; map a coil leaving RH or a supply dew point)"},
	"return/temperature":   {metrics.RoleReturnTemp, ""},
	"return/humidity":      {metrics.RoleReturnRH, ""},
	"return/dew point":     {metrics.RoleReturnDewPoint, ""},
	"outdoor/temperature":  {metrics.RoleOutdoorTemp, ""},
	"outdoor/humidity":     {metrics.RoleOutdoorRH, ""},
	"outdoor/dew point":    {"", "outdoor dew point: no role (outdoor humidity is read as RH)"},
	"space/temperature":    {metrics.RoleSpaceTemp, ""},
	"space/humidity":       {metrics.RoleSpaceRH, ""},
	"space/dew point":      {"", "space dew point: no role (space humidity is read as RH)"},
}

// airRole is the role of a quantity of air at a location.
func airRole(loc string, q feature) (metrics.Role, string) {
	if r, ok := airRoles[loc+"/"+quantityName(q)]; ok {
		return r.role, r.note
	}
	return "", fmt.Sprintf("%s %s: no role", loc, quantityName(q))
}

func quantityName(q feature) string {
	switch q {
	case fTemp:
		return "temperature"
	case fRH:
		return "humidity"
	case fDew:
		return "dew point"
	case fFlow:
		return "airflow"
	case fPower:
		return "power"
	case fValve:
		return "valve"
	}
	return "quantity"
}

// describe lists the words a verdict rests on.
func describe(r reading) string {
	return strings.Join(r.known, " + ")
}
