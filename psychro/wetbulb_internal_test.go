package psychro

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestDewPointBelow: the wet bulb's bracket starts at or below the dew
// point, and close to it, over the whole valid range.
func TestDewPointBelow(t *testing.T) {
	worst := 0.0
	for tC := MinTempC; tC <= MaxTempC; tC += 0.37 {
		pw := satVapPressure(tC)
		td, err := dewPoint(pw)
		require.NoError(t, err)
		lb := dewPointBelow(pw)
		assert.LessOrEqual(t, lb, td+1e-12, "t=%.2f", tC)
		assert.Less(t, td-lb, nearSaturationK/2, "t=%.2f", tC)
		worst = math.Max(worst, td-lb)
	}
	t.Logf("largest gap %.2g K", worst)
}

// TestWetBulb_Converged: the iteration's answer agrees with a bisection of
// eq. 33/35 run to the last bit, within 1e-9 K, on a grid of -40..60 °C,
// 1..100 % RH and 60..110 kPa (the plateau states at 0 °C excepted).
func TestWetBulb_Converged(t *testing.T) {
	worst := 0.0
	for tC := -40.0; tC <= 60; tC += 2.3 {
		for rh := 0.01; rh <= 1; rh += 0.033 {
			for pPa := 60000.0; pPa <= 110000; pPa += 12500 {
				w, err := HumRatioFromRH(tC, rh, pPa)
				require.NoError(t, err)
				got, err := WetBulbFromHumRatio(tC, w, pPa)
				require.NoError(t, err)
				if got == 0 {
					continue
				}
				lo, hi := MinTempC, tC
				for hi-lo > 1e-13 && (lo+hi)/2 != lo && (lo+hi)/2 != hi {
					m := (lo + hi) / 2
					p := satVapPressure(m)
					if wbSI.w(tC, m, MolarMassRatio*p/(pPa-p)) > w {
						hi = m
					} else {
						lo = m
					}
				}
				worst = math.Max(worst, math.Abs(got-(lo+hi)/2))
				require.InDelta(t, (lo+hi)/2, got, 1e-9, "t=%.2f rh=%.3f p=%.0f", tC, rh, pPa)
			}
		}
	}
	t.Logf("largest difference %.2g K", worst)
}
