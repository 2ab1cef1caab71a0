package psychro_test

import (
	"math"
	"testing"

	"github.com/dewline/dewline/psychro"
)

// FuzzState: any input either gives an error or a complete, finite,
// physically ordered state (dew point <= wet bulb <= dry bulb, RH in 0..1).
func FuzzState(f *testing.F) {
	f.Add(24.0, 0.5, 101325.0, 13.0)
	f.Add(-40.0, 0.01, 60000.0, -60.0)
	f.Add(60.0, 1.0, 110000.0, 59.9)
	f.Add(0.005, 0.3, 95000.0, -10.0)
	f.Add(math.NaN(), 2.0, -1.0, math.Inf(1))
	f.Fuzz(func(t *testing.T, tC, rh, pPa, second float64) {
		check := func(kind string, s psychro.State, err error) {
			if err != nil {
				return
			}
			vals := []float64{s.DryBulbC, s.HumRatio, s.RH, s.DewPointC, s.WetBulbC, s.EnthalpyKJPerKg, s.VolumeM3PerKg, s.DensityKgPerM3}
			for _, v := range vals {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("%s: non-finite value in %+v", kind, s)
				}
			}
			if s.RH < 0 || s.RH > 1 {
				t.Fatalf("%s: RH %g out of 0..1", kind, s.RH)
			}
			if s.DewPointC > s.WetBulbC+1e-6 || s.WetBulbC > s.DryBulbC+1e-6 {
				t.Fatalf("%s: order broken: td %g twb %g tdb %g", kind, s.DewPointC, s.WetBulbC, s.DryBulbC)
			}
		}
		s, err := psychro.NewStateRH(tC, rh, pPa)
		check("rh", s, err)
		s, err = psychro.NewStateDewPoint(tC, second, pPa)
		check("dew point", s, err)
		s, err = psychro.NewStateWetBulb(tC, second, pPa)
		check("wet bulb", s, err)
	})
}
