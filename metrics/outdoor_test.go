package metrics_test

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// TestCompute_OutdoorMeans: the hourly record carries the outdoor dry bulb
// (mean over the steps that read it) and the outdoor dew point (of the
// mean humidity ratio over the steps that read both), checked against npm
// psychrolib's humidity ratios and dew points; NaN without outdoor roles.
func TestCompute_OutdoorMeans(t *testing.T) {
	p := psychro.StandardPressurePa
	// First half hour 30 °C / 50 %, second 24 °C / 80 %; the RH sensor
	// misses the last ten steps.
	states := [][3]float64{{30, 0.5, p}, {24, 0.8, p}}
	ref := testkit.PsychrolibStates(t, "SI", states) // W, dew point, ...
	tOut := func(i int) float64 {
		if i < 30 {
			return 30
		}
		return 24
	}
	rhOut := func(i int) float64 {
		switch {
		case i >= 50:
			return math.NaN()
		case i < 30:
			return 0.5
		}
		return 0.8
	}
	base := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(26), metrics.RoleEnteringRH: constant(0.6),
		metrics.RoleLeavingTemp: constant(12), metrics.RoleLeavingRH: constant(0.95),
		metrics.RoleSupplyTemp: constant(17), metrics.RoleSupplyFlow: constant(4),
	}
	tests := []struct {
		name        string
		roles       map[metrics.Role]func(int) float64
		wantT       float64
		wantW, want float64 // mean humidity ratio, or a dew point straight from psychrolib
	}{
		{"none mapped", nil, math.NaN(), math.NaN(), math.NaN()},
		{"temperature only", map[metrics.Role]func(int) float64{metrics.RoleOutdoorTemp: constant(30)}, 30, math.NaN(), math.NaN()},
		{"steady state", map[metrics.Role]func(int) float64{metrics.RoleOutdoorTemp: constant(30), metrics.RoleOutdoorRH: constant(0.5)},
			30, math.NaN(), ref[0][1]},
		{"two states, RH missing at the end", map[metrics.Role]func(int) float64{metrics.RoleOutdoorTemp: tOut, metrics.RoleOutdoorRH: rhOut},
			(30*30 + 24*30) / 60.0, (30*ref[0][0] + 20*ref[1][0]) / 50, math.NaN()},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			roles := map[metrics.Role]func(int) float64{}
			for r, f := range base {
				roles[r] = f
			}
			for r, f := range tc.roles {
				roles[r] = f
			}
			rec := metrics.Compute(testAirHandler(), newHour(day0, roles))
			if math.IsNaN(tc.wantT) {
				assert.True(t, math.IsNaN(rec.OutdoorTempC), "outdoor temperature %v", rec.OutdoorTempC)
			} else {
				assert.InDelta(t, tc.wantT, rec.OutdoorTempC, 1e-9, "mean of the steps")
			}
			switch {
			case !math.IsNaN(tc.want):
				// psychrolib's dew point; both solve the saturation curve to
				// better than 0.01 K.
				assert.InDelta(t, tc.want, rec.OutdoorDewPointC, 0.01)
			case !math.IsNaN(tc.wantW):
				w, err := psychro.HumRatioFromDewPoint(rec.OutdoorDewPointC, p)
				require.NoError(t, err)
				assert.InEpsilon(t, tc.wantW, w, 1e-4, "dew point of the mean humidity ratio over the steps with RH")
			default:
				assert.True(t, math.IsNaN(rec.OutdoorDewPointC), "outdoor dew point %v", rec.OutdoorDewPointC)
			}
			// The engine's figures do not depend on the outdoor roles here.
			assert.Greater(t, rec.WaterRemovedKg, 0.0)
		})
	}
}
