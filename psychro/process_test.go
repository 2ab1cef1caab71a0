package psychro_test

import (
	"errors"
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"
)

// TestCoil_HandbookExample follows the cooling-and-dehumidifying worked
// example of ASHRAE Handbook - Fundamentals ch. 1 (from memory, to be checked
// against the printed page): 5 m³/s of air at 30 °C / 50 % cooled to
// saturation at 10 °C needs about 197 kW of refrigeration, with the
// condensate term. The handbook reads Table 2 values (enhancement factor
// included), the code uses ideal-gas relations, hence the 1.5 % tolerance.
func TestCoil_HandbookExample(t *testing.T) {
	in, err := psychro.NewStateRH(30, 0.50, psychro.StandardPressurePa)
	require.NoError(t, err)
	out, err := psychro.NewStateRH(10, 1.0, psychro.StandardPressurePa)
	require.NoError(t, err)
	mDa := 5 / in.VolumeM3PerKg
	c, err := psychro.Coil(mDa, in, out)
	require.NoError(t, err)
	assert.InEpsilon(t, 5.70, mDa, 0.01, "dry-air mass flow, kg/s (memory)")
	assert.InEpsilon(t, 197, c.Total, 0.015, "refrigeration load, kW (memory)")
	// Relations that hold by definition of the split.
	assert.InDelta(t, c.TotalGross-c.CondensateOut, c.Total, 1e-9)
	assert.InDelta(t, c.Total-c.Sensible, c.Latent, 1e-9)
	assert.Greater(t, c.TotalGross, c.Total, "the condensate carries enthalpy out")
}

// TestMix checks adiabatic mixing against conservation of dry air, water and
// energy, with enthalpy written out from ASHRAE ch. 1 eq. 32.
func TestMix(t *testing.T) {
	outdoor, err := psychro.NewStateRH(32, 0.60, 100000)
	require.NoError(t, err)
	ret, err := psychro.NewStateRH(24, 0.50, 100000)
	require.NoError(t, err)
	m, err := psychro.Mix(outdoor, 1.5, ret, 4.5)
	require.NoError(t, err)
	h := func(tc, w float64) float64 { return 1.006*tc + w*(2501+1.86*tc) }
	assert.InDelta(t, (1.5*outdoor.HumRatio+4.5*ret.HumRatio)/6, m.HumRatio, 1e-12, "water")
	assert.InDelta(t, (1.5*h(32, outdoor.HumRatio)+4.5*h(24, ret.HumRatio))/6, h(m.DryBulbC, m.HumRatio), 1e-9, "energy")
	assert.Greater(t, m.DryBulbC, 24.0)
	assert.Less(t, m.DryBulbC, 32.0)

	_, err = psychro.Mix(outdoor, 0, ret, 0)
	assert.ErrorIs(t, err, psychro.ErrOutOfRange)
	far, err := psychro.NewStateRH(24, 0.5, 80000)
	require.NoError(t, err)
	_, err = psychro.Mix(outdoor, 1, far, 1)
	assert.ErrorIs(t, err, psychro.ErrOutOfRange, "streams at different pressures")
}

func TestCoilLeaving(t *testing.T) {
	in, err := psychro.NewStateRH(26, 0.60, psychro.StandardPressurePa) // dew point about 17.6 °C
	require.NoError(t, err)
	t.Run("dry coil", func(t *testing.T) {
		out, err := psychro.CoilLeaving(in, 20, psychro.DefaultLeavingRH)
		require.NoError(t, err)
		assert.Equal(t, in.HumRatio, out.HumRatio)
	})
	t.Run("wet coil", func(t *testing.T) {
		out, err := psychro.CoilLeaving(in, 12, psychro.DefaultLeavingRH)
		require.NoError(t, err)
		assert.InDelta(t, 0.95, out.RH, 1e-9)
		assert.Less(t, out.HumRatio, in.HumRatio)
	})
	t.Run("never adds moisture", func(t *testing.T) {
		for tl := 5.0; tl <= 30; tl += 0.25 {
			out, err := psychro.CoilLeaving(in, tl, 1.0)
			require.NoError(t, err)
			assert.LessOrEqual(t, out.HumRatio, in.HumRatio)
		}
	})
	t.Run("bad leaving RH", func(t *testing.T) {
		_, err := psychro.CoilLeaving(in, 12, 1.2)
		assert.ErrorIs(t, err, psychro.ErrOutOfRange)
	})
}

// TestReheatSensible: 1 kg/s of air at W = 0.008 warmed 10 K takes
// (1.006 + 1.86 x 0.008) x 10 = 10.2088 kW (eq. 32 differentiated in t).
func TestReheatSensible(t *testing.T) {
	q, err := psychro.ReheatSensible(1, 12, 22, 0.008)
	require.NoError(t, err)
	assert.InDelta(t, 10.2088, q, 1e-9)
	_, err = psychro.ReheatSensible(-1, 12, 22, 0.008)
	assert.ErrorIs(t, err, psychro.ErrOutOfRange)
}

// TestInputErrors: impossible input is an error that names the input, never NaN.
func TestInputErrors(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name    string
		call    func() error
		want    error
		mention string
	}{
		{"nan dry bulb", func() error { _, err := psychro.NewStateRH(nan, 0.5, 101325); return err }, psychro.ErrNotFinite, "dry bulb"},
		{"inf pressure", func() error { _, err := psychro.NewStateRH(20, 0.5, math.Inf(1)); return err }, psychro.ErrNotFinite, "pressure"},
		{"rh over 100", func() error { _, err := psychro.NewStateRH(20, 1.01, 101325); return err }, psychro.ErrOutOfRange, "relative humidity"},
		{"rh negative", func() error { _, err := psychro.HumRatioFromRH(20, -0.1, 101325); return err }, psychro.ErrOutOfRange, "relative humidity"},
		{"too hot", func() error { _, err := psychro.SatVapPressure(250); return err }, psychro.ErrOutOfRange, "200 °C"},
		{"too cold", func() error { _, err := psychro.SatVapPressure(-120); return err }, psychro.ErrOutOfRange, "-100 °C"},
		{"pressure below vapour pressure", func() error { _, err := psychro.NewStateRH(90, 1, 50000); return err }, psychro.ErrOutOfRange, "pressure"},
		{"pressure in kPa by mistake", func() error { _, err := psychro.NewStateRH(24, 0.5, 101.325); return err }, psychro.ErrOutOfRange, "pressure unit"},
		{"wet bulb above dry bulb", func() error { _, err := psychro.NewStateWetBulb(20, 22, 101325); return err }, psychro.ErrOutOfRange, "wet bulb"},
		{"dew point above dry bulb", func() error { _, err := psychro.NewStateDewPoint(20, 22, 101325); return err }, psychro.ErrOutOfRange, "dew point"},
		{"wet bulb too low", func() error { _, err := psychro.HumRatioFromWetBulb(40, 5, 101325); return err }, psychro.ErrOutOfRange, "wet bulb"},
		{"supersaturated", func() error { _, err := psychro.NewStateHumRatio(20, 0.05, 101325); return err }, psychro.ErrOutOfRange, "saturation"},
		{"negative W", func() error { _, err := psychro.Enthalpy(20, -0.001); return err }, psychro.ErrOutOfRange, "humidity ratio"},
		{"altitude", func() error { _, err := psychro.PressureFromAltitude(20000); return err }, psychro.ErrOutOfRange, "altitude"},
		{"dew point of dry air", func() error { _, err := psychro.DewPointFromHumRatio(0, 101325); return err }, psychro.ErrOutOfRange, "too dry"},
		{"enthalpy of a dry bulb out of range", func() error { _, err := psychro.DryBulbFromEnthalpy(1e6, 0.01); return err }, psychro.ErrOutOfRange, "enthalpy"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.call()
			require.Error(t, err)
			assert.True(t, errors.Is(err, tt.want), "%v is not %v", err, tt.want)
			assert.Contains(t, err.Error(), tt.mention)
			var ie *psychro.InputError
			assert.True(t, errors.As(err, &ie))
		})
	}
}

// TestWetBulb_Continuity: the wet bulb never moves more than the dew point
// does between neighbouring states, and the plateau at the freezing point
// is reached from both sides (ASHRAE eqs. 33 and 35 meet there).
func TestWetBulb_Continuity(t *testing.T) {
	prev := math.NaN()
	for rh := 0.01; rh <= 1.0; rh += 0.001 {
		s, err := psychro.NewStateRH(15, rh, psychro.StandardPressurePa)
		require.NoError(t, err)
		assert.GreaterOrEqual(t, s.WetBulbC, s.DewPointC-1e-9)
		assert.LessOrEqual(t, s.WetBulbC, s.DryBulbC+1e-9)
		if !math.IsNaN(prev) {
			assert.Less(t, math.Abs(s.WetBulbC-prev), 0.1, "rh %.3f", rh)
		}
		prev = s.WetBulbC
	}
}

// TestWetBulb_RoundTrip: the wet bulb returned satisfies eq. 33/35, i.e.
// feeding it back gives the humidity ratio it came from (the plateau states
// of very dry air near 0 °C excepted, where no single root exists).
func TestWetBulb_RoundTrip(t *testing.T) {
	for tc := -30.0; tc <= 55; tc += 1.7 {
		for rh := 0.02; rh <= 1.0; rh += 0.049 {
			s, err := psychro.NewStateRH(tc, rh, 95000)
			require.NoError(t, err)
			if s.WetBulbC == 0 {
				continue
			}
			w, err := psychro.HumRatioFromWetBulb(tc, s.WetBulbC, 95000)
			require.NoError(t, err)
			assert.InDelta(t, s.HumRatio, w, 1e-9*math.Max(s.HumRatio, 1e-3), "t=%.1f rh=%.3f", tc, rh)
		}
	}
}

// TestSatVapPressureSlope: the analytic slope matches a central difference
// of eqs. 5 and 6 (away from the triple point, where the two meet).
func TestSatVapPressureSlope(t *testing.T) {
	for _, tc := range []float64{-40, -10, -0.5, 0.5, 12, 25, 45, 90} {
		p, d, err := psychro.SatVapPressureSlope(tc)
		require.NoError(t, err)
		lo, _ := psychro.SatVapPressure(tc - 1e-4)
		hi, _ := psychro.SatVapPressure(tc + 1e-4)
		pp, _ := psychro.SatVapPressure(tc)
		assert.Equal(t, pp, p)
		assert.InEpsilon(t, (hi-lo)/2e-4, d, 1e-6, "t=%g", tc)
	}
	_, _, err := psychro.SatVapPressureSlope(math.NaN())
	assert.ErrorIs(t, err, psychro.ErrNotFinite)
}
