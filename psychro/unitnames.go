package psychro

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Kind is the physical quantity a value measures.
type Kind int

// Kinds of quantity, each with the SI unit dewline works in.
const (
	KindTemperature Kind = iota + 1 // °C
	KindPressure                    // Pa
	KindLength                      // m (altitude)
	KindRH                          // fraction 0..1
	KindFlow                        // m³/s
	KindPower                       // kW
	KindEnergy                      // kWh
	KindMass                        // kg
	KindHumRatio                    // kg/kg
	KindFraction                    // 0..1 (valve positions, ratios)
)

var kindNames = map[Kind]string{
	KindTemperature: "temperature", KindPressure: "pressure", KindLength: "length",
	KindRH: "relative humidity", KindFlow: "airflow", KindPower: "power",
	KindEnergy: "energy", KindMass: "mass", KindHumRatio: "humidity ratio",
	KindFraction: "fraction",
}

func (k Kind) String() string {
	if n, ok := kindNames[k]; ok {
		return n
	}
	return fmt.Sprintf("Kind(%d)", int(k))
}

// Unit converts values of one unit to dewline's SI unit for its kind.
type Unit struct {
	Name  string // canonical spelling, e.g. "°F", "kPa", "CFM"
	Kind  Kind
	scale float64 // SI = value*scale + offset
	off   float64
}

// ToSI converts v from this unit to the SI unit of its kind.
func (u Unit) ToSI(v float64) float64 { return v*u.scale + u.off }

// FromSI converts v from the SI unit of the kind to this unit.
func (u Unit) FromSI(v float64) float64 { return (v - u.off) / u.scale }

// DeltaToSI converts a difference in this unit to the SI unit: offsets
// cancel, so 1 °F of difference is 1/1.8 K.
func (u Unit) DeltaToSI(d float64) float64 { return d * u.scale }

var unitTable = []struct {
	u       Unit
	aliases []string
}{
	{Unit{"°C", KindTemperature, 1, 0}, []string{"c", "°c", "degc", "deg c", "celsius", "degrees c", "℃"}},
	{Unit{"°F", KindTemperature, 1 / 1.8, -32 / 1.8}, []string{"f", "°f", "degf", "deg f", "fahrenheit", "degrees f", "℉"}},
	{Unit{"K", KindTemperature, 1, -ZeroCelsiusK}, []string{"k", "kelvin"}},

	{Unit{"Pa", KindPressure, 1, 0}, []string{"pa"}},
	{Unit{"hPa", KindPressure, 100, 0}, []string{"hpa", "mbar"}},
	{Unit{"kPa", KindPressure, 1000, 0}, []string{"kpa"}},
	{Unit{"bar", KindPressure, 1e5, 0}, []string{"bar"}},
	{Unit{"psi", KindPressure, PaPerPsi, 0}, []string{"psi", "psia"}},
	{Unit{"inHg", KindPressure, PaPerInHg, 0}, []string{"inhg", "in hg", "\"hg"}},

	{Unit{"m", KindLength, 1, 0}, []string{"m", "metre", "meter", "metres", "meters"}},
	{Unit{"ft", KindLength, MetrePerFoot, 0}, []string{"ft", "feet", "foot", "'"}},

	{Unit{"%", KindRH, 0.01, 0}, []string{"%", "%rh", "% rh", "pct", "percent"}},
	{Unit{"fraction", KindRH, 1, 0}, []string{"fraction", "frac", "0-1"}},

	{Unit{"m³/s", KindFlow, 1, 0}, []string{"m3/s", "m³/s", "cms"}},
	{Unit{"m³/h", KindFlow, 1.0 / 3600, 0}, []string{"m3/h", "m³/h", "m3/hr", "cmh"}},
	{Unit{"L/s", KindFlow, 0.001, 0}, []string{"l/s", "lps"}},
	{Unit{"CFM", KindFlow, M3sPerCFM, 0}, []string{"cfm", "ft3/min", "ft³/min"}},

	{Unit{"kW", KindPower, 1, 0}, []string{"kw"}},
	{Unit{"W", KindPower, 0.001, 0}, []string{"w"}},
	{Unit{"MW", KindPower, 1000, 0}, []string{"mw"}},
	{Unit{"Btu/h", KindPower, 1 / BtuPerHourPerKW, 0}, []string{"btu/h", "btuh", "btu/hr"}},
	{Unit{"MBH", KindPower, 1000 / BtuPerHourPerKW, 0}, []string{"mbh", "kbtu/h", "kbtuh"}},
	{Unit{"ton", KindPower, BtuPerHourPerTon / BtuPerHourPerKW, 0}, []string{"ton", "tons", "tr"}},

	{Unit{"kWh", KindEnergy, 1, 0}, []string{"kwh"}},
	{Unit{"Wh", KindEnergy, 0.001, 0}, []string{"wh"}},
	{Unit{"MWh", KindEnergy, 1000, 0}, []string{"mwh"}},
	{Unit{"kJ", KindEnergy, 1 / KJPerKWh, 0}, []string{"kj"}},
	{Unit{"MJ", KindEnergy, 1000 / KJPerKWh, 0}, []string{"mj"}},
	{Unit{"Btu", KindEnergy, JoulePerBtu / 1000 / KJPerKWh, 0}, []string{"btu"}},
	{Unit{"kBtu", KindEnergy, JoulePerBtu / KJPerKWh, 0}, []string{"kbtu"}},
	{Unit{"therm", KindEnergy, 1e5 * JoulePerBtu / 1000 / KJPerKWh, 0}, []string{"therm", "therms", "thm"}},

	{Unit{"kg", KindMass, 1, 0}, []string{"kg"}},
	{Unit{"g", KindMass, 0.001, 0}, []string{"g"}},
	{Unit{"lb", KindMass, KgPerLb, 0}, []string{"lb", "lbs", "lbm"}},

	{Unit{"kg/kg", KindHumRatio, 1, 0}, []string{"kg/kg", "lb/lb"}},
	{Unit{"g/kg", KindHumRatio, 0.001, 0}, []string{"g/kg"}},
	{Unit{"gr/lb", KindHumRatio, 1 / GrainsPerLb, 0}, []string{"gr/lb", "grains/lb", "grains"}},

	{Unit{"%", KindFraction, 0.01, 0}, []string{"%", "pct", "percent"}},
	{Unit{"fraction", KindFraction, 1, 0}, []string{"fraction", "frac", "0-1"}},
}

// unitsByKind maps kind -> normalised alias -> unit.
var unitsByKind = func() map[Kind]map[string]Unit {
	m := map[Kind]map[string]Unit{}
	for _, e := range unitTable {
		if m[e.u.Kind] == nil {
			m[e.u.Kind] = map[string]Unit{}
		}
		for _, a := range e.aliases {
			m[e.u.Kind][normUnit(a)] = e.u
		}
	}
	return m
}()

func normUnit(s string) string {
	s = strings.ToLower(strings.TrimSpace(s))
	s = strings.TrimPrefix(s, "[")
	s = strings.TrimSuffix(s, "]")
	return strings.Join(strings.Fields(s), " ")
}

// LookupUnit returns the unit called name for a quantity of kind k.
// Names are case-insensitive and accept common spellings ("degF", "°F", "F").
func LookupUnit(k Kind, name string) (Unit, error) {
	if u, ok := unitsByKind[k][normUnit(name)]; ok {
		return u, nil
	}
	return Unit{}, fmt.Errorf("unknown %s unit %q; use one of %s", k, name, strings.Join(UnitNames(k), ", "))
}

// UnitNames lists the canonical unit names for kind k.
func UnitNames(k Kind) []string {
	seen := map[string]bool{}
	var out []string
	for _, e := range unitTable {
		if e.u.Kind == k && !seen[e.u.Name] {
			seen[e.u.Name] = true
			out = append(out, e.u.Name)
		}
	}
	sort.Strings(out)
	return out
}

// ParseQuantity parses a number with an optional unit suffix, such as "75F",
// "24 °C", "98.2kPa", "300m" or "50%", as a quantity of kind k, and returns
// it in the kind's SI unit. A bare number takes the unit named by def; when
// def is empty a bare number is an error that asks for a unit.
func ParseQuantity(s string, k Kind, def string) (float64, Unit, error) {
	str := strings.TrimSpace(s)
	i := numberPrefix(str)
	if i == 0 {
		return 0, Unit{}, fmt.Errorf("%q is not a number with a unit (e.g. %s)", s, example(k))
	}
	v, err := strconv.ParseFloat(str[:i], 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, Unit{}, fmt.Errorf("%q is not a finite number", s)
	}
	name := strings.TrimSpace(str[i:])
	if name == "" {
		if def == "" {
			return 0, Unit{}, fmt.Errorf("%q has no unit; write it with one, e.g. %s", s, example(k))
		}
		name = def
	}
	u, err := LookupUnit(k, name)
	if err != nil {
		return 0, Unit{}, fmt.Errorf("%q: %w", s, err)
	}
	return u.ToSI(v), u, nil
}

// numberPrefix returns the length of the leading decimal number in s.
func numberPrefix(s string) int {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for i < len(s) && (s[i] >= '0' && s[i] <= '9' || s[i] == '.') {
		if s[i] != '.' {
			digits++
		}
		i++
	}
	if digits == 0 {
		return 0
	}
	// Exponent, only when digits follow (so "5e" is not eaten from "5eh").
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		if j < len(s) && s[j] >= '0' && s[j] <= '9' {
			for j < len(s) && s[j] >= '0' && s[j] <= '9' {
				j++
			}
			i = j
		}
	}
	return i
}

func example(k Kind) string {
	switch k {
	case KindTemperature:
		return "75F or 24C"
	case KindPressure:
		return "98.2kPa, 14.7psi or 29.92inHg"
	case KindLength:
		return "300m or 1000ft"
	case KindRH:
		return "50%"
	case KindFlow:
		return "12000CFM or 5.6m3/s"
	case KindPower:
		return "35kW or 10ton"
	}
	return "a number and a unit"
}

// SIUnitName returns the name of the SI unit dewline uses for kind k.
func SIUnitName(k Kind) string {
	switch k {
	case KindTemperature:
		return "°C"
	case KindPressure:
		return "Pa"
	case KindLength:
		return "m"
	case KindRH, KindFraction:
		return "fraction"
	case KindFlow:
		return "m³/s"
	case KindPower:
		return "kW"
	case KindEnergy:
		return "kWh"
	case KindMass:
		return "kg"
	case KindHumRatio:
		return "kg/kg"
	}
	return ""
}

// DecimalMultipleOf reports whether u is o times a power of ten, neither
// with an offset: a prefix or a scaling apart (W and kW, a fraction and %,
// L/s and m³/s), not a unit of another system (Btu/h and kW) or a
// temperature scale.
func (u Unit) DecimalMultipleOf(o Unit) bool {
	if u.Kind != o.Kind || u.off != 0 || o.off != 0 || u.scale <= 0 || o.scale <= 0 {
		return false
	}
	e := math.Log10(u.scale / o.scale)
	return math.Abs(e-math.Round(e)) < 1e-9
}
