package psychro_test

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"
)

// TestRulesOfThumb compares the trade's standard-air factors (common
// practice, no source; reference rows CP-131..CP-134) with the exact result
// for a typical cooling-coil process near 24 °C: 24 °C / 50 % entering,
// 12 °C / 95 % leaving, 10,000 CFM of standard air at the rules' own density
// of 0.075 lb/ft³ (CP-139), so that only the physics differs. The exact side
// uses psychro's coil split; the factors must agree within 2 %. (The
// sensible rule sits about 1.8 % low here: its 0.24 Btu/lb·°F leaves out the
// vapour's heat capacity, 0.444 W.)
func TestRulesOfThumb(t *testing.T) {
	const cfm = 10000.0
	in, err := psychro.NewStateRH(24, 0.50, psychro.StandardPressurePa)
	require.NoError(t, err)
	out, err := psychro.CoilLeaving(in, 12, 0.95)
	require.NoError(t, err)
	require.Less(t, out.HumRatio, in.HumRatio, "the coil is wet")
	mDa := psychro.LbToKg(0.075) / psychro.M3PerFt3 * psychro.CFMToM3s(cfm) // kg/s
	c, err := psychro.Coil(mDa, in, out)
	require.NoError(t, err)

	dTF := psychro.CToF(in.DryBulbC) - psychro.CToF(out.DryBulbC)
	dW := in.HumRatio - out.HumRatio
	dhBtu := in.IP().EnthalpyBtuPerLb - out.IP().EnthalpyBtuPerLb

	cases := []struct {
		name        string
		rule, exact float64 // Btu/h
	}{
		{"sensible 1.08 x CFM x dT (CP-131)", 1.08 * cfm * dTF, psychro.KWToBtuh(c.Sensible)},
		{"latent 4840 x CFM x dW (CP-132)", 4840 * cfm * dW, psychro.KWToBtuh(c.Latent)},
		{"latent 0.68 x CFM x dgr (CP-133)", 0.68 * cfm * psychro.HumRatioToGrainsPerLb(dW), psychro.KWToBtuh(c.Latent)},
		{"total 4.5 x CFM x dh (CP-134)", 4.5 * cfm * dhBtu, psychro.KWToBtuh(c.TotalGross)},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			rel := math.Abs(tc.rule-tc.exact) / tc.exact
			t.Logf("rule %.0f Btu/h, exact %.0f Btu/h, %.2f %%", tc.rule, tc.exact, rel*100)
			assert.Less(t, rel, 0.02)
		})
	}
}

// TestConversionFactors checks the trade's conversion factors (common
// practice, no source; rows CP-135..CP-141) against psychro's constants,
// which come from the definitions of the units.
func TestConversionFactors(t *testing.T) {
	assert.InDelta(t, 3.412, psychro.KWToBtuh(1)/1000, 0.0005, "CP-135: 1 W = 3.412 Btu/h")
	assert.InDelta(t, 12000, psychro.KWToBtuh(psychro.TonsToKW(1)), 1e-9, "CP-136: 1 ton = 12,000 Btu/h")
	assert.InDelta(t, 3.412, psychro.COPToEER(1), 0.0005, "CP-137: EER = 3.412 COP")
	assert.InDelta(t, 0.075, psychro.StandardAirDensity*psychro.M3PerFt3/psychro.KgPerLb, 0.0005, "CP-139: 0.075 lb/ft³")
	assert.InDelta(t, 1.2, psychro.StandardAirDensity, 0.005, "CP-140: 1.2 kg/m³")
	assert.InDelta(t, 7000, psychro.GrainsPerLb, 0, "CP-141: 7000 grains/lb")
	// CP-138, resistance heat has COP 1: 1 kW of electric reheat is 3,412 Btu/h of heat.
	assert.InDelta(t, 3412, psychro.KWToBtuh(1), 0.5)
	// Chart reading, common practice: 75 °F / 50 % at sea level is about 0.0093 lb/lb.
	s, err := psychro.NewStateIPRH(75, 0.5, 14.696)
	require.NoError(t, err)
	assert.InDelta(t, 0.0093, s.HumRatio, 0.0001)
}
