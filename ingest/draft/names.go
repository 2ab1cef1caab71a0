package draft

import (
	"strconv"
	"strings"
	"unicode"
)

// feature is one thing a word of a point's name says about it.
type feature uint32

const (
	fMix      feature = 1 << iota // mixed air
	fSupply                       // supply or discharge air
	fCoil                         // at a (cooling) coil
	fLeaving                      // leaving / outlet
	fEntering                     // entering / inlet
	fReturn                       // return air
	fOutdoor                      // outdoor air, weather
	fSpace                        // space, zone, room
	fExhaust                      // exhaust or relief air
	fPreheat                      // preheat coil

	fTemp  // temperature
	fRH    // relative humidity
	fDew   // dew point
	fFlow  // airflow
	fPower // electric power
	fValve // valve, position or capacity command

	fCool    // cooling: chilled water, DX, compressor
	fHeat    // heating, hot water
	fReheat  // reheat
	fFan     // supply fan
	fElec    // electric
	fHotGas  // hot-gas or other recovered-heat reheat
	fChw     // chilled water
	fHotWat  // hot water
	fSetpt   // a set point, not a measurement
	fOther   // a quantity with no role: status, pressure, speed, damper, CO2, energy, ...
	fAmbigRH // "RH" that may mean reheat
	fAmbigDP // "DP" that may mean differential pressure
	fGuess   // the word was read by splitting an unknown run of letters
	fDoubt   // the word has two common meanings (EAT: entering or exhaust air)
)

// words maps a lower-case word of a name to what it says. Abbreviations are
// the trade's usual ones (common practice, no source).
var words = map[string]feature{
	// where
	"mixed": fMix, "mix": fMix, "ma": fMix, "mxd": fMix,
	"supply": fSupply, "sa": fSupply, "sup": fSupply, "supp": fSupply, "discharge": fSupply, "disch": fSupply, "dis": fSupply, "da": fSupply, "dischg": fSupply,
	"coil": fCoil, "cc": fCoil | fCool, "evaporator": fCoil | fCool, "evap": fCoil | fCool, "clgcoil": fCoil | fCool,
	"leaving": fLeaving, "lvg": fLeaving, "lv": fLeaving, "lvng": fLeaving, "outlet": fLeaving, "leave": fLeaving, "lea": fLeaving,
	"entering": fEntering, "ent": fEntering, "entg": fEntering, "inlet": fEntering, "enter": fEntering,
	"return": fReturn, "ra": fReturn, "ret": fReturn, "rtn": fReturn,
	"outdoor": fOutdoor, "outside": fOutdoor, "oa": fOutdoor, "osa": fOutdoor, "ambient": fOutdoor, "amb": fOutdoor, "weather": fOutdoor, "out": fOutdoor, "wx": fOutdoor, "outdr": fOutdoor,
	"space": fSpace, "zone": fSpace, "zn": fSpace, "room": fSpace, "rm": fSpace, "lab": fSpace, "spc": fSpace,
	"exhaust": fExhaust, "ea": fExhaust, "exh": fExhaust, "relief": fExhaust,
	"preheat": fPreheat, "ph": fPreheat, "phc": fPreheat,
	// what
	"temp": fTemp, "temperature": fTemp, "tmp": fTemp, "t": fTemp, "dbt": fTemp, "drybulb": fTemp, "tempature": fTemp,
	"rh": fRH | fAmbigRH, "humidity": fRH, "hum": fRH, "humid": fRH, "relhum": fRH,
	"dewpoint": fDew, "dewpt": fDew, "dew": fDew, "dp": fDew | fAmbigDP, "dpt": fDew, "dwpt": fDew, "td": fDew,
	"flow": fFlow, "airflow": fFlow, "cfm": fFlow, "af": fFlow, "lps": fFlow, "volume": fFlow, "vol": fFlow,
	"kw": fPower, "power": fPower, "demand": fPower, "pwr": fPower, "watts": fPower, "kwatts": fPower,
	"valve": fValve, "vlv": fValve, "vv": fValve, "position": fValve, "pos": fValve, "cmd": fValve, "command": fValve, "output": fValve, "signal": fValve, "capacity": fValve,
	// which system
	"cooling": fCool, "cool": fCool, "clg": fCool, "chw": fCool | fChw, "chilled": fCool | fChw, "dx": fCool | fCoil, "compressor": fCool, "comp": fCool, "cmp": fCool, "compr": fCool,
	"heating": fHeat, "heat": fHeat, "htg": fHeat, "hw": fHeat | fHotWat, "hot": fHeat, "hhw": fHeat | fHotWat,
	"reheat": fReheat, "rht": fReheat, "rhc": fReheat | fCoil, "rhtg": fReheat, "reht": fReheat,
	"fan": fFan, "sf": fFan, "blower": fFan,
	"elec": fElec, "electric": fElec, "electrical": fElec,
	"gas": fHotGas, "hg": fHotGas, "hgrh": fHotGas | fReheat, "hotgas": fHotGas,
	"water": 0, "air": 0, "sensor": 0, "sensr": 0, "point": 0, "value": 0, "val": 0, "pv": 0, "ai": 0, "av": 0, "bms": 0, "bas": 0, "trend": 0, "his": 0, "level": 0,
	// set points and quantities without a role
	"sp": fSetpt, "stpt": fSetpt, "setpoint": fSetpt, "spt": fSetpt, "set": fSetpt, "target": fSetpt, "csp": fSetpt, "hsp": fSetpt, "setp": fSetpt, "limit": fSetpt, "lim": fSetpt,
	"status": fOther, "sts": fOther, "stat": fOther, "ss": fOther, "occupancy": fOther, "occ": fOther, "alarm": fOther, "alm": fOther, "enable": fOther, "ena": fOther, "mode": fOther,
	"speed": fOther, "vfd": fOther, "hz": fOther, "static": fOther, "pressure": fOther, "press": fOther, "prs": fOther, "sp.": fOther, "damper": fOther, "dmpr": fOther, "dpr": fOther,
	"filter": fOther, "co2": fOther, "energy": fOther, "kwh": fOther, "consumption": fOther, "fault": fOther, "stage": fOther, "stg": fOther, "run": fOther, "runtime": fOther,
	"current": fOther, "amps": fOther, "amp": fOther, "voltage": fOther, "volts": fOther, "enthalpy": fOther, "wetbulb": fOther, "wb": fOther, "grains": fOther, "ratio": fOther,
	"count": fOther, "light": fOther, "lights": fOther, "door": fOther, "schedule": fOther, "sched": fOther, "override": fOther, "ovrd": fOther, "min": fOther, "max": fOther, "avg": fOther,
}

// compounds are run-together abbreviations and what they stand for.
var compounds = map[string]feature{
	"mat": fMix | fTemp, "madp": fMix | fDew, "marh": fMix | fRH, "mah": fMix | fRH, "matemp": fMix | fTemp,
	"sat": fSupply | fTemp, "dat": fSupply | fTemp, "sarh": fSupply | fRH, "sadp": fSupply | fDew, "dadp": fSupply | fDew, "satemp": fSupply | fTemp, "datemp": fSupply | fTemp,
	"rat": fReturn | fTemp, "rarh": fReturn | fRH, "radp": fReturn | fDew, "rah": fReturn | fRH,
	"oat": fOutdoor | fTemp, "oarh": fOutdoor | fRH, "oadp": fOutdoor | fDew, "oah": fOutdoor | fRH, "osat": fOutdoor | fTemp, "oatemp": fOutdoor | fTemp,
	"cclt": fCoil | fCool | fLeaving | fTemp, "ccdt": fCoil | fCool | fLeaving | fTemp, "cclat": fCoil | fCool | fLeaving | fTemp, "lat": fLeaving | fTemp, "lvgt": fLeaving | fTemp,
	"ccdp": fCoil | fCool | fLeaving | fDew, "ccrh": fCoil | fCool | fLeaving | fRH, "ccet": fCoil | fCool | fEntering | fTemp,
	"eat": fEntering | fTemp | fDoubt, "zat": fSpace | fTemp, "znt": fSpace | fTemp, "rmt": fSpace | fTemp, "spt": fSetpt, "zntemp": fSpace | fTemp,
	"zarh": fSpace | fRH, "znrh": fSpace | fRH, "rmrh": fSpace | fRH, "sprh": fSpace | fRH,
	"sacfm": fSupply | fFlow, "saf": fSupply | fFlow, "safl": fSupply | fFlow, "daf": fSupply | fFlow, "oacfm": fOutdoor | fFlow, "oaf": fOutdoor | fFlow, "racfm": fReturn | fFlow,
	"chwv": fCool | fChw | fValve, "chwvlv": fCool | fChw | fValve, "clgv": fCool | fValve, "ccv": fCool | fValve, "hwv": fHeat | fHotWat | fValve, "hwvlv": fHeat | fHotWat | fValve,
	"htgv": fHeat | fValve, "rhv": fReheat | fValve, "rhtv": fReheat | fValve, "rhvlv": fReheat | fValve, "hgrv": fHotGas | fReheat | fValve,
	"sfkw": fFan | fPower, "compkw": fCool | fPower, "rhkw": fReheat | fPower, "rhtkw": fReheat | fPower, "eheat": fElec | fHeat,
}

// equipKinds are the unit types an equipment identifier starts with,
// longest first so that "ahu" wins over "ah".
var equipKinds = []string{"doas", "crah", "crac", "ahu", "rtu", "mau", "hru", "erv", "acu", "fcu", "pau", "ah", "ac", "hp"}

// equipID returns the equipment identifier in name ("AHU-2" for
// "ahu_02_sat", "Bldg1Rtu3Sat" gives "RTU-3") with the rest of the name, or
// "" when there is none. The type must start a word and be followed, after
// at most one separator, by its number.
func equipID(name string) (id, rest string) {
	lower := strings.ToLower(name)
	for i := 0; i < len(name); i++ {
		if i > 0 {
			p, c := rune(name[i-1]), rune(name[i])
			if unicode.IsLetter(p) && !(unicode.IsLower(p) && unicode.IsUpper(c)) {
				continue
			}
		}
		for _, k := range equipKinds {
			if !strings.HasPrefix(lower[i:], k) {
				continue
			}
			j := i + len(k)
			if j < len(name) && strings.ContainsRune(" _-.#:", rune(name[j])) {
				j++
			}
			d := j
			for d < len(name) && name[d] >= '0' && name[d] <= '9' {
				d++
			}
			if d == j || d-j > 4 {
				continue
			}
			num, _ := strconv.Atoi(name[j:d])
			return strings.ToUpper(k) + "-" + strconv.Itoa(num), name[:i] + " " + name[d:]
		}
	}
	return "", name
}

// splitWords cuts a name into lower-case words at separators, case changes
// (camelCase and "SATemp") and letter-digit boundaries.
func splitWords(name string) []string {
	var out []string
	rs := []rune(name)
	start := -1
	flush := func(end int) {
		if start >= 0 && end > start {
			out = append(out, strings.ToLower(string(rs[start:end])))
		}
		start = -1
	}
	for i, r := range rs {
		alnum := unicode.IsLetter(r) || unicode.IsDigit(r)
		if !alnum {
			// "%RH" and "°F" keep their meaning through the unit; the
			// sign alone is a separator.
			flush(i)
			continue
		}
		if start < 0 {
			start = i
			continue
		}
		p := rs[i-1]
		switch {
		case unicode.IsDigit(r) != unicode.IsDigit(p):
			flush(i)
			start = i
		case unicode.IsUpper(r) && unicode.IsLower(p) && (i-start >= 2 || unicode.IsUpper(rs[start])):
			// "ClgCoil" splits; "kW" stays one word.
			flush(i)
			start = i
		case unicode.IsUpper(r) && unicode.IsUpper(p) && i+1 < len(rs) && unicode.IsLower(rs[i+1]) && i-start >= 2:
			// "SATemp": the run of capitals ends one before a capitalised word.
			flush(i)
			start = i
		}
	}
	flush(len(rs))
	return out
}

// reading is what a name says, with the words that said it.
type reading struct {
	f       feature
	known   []string // words understood
	unknown []string // words not understood (numbers excluded)
}

// readName reads the features of a name (without its equipment identifier).
func readName(name string) reading {
	var r reading
	ws := splitWords(name)
	for i := 0; i < len(ws); i++ {
		w := ws[i]
		if _, err := strconv.Atoi(w); err == nil {
			continue
		}
		// Two-word phrases first.
		if i+1 < len(ws) {
			if f, ok := phrases[w+" "+ws[i+1]]; ok {
				r.f |= f
				r.known = append(r.known, w+" "+ws[i+1])
				i++
				continue
			}
		}
		if f, ok := words[w]; ok {
			r.f |= f
			r.known = append(r.known, w)
			continue
		}
		if f, ok := compounds[w]; ok {
			r.f |= f
			r.known = append(r.known, w)
			continue
		}
		if f, ok := segment(w); ok {
			r.f |= f | fGuess
			r.known = append(r.known, w)
			continue
		}
		r.unknown = append(r.unknown, w)
	}
	return r
}

// phrases are two-word terms read as one.
var phrases = map[string]feature{
	"dew point": fDew, "hot gas": fHotGas | fReheat, "chilled water": fCool | fChw, "hot water": fHeat | fHotWat,
	"set point": fSetpt, "heat pipe": fHotGas, "run around": fHotGas, "wet bulb": fOther, "differential pressure": fOther,
	"static pressure": fOther, "rel hum": fRH, "relative humidity": fRH, "dry bulb": fTemp,
}

// segment reads an unknown run of letters as known words and compounds
// glued together ("sacfm" = sa + cfm), when it splits into pieces of two
// letters or more in exactly one way.
func segment(w string) (feature, bool) {
	if len(w) < 4 || len(w) > 12 {
		return 0, false
	}
	var ways []feature
	var rec func(s string, acc feature, depth int)
	rec = func(s string, acc feature, depth int) {
		if len(ways) > 1 || depth > 3 {
			return
		}
		if s == "" {
			ways = append(ways, acc)
			return
		}
		for n := 2; n <= len(s); n++ {
			p := s[:n]
			f, ok := words[p]
			if !ok {
				f, ok = compounds[p]
			}
			if ok && f != 0 {
				rec(s[n:], acc|f, depth+1)
			}
		}
	}
	rec(w, 0, 0)
	if len(ways) != 1 {
		return 0, false
	}
	return ways[0], true
}
