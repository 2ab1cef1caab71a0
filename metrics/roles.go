package metrics

import (
	"sort"
	"time"

	"github.com/dewline/dewline/psychro"
)

// Role is what a trend point measures on an air handler.
type Role string

// The roles dewline understands. Temperatures are °C, RH and positions
// fractions 0..1, airflow m³/s, power kW once converted.
const (
	RoleEnteringTemp     Role = "entering_temp"     // air entering the cooling coil (mixed air)
	RoleEnteringRH       Role = "entering_rh"       // RH of the entering air
	RoleEnteringDewPoint Role = "entering_dewpoint" // dew point of the entering air
	RoleLeavingTemp      Role = "leaving_temp"      // air leaving the cooling coil
	RoleLeavingRH        Role = "leaving_rh"        // RH leaving the coil (optional; often saturates)
	RoleLeavingDewPoint  Role = "leaving_dewpoint"  // dew point leaving the coil (optional)
	RoleSupplyTemp       Role = "supply_temp"       // supply air, after reheat and fan
	RoleSupplyFlow       Role = "supply_flow"       // supply airflow
	RoleOutdoorTemp      Role = "outdoor_temp"      // outdoor air temperature
	RoleOutdoorRH        Role = "outdoor_rh"        // outdoor air RH
	RoleCoolingPower     Role = "cooling_kw"        // compressor or cooling electric power
	RoleReheatPower      Role = "reheat_kw"         // electric reheat power
	RoleFanPower         Role = "fan_kw"            // supply fan power
	RoleSpaceTemp        Role = "space_temp"        // space (or return) temperature
	RoleSpaceRH          Role = "space_rh"          // space (or return) RH
	RoleCoolingValve     Role = "cooling_valve"     // cooling valve or capacity command, fraction open
	RoleReheatValve      Role = "reheat_valve"      // reheat valve or stage command, fraction open
	RoleReturnTemp       Role = "return_temp"       // return air temperature, before the outdoor air joins it
	RoleReturnRH         Role = "return_rh"         // return air RH
	RoleReturnDewPoint   Role = "return_dewpoint"   // return air dew point
	RoleOutdoorFlow      Role = "outdoor_flow"      // outdoor airflow into the mixing box
)

// RoleSpec describes a role: the kind of quantity, the physically plausible
// SI range (values outside are flagged and excluded, never clipped), and how
// long a logged value may hold before it is stale.
type RoleSpec struct {
	Role     Role
	Kind     psychro.Kind
	Min, Max float64       // plausible SI range, inclusive
	Stale    time.Duration // default hold limit for change-of-value logs
	Doc      string
	// TypMin and TypMax bound the values a working air handler usually
	// logs (SI); "dewline check" uses them to spot a wrong unit, such as a
	// °F column declared as °C.
	TypMin, TypMax float64
}

// Plausible ranges are generous on purpose: they catch wrong units and dead
// sensors (a °F value in a °C column, -273 °C, RH of 150 %), not unusual
// weather. The typical ranges are narrower. Both: common practice, no source.
var roleSpecs = []RoleSpec{
	{RoleEnteringTemp, psychro.KindTemperature, -40, 60, 15 * time.Minute, "air entering the cooling coil (mixed air)", 5, 40},
	{RoleEnteringRH, psychro.KindRH, 0, 1, 15 * time.Minute, "relative humidity of the entering air", 0.1, 1},
	{RoleEnteringDewPoint, psychro.KindTemperature, -60, 40, 15 * time.Minute, "dew point of the entering air", -10, 28},
	{RoleLeavingTemp, psychro.KindTemperature, -10, 50, 15 * time.Minute, "air leaving the cooling coil", 2, 30},
	{RoleLeavingRH, psychro.KindRH, 0, 1, 15 * time.Minute, "relative humidity leaving the cooling coil", 0.3, 1},
	{RoleLeavingDewPoint, psychro.KindTemperature, -60, 40, 15 * time.Minute, "dew point leaving the cooling coil", -5, 25},
	{RoleSupplyTemp, psychro.KindTemperature, -10, 70, 15 * time.Minute, "supply air after reheat and fan", 5, 50},
	{RoleSupplyFlow, psychro.KindFlow, 0, 200, 15 * time.Minute, "supply airflow", 0.05, 100},
	{RoleOutdoorTemp, psychro.KindTemperature, -60, 60, 60 * time.Minute, "outdoor air temperature", -40, 50},
	{RoleOutdoorRH, psychro.KindRH, 0, 1, 60 * time.Minute, "outdoor air relative humidity", 0.05, 1},
	{RoleCoolingPower, psychro.KindPower, 0, 20000, 15 * time.Minute, "compressor or cooling electric power", 0, 5000},
	{RoleReheatPower, psychro.KindPower, 0, 20000, 15 * time.Minute, "electric reheat power", 0, 5000},
	{RoleFanPower, psychro.KindPower, 0, 5000, 15 * time.Minute, "supply fan electric power", 0, 1000},
	{RoleSpaceTemp, psychro.KindTemperature, -10, 50, 30 * time.Minute, "space or return air temperature", 12, 35},
	{RoleSpaceRH, psychro.KindRH, 0, 1, 30 * time.Minute, "space or return air relative humidity", 0.1, 0.95},
	{RoleCoolingValve, psychro.KindFraction, 0, 1, 15 * time.Minute, "cooling valve or capacity command", 0, 1},
	{RoleReheatValve, psychro.KindFraction, 0, 1, 15 * time.Minute, "reheat valve or stage command", 0, 1},
	{RoleReturnTemp, psychro.KindTemperature, -10, 50, 30 * time.Minute, "return air temperature, before the outdoor air joins it", 12, 35},
	{RoleReturnRH, psychro.KindRH, 0, 1, 30 * time.Minute, "return air relative humidity", 0.1, 0.95},
	{RoleReturnDewPoint, psychro.KindTemperature, -60, 40, 30 * time.Minute, "return air dew point", -10, 25},
	{RoleOutdoorFlow, psychro.KindFlow, 0, 200, 15 * time.Minute, "outdoor airflow into the mixing box", 0, 100},
}

// humidityPairs maps each RH role to the temperature measured at the same
// place: an RH means nothing without the temperature of its own air.
var humidityPairs = map[Role]Role{
	RoleEnteringRH: RoleEnteringTemp, RoleLeavingRH: RoleLeavingTemp, RoleOutdoorRH: RoleOutdoorTemp,
	RoleSpaceRH: RoleSpaceTemp, RoleReturnRH: RoleReturnTemp,
}

// PairedTemperature returns the temperature role measured at the same place
// as the RH role r.
func PairedTemperature(r Role) (Role, bool) {
	t, ok := humidityPairs[r]
	return t, ok
}

var roleIndex = func() map[Role]RoleSpec {
	m := make(map[Role]RoleSpec, len(roleSpecs))
	for _, s := range roleSpecs {
		m[s.Role] = s
	}
	return m
}()

// LookupRole returns the spec of a role by name.
func LookupRole(name string) (RoleSpec, bool) {
	s, ok := roleIndex[Role(name)]
	return s, ok
}

// Roles returns every role spec, in a stable order.
func Roles() []RoleSpec { return append([]RoleSpec(nil), roleSpecs...) }

// RoleNames returns the role names, sorted.
func RoleNames() []string {
	out := make([]string, 0, len(roleSpecs))
	for _, s := range roleSpecs {
		out = append(out, string(s.Role))
	}
	sort.Strings(out)
	return out
}

// Typical reports whether v (SI) lies in the role's usual range.
func (s RoleSpec) Typical(v float64) bool { return v >= s.TypMin && v <= s.TypMax }

// Plausible reports whether v (SI) lies in the role's physical range.
func (s RoleSpec) Plausible(v float64) bool { return v >= s.Min && v <= s.Max }
