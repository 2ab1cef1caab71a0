package metrics_test

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// exactSensors makes the sensors' own bias negligible, so a band is what
// the engine assumes.
var exactSensors = metrics.Accuracy{TempK: 1e-6, RH: 1e-6, DewPointK: 1e-6, FlowFrac: 1e-6, PowerFrac: 1e-6}

// steadyHour is a wet coil cooling 26 °C / 55 % air to 12 °C and reheating
// it to 16 °C (the draw-through fan's 0.5 K included), 3 m³/s.
func steadyHour(extra map[metrics.Role]func(int) float64) *metrics.Hour {
	v := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(26), metrics.RoleEnteringRH: constant(0.55),
		metrics.RoleLeavingTemp: constant(12), metrics.RoleSupplyTemp: constant(16), metrics.RoleSupplyFlow: constant(3),
	}
	for r, f := range extra {
		v[r] = f
	}
	return newHour(day0, v)
}

// TestCompute_AssumptionsInTheBand: with exact sensors, each assumption's
// share of the 95 % band must match what moving the assumption across its
// own band does to the figure (a finite difference, first order within
// 25 %): the assumed coil leaving RH (95 % ± 5 %) on the water removed,
// the configured outdoor-air share (± ShareMinU) on the water removed of a
// mixed entering state, and the assumed space moisture gain (± half) on
// the avoidable reheat of a space target.
func TestCompute_AssumptionsInTheBand(t *testing.T) {
	t.Run("assumed leaving RH", func(t *testing.T) {
		u := testAirHandler()
		u.Accuracy, u.LeavingRHU = exactSensors, 0.05
		rec := metrics.Compute(u, steadyHour(nil))
		at := func(rh float64) float64 {
			v := *u
			v.LeavingRH, v.LeavingRHU = rh, 0
			return metrics.Compute(&v, steadyHour(nil)).WaterRemovedKg
		}
		spread := math.Abs(at(0.90)-at(1.0)) / 2
		require.Greater(t, spread, 0.01*rec.WaterRemovedKg, "the assumption moves the water")
		assert.InEpsilon(t, spread, rec.WaterRemovedKgU95, 0.25)
		u.LeavingRHU = 0
		assert.Less(t, metrics.Compute(u, steadyHour(nil)).WaterRemovedKgU95, 0.01*spread, "without the assumption's uncertainty the band is the sensors'")
	})
	t.Run("outdoor-air share at its configured minimum", func(t *testing.T) {
		// Return and outdoor air at the same temperature: the share cannot
		// come from the temperatures, so the configured minimum is used.
		mixed := map[metrics.Role]func(int) float64{
			metrics.RoleEnteringRH: func(int) float64 { return math.NaN() },
			metrics.RoleReturnTemp: constant(26), metrics.RoleReturnRH: constant(0.5),
			metrics.RoleOutdoorTemp: constant(27), metrics.RoleOutdoorRH: constant(0.8),
		}
		hour := func() *metrics.Hour {
			h := steadyHour(mixed)
			delete(h.Values, metrics.RoleEnteringRH)
			delete(h.Quality, metrics.RoleEnteringRH)
			return h
		}
		u := testAirHandler()
		u.Accuracy, u.MinOutdoor = exactSensors, 0.3
		rec := metrics.Compute(u, hour())
		require.Equal(t, 1.0, rec.Coverage)
		at := func(x float64) float64 {
			v := *u
			v.MinOutdoor = x
			return metrics.Compute(&v, hour()).WaterRemovedKg
		}
		spread := math.Abs(at(0.3+metrics.ShareMinU)-at(0.3-metrics.ShareMinU)) / 2
		require.Greater(t, spread, 0.02*rec.WaterRemovedKg)
		assert.InEpsilon(t, spread, rec.WaterRemovedKgU95, 0.25)
	})
	t.Run("space moisture gain", func(t *testing.T) {
		u := testAirHandler()
		u.Accuracy = exactSensors
		u.Target = metrics.Target{Kind: metrics.TargetSpaceRH, RH: 0.55, SpaceTempC: 23}
		u.SpaceGain = metrics.DefaultSpaceGain
		hot := func(v *metrics.AirHandler) metrics.Record {
			return metrics.Compute(v, steadyHour(map[metrics.Role]func(int) float64{metrics.RoleLeavingTemp: constant(9.5)}))
		}
		rec := hot(u)
		require.Greater(t, rec.ReheatAvoidKWh, 1.0, "a coil colder than the target needs")
		at := func(g float64) float64 {
			v := *u
			v.SpaceGain = g
			return hot(&v).ReheatAvoidKWh
		}
		g := u.SpaceGain
		spread := math.Abs(at(g*(1+metrics.SpaceGainRelU))-at(g*(1-metrics.SpaceGainRelU))) / 2
		require.Greater(t, spread, 0.02*rec.ReheatAvoidKWh)
		assert.InEpsilon(t, spread, rec.ReheatAvoidKWhU95, 0.25)
	})
}

// TestCompute_BlowThroughFan: a blow-through fan between the mixed-air
// sensor and the coil heats the air the coil then cools, so the coil load
// grows by the fan's heat (all of its power ends as heat in the air
// stream) and the supply-side reheat does not change. Checked against the
// sensible heat of the rise, m_da c_p ΔT (ASHRAE Fundamentals ch. 1, eq. 32
// differenced at constant W).
//
// The coil leaving humidity is measured here, so the leaving state is the
// same with and without the fan (the bypass-factor coil would condense a
// little more from the warmer air).
func TestCompute_BlowThroughFan(t *testing.T) {
	u := testAirHandler()
	u.Fan = metrics.FanNone
	lv := func(extra map[metrics.Role]func(int) float64) *metrics.Hour {
		if extra == nil {
			extra = map[metrics.Role]func(int) float64{}
		}
		extra[metrics.RoleLeavingRH] = constant(0.95)
		return steadyHour(extra)
	}
	base := metrics.Compute(u, lv(nil))
	const fanKW = 3.0
	u.Fan = metrics.FanBlowThrough
	rec := metrics.Compute(u, lv(map[metrics.Role]func(int) float64{metrics.RoleFanPower: constant(fanKW)}))
	assert.InDelta(t, base.CoilTotalKWh+fanKW, rec.CoilTotalKWh, 0.01*fanKW, "the fan's heat is coil load")
	assert.InDelta(t, base.CoilSensibleKWh+fanKW, rec.CoilSensibleKWh, 0.01*fanKW)
	assert.InDelta(t, fanKW, rec.FanHeatKWh, 1e-9)
	assert.InDelta(t, base.ReheatKWh, rec.ReheatKWh, 1e-9, "no fan between coil and supply")
	// Without the fan_kw point, the configured rise: m_da c_p ΔT.
	u.FanRiseK = 0.8
	rec = metrics.Compute(u, lv(nil))
	w, err := psychro.HumRatioFromRH(26, 0.55, u.PressurePa)
	require.NoError(t, err)
	rise := 3 * psychro.StandardAirDensity * (1.006 + 1.86*w) * 0.8
	assert.InDelta(t, base.CoilTotalKWh+rise, rec.CoilTotalKWh, 0.01*rise)
	// Or the fan's rated power, the same heat as a fan_kw point reading it.
	u.FanRiseK, u.FanRatedKW = 0, fanKW
	rec = metrics.Compute(u, lv(nil))
	assert.InDelta(t, base.CoilTotalKWh+fanKW, rec.CoilTotalKWh, 0.01*fanKW, "the rated power's heat is coil load")
	assert.InDelta(t, fanKW, rec.FanHeatKWh, 1e-9)
	// A blow-through fan ahead of the entering sensor is in its reading.
	u.Fan = metrics.FanBlowThroughMeasured
	rec = metrics.Compute(u, lv(map[metrics.Role]func(int) float64{metrics.RoleFanPower: constant(fanKW)}))
	assert.InDelta(t, base.CoilTotalKWh, rec.CoilTotalKWh, 1e-9)
}

// TestCompute_PartLoadCycling: a DX unit's modelled input carries the
// part-load factor of AHRI Standard 210/240, PLF = 1 - Cd (1 - PLR) with
// Cd = 0.25 (the standard's default, memory): at half load a unit draws
// load / (COP × 0.875).
func TestCompute_PartLoadCycling(t *testing.T) {
	u := testAirHandler()
	full := metrics.Compute(u, steadyHour(nil))
	cop := full.CoilTotalKWh / full.CoolingInputKWh
	u.RatedCapacityKW, u.DegradationCd = 2*full.CoilTotalKWh, metrics.DefaultDegradationCd
	rec := metrics.Compute(u, steadyHour(nil))
	assert.InEpsilon(t, full.CoilTotalKWh/(cop*(1-0.25*(1-0.5))), rec.CoolingInputKWh, 1e-9)
	// At or above the rated capacity a unit does not cycle.
	u.RatedCapacityKW = full.CoilTotalKWh / 1.2
	assert.InEpsilon(t, full.CoolingInputKWh, metrics.Compute(u, steadyHour(nil)).CoolingInputKWh, 1e-9)
	// A metered input is the input.
	rec = metrics.Compute(u, steadyHour(map[metrics.Role]func(int) float64{metrics.RoleCoolingPower: constant(9)}))
	assert.InDelta(t, 9, rec.CoolingInputKWh, 1e-9)
}

// TestCompute_ReheatMeterReconciled: a reheat meter and the air side that
// agree within their combined uncertainty give one figure, their
// inverse-variance weighted mean (R = (A/U_A² + M/U_M²) / (1/U_A² +
// 1/U_M²), U_R = (1/U_A² + 1/U_M²)^-1/2: the usual rule for combining
// independent measurements of one quantity); needed and avoidable reheat
// scale with it and still add up; a meter that disagrees beyond the
// combined uncertainty is flagged and not mixed in.
func TestCompute_ReheatMeterReconciled(t *testing.T) {
	u := testAirHandler()
	air := metrics.Compute(u, steadyHour(nil))
	a, ua := air.ReheatKWh, air.ReheatKWhU95
	require.Greater(t, a, 5.0)
	m := a * 0.95 // within the air side's ±10 % or so
	um := u.Accuracy.PowerFrac * m
	rec := metrics.Compute(u, steadyHour(map[metrics.Role]func(int) float64{metrics.RoleReheatPower: constant(m)}))
	want := (a/(ua*ua) + m/(um*um)) / (1/(ua*ua) + 1/(um*um))
	assert.InEpsilon(t, want, rec.ReheatKWh, 1e-6)
	assert.InEpsilon(t, 1/math.Sqrt(1/(ua*ua)+1/(um*um)), rec.ReheatKWhU95, 1e-6)
	assert.Less(t, math.Abs(rec.ReheatKWh-m), math.Abs(rec.ReheatKWh-a), "the better measurement counts for more")
	assert.InDelta(t, rec.ReheatKWh, rec.ReheatNeededKWh+rec.ReheatAvoidKWh, 1e-9)
	assert.InDelta(t, rec.ReheatKWh, rec.ReheatInputKWh, 1e-9, "electric reheat: heat = input")
	assert.NotContains(t, rec.Flags, metrics.FlagReheatMeter)
	// Beyond the combined uncertainty: flagged, both kept.
	m = a * 1.5
	rec = metrics.Compute(u, steadyHour(map[metrics.Role]func(int) float64{metrics.RoleReheatPower: constant(m)}))
	assert.Contains(t, rec.Flags, metrics.FlagReheatMeter)
	assert.InDelta(t, a, rec.ReheatKWh, 1e-9)
	assert.InDelta(t, m, rec.ReheatInputKWh, 1e-9)
}
