package dashboards

import (
	"github.com/dewline/dewline/metrics"
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
func (d Display) Name() string { return either(d.IP, "ip", "si") }

// Temp converts a temperature from °C.
func (d Display) Temp(c float64) float64 { return either(d.IP, psychro.CToF(c), c) }

// TempUnit is "°F" or "°C".
func (d Display) TempUnit() string { return either(d.IP, "°F", "°C") }

// Delta converts a temperature difference from K.
func (d Display) Delta(k float64) float64 { return either(d.IP, k*1.8, k) }

// DeltaUnit is "°F" or "K".
func (d Display) DeltaUnit() string { return either(d.IP, "°F", "K") }

// Water converts a mass of water from kg.
func (d Display) Water(kg float64) float64 { return either(d.IP, psychro.KgToLb(kg), kg) }

// WaterUnit is "lb" or "kg".
func (d Display) WaterUnit() string { return either(d.IP, "lb", "kg") }

// either is ip's value in IP units and si's in SI.
func either[T any](ip bool, ipValue, siValue T) T {
	if ip {
		return ipValue
	}
	return siValue
}

// Num is a number that encodes NaN and ±Inf as JSON null (metrics.Num).
type Num = metrics.Num
