package metrics_test

import (
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// TestCompute_SupplyBelowCoil: a supply temperature logged in °C but read
// as °F (15 °C becomes 15 °F, -9.4 °C) reads far below the 11 °C coil
// leaving air, which nothing after a cooling coil can do: the hour is
// flagged, and two such hours open sensor_implausible with a reason naming
// both temperatures. A supply a little below the coil (sensor tolerance,
// within SupplyBelowCoilK) is not flagged. 15 °F = (15 - 32) / 1.8 °C by
// the definition of the Fahrenheit scale.
func TestCompute_SupplyBelowCoil(t *testing.T) {
	u := testAirHandler()
	hour := func(start time.Time, supplyC float64) *metrics.Hour {
		return newHour(start, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: func(i int) float64 { return 24 + float64(i%7)/10 },
			metrics.RoleEnteringRH:   func(i int) float64 { return 0.55 + float64(i%5)/100 },
			metrics.RoleLeavingTemp:  func(i int) float64 { return 11 + float64(i%3)/10 },
			metrics.RoleSupplyTemp:   func(i int) float64 { return supplyC + float64(i%4)/10 },
			metrics.RoleSupplyFlow:   constant(3),
		})
	}
	wrongUnitC := (15.0 - 32) / 1.8
	tests := []struct {
		name    string
		supplyC float64
		flagged bool
	}{
		{"°C logged as °F", wrongUnitC, true},
		{"far below", 6, true},
		{"within sensor tolerance", 9.5, false},
		{"warmer, as usual", 17, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := metrics.Compute(u, hour(day0, tt.supplyC))
			assert.Equal(t, tt.flagged, r.HasFlag(metrics.FlagSupplyBelowCoil), "%v", r.Flags)
		})
	}

	rules := metrics.Rules()
	states := map[string]metrics.Alert{}
	var opened []metrics.Transition
	for h := 0; h < 3; h++ {
		r := metrics.Compute(u, hour(day0.Add(time.Duration(h)*time.Hour), wrongUnitC))
		var tr []metrics.Transition
		states, tr = metrics.Evaluate(rules, metrics.RuleParams{}, states, &r)
		opened = append(opened, tr...)
	}
	var found *metrics.Transition
	for i := range opened {
		if opened[i].Alert.Kind == metrics.AlertSensorImplausible && opened[i].To == metrics.StatusOpen {
			found = &opened[i]
		}
	}
	require.NotNil(t, found, "sensor_implausible opens")
	assert.True(t, strings.Contains(found.Alert.Reason, "colder than the coil leaving air"), found.Alert.Reason)
}
