package dashboards

import (
	"encoding/json"
	"math"
	"strconv"

	"github.com/dewline/dewline/psychro"
)

// Display is a choice of units for what people read: SI (°C, kg) or IP
// (°F, lb). Energy stays in kWh in both, as meters and bills give it.
type Display struct{ IP bool }

// DisplayFor parses "si" or "ip"; anything else gives def.
func DisplayFor(name string, def bool) Display {
	switch name {
	case "si":
		return Display{IP: false}
	case "ip":
		return Display{IP: true}
	}
	return Display{IP: def}
}

// Name is "ip" or "si".
func (d Display) Name() string {
	if d.IP {
		return "ip"
	}
	return "si"
}

// Temp converts a temperature from °C.
func (d Display) Temp(c float64) float64 {
	if d.IP {
		return psychro.CToF(c)
	}
	return c
}

// TempUnit is "°F" or "°C".
func (d Display) TempUnit() string {
	if d.IP {
		return "°F"
	}
	return "°C"
}

// Delta converts a temperature difference from K.
func (d Display) Delta(k float64) float64 {
	if d.IP {
		return k * 1.8
	}
	return k
}

// DeltaUnit is "°F" or "K".
func (d Display) DeltaUnit() string {
	if d.IP {
		return "°F"
	}
	return "K"
}

// Water converts a mass of water from kg.
func (d Display) Water(kg float64) float64 {
	if d.IP {
		return psychro.KgToLb(kg)
	}
	return kg
}

// WaterUnit is "lb" or "kg".
func (d Display) WaterUnit() string {
	if d.IP {
		return "lb"
	}
	return "kg"
}

// Num is a number that encodes NaN and ±Inf as JSON null (encoding/json
// refuses them), rounded to a sensible number of significant digits.
type Num float64

// MarshalJSON writes null for a missing value.
func (n Num) MarshalJSON() ([]byte, error) {
	v := float64(n)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, round(v, 6), 'g', -1, 64), nil
}

// UnmarshalJSON reads null as NaN.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.NaN())
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*n = Num(v)
	return nil
}

// round keeps sig significant digits.
func round(v float64, sig int) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	p := math.Pow(10, float64(sig)-math.Ceil(math.Log10(math.Abs(v))))
	return math.Round(v*p) / p
}
