package demo_test

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/demo"
)

// TestPhysics_Invariants checks the generated physics against facts that
// hold for any moist air and any coil, whatever formulas compute them:
// relative humidity never exceeds 100 %, a cooling coil never adds water,
// a reheat coil only warms the air, purchased energy is never negative,
// recovered heat costs nothing, and fuel for hot water exceeds the heat
// it gives (a boiler efficiency below 1).
func TestPhysics_Invariants(t *testing.T) {
	sc := scenario(t)
	for k, u := range sc.AirHandlers {
		t.Run(u.ID, func(t *testing.T) {
			tr := demo.Truth(sc, k)
			require.Len(t, tr, int(sc.To.Sub(sc.From).Hours()))
			reheatHours := 0
			for h, x := range tr {
				require.Equal(t, 60, x.Minutes, "hour %d", h)
				assert.LessOrEqual(t, x.MaxLeavingRH, 1.0, "hour %d: air leaving the coil above saturation", h)
				assert.GreaterOrEqual(t, x.WaterKg, 0.0, "hour %d: the coil added water", h)
				assert.GreaterOrEqual(t, x.ReheatKWh, 0.0, "hour %d", h)
				assert.GreaterOrEqual(t, x.CoolingInKWh, 0.0, "hour %d", h)
				if x.ReheatMinutes > 0 {
					reheatHours++
					assert.GreaterOrEqual(t, x.MinRiseReheat, 0.0, "hour %d: supply colder than the coil leaving air while reheating", h)
				}
				switch u.Reheat {
				case "recovered":
					assert.Zero(t, x.ReheatInputKWh, "hour %d", h)
				case "hot_water":
					assert.GreaterOrEqual(t, x.ReheatInputKWh, x.ReheatKWh, "hour %d: fuel below the heat", h)
				case "electric":
					assert.InDelta(t, x.ReheatKWh, x.ReheatInputKWh, 1e-9, "hour %d: resistance heat has COP 1", h)
				}
			}
			assert.Positive(t, reheatHours, "%s never reheated", u.ID)
		})
	}

	// The same facts in what the controllers logged.
	an := analyse(t)
	recs, _ := readAll(t, sc, an.cfg)
	leavingRH := map[string]bool{}
	for i := range an.cfg.AirHandlers {
		if p, ok := an.cfg.AirHandlers[i].Points["leaving_rh"]; ok {
			leavingRH[p.Name()] = true
		}
	}
	require.NotEmpty(t, leavingRH, "one air handler trends its coil leaving RH")
	n := 0
	for _, r := range recs {
		if leavingRH[r.Series] {
			n++
			assert.LessOrEqual(t, r.Value, 100.0, "%s at %s", r.Series, r.Time)
		}
	}
	assert.Positive(t, n)
	for _, u := range sc.AirHandlers {
		for _, r := range an.records[u.ID] {
			if r.ReheatKWh > 1 {
				assert.GreaterOrEqual(t, r.SupplyTempC, r.LeavingTempC, "%s %s: supply below coil leaving with reheat on", u.ID, r.HourStart)
			}
		}
	}
}

// TestPhysics_EnergyBalance compares two computations of the same coil
// work that share no path: the generator's, from its internal air states
// minute by minute, and the analysis', from what the controllers logged
// (change-of-value samples held between changes, rounding, sensor
// biases, and an assumed 95 % leaving RH where the invented coils run at
// 93-97 %). Compared over the hours both cover fully.
//
// Tolerances (reasoning, no source): the leaving-RH assumption moves the
// leaving humidity ratio by up to 0.02 x W_s, about 0.4 kJ/kg of the
// 10-25 kJ/kg these coils take out (2-4 %); deadbands of 0.3 °F and 1 %
// RH and biases of about 0.15 K and 1 % RH add 1-2 %: 6 % on coil energy.
// Water removed is a small difference of two humidity ratios that sensor
// biases can dominate (AHU-3 at night removes little more than what its
// dew-point transmitter's bias amounts to), so it is held to the
// analysis' own 95 % half-widths, added linearly over the hours because a
// calibration bias is the same in every hour. Reheat is a
// rise of a few kelvin measured between two sensors, less the configured
// fan heat, and steps with a rise under 0.5 K count as none: 10 %.
func TestPhysics_EnergyBalance(t *testing.T) {
	sc := scenario(t)
	an := analyse(t)
	for k, u := range sc.AirHandlers {
		t.Run(u.ID, func(t *testing.T) {
			tr := demo.Truth(sc, k)
			var coilT, coilA, waterT, waterA, waterU, reheatT, reheatA float64
			hours := 0
			for _, r := range an.records[u.ID] {
				h := int(r.HourStart.Sub(sc.From).Hours())
				require.True(t, h >= 0 && h < len(tr), "hour %s outside the period", r.HourStart)
				x := tr[h]
				if r.Coverage < 0.999 || x.Logged != x.Minutes {
					continue
				}
				hours++
				coilT += x.CoilTotalKWh
				coilA += r.CoilTotalKWh
				waterT += x.WaterKg
				waterA += r.WaterRemovedKg
				waterU += r.WaterRemovedKgU95
				reheatT += x.ReheatKWh
				reheatA += r.ReheatKWh
			}
			require.Greater(t, hours, 400)
			t.Logf("%s over %d hours: coil %.0f kWh generated, %.0f analysed (%+.1f %%); water %.0f / %.0f ± %.0f kg (%+.1f %%); reheat %.0f / %.0f kWh (%+.1f %%)",
				u.ID, hours, coilT, coilA, pct(coilA, coilT), waterT, waterA, waterU, pct(waterA, waterT), reheatT, reheatA, pct(reheatA, reheatT))
			assert.InEpsilon(t, coilT, coilA, 0.06, "coil energy")
			assert.LessOrEqual(t, math.Abs(waterA-waterT), waterU, "water removed: outside the analysis' own 95 %% uncertainty")
			assert.InEpsilon(t, reheatT, reheatA, 0.10, "reheat")
		})
	}
}

func pct(a, b float64) float64 {
	if b == 0 {
		return math.NaN()
	}
	return 100 * (a/b - 1)
}
