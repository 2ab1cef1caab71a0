package psychro_test

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"

	"github.com/dewline/dewline/deploy/testkit"
)

// gridState is one input of the dense grid: dry bulb °C, RH fraction, pressure Pa.
type gridState struct{ tC, rh, pPa float64 }

// denseGrid spans -40..60 °C, 1..100 % RH and 60..110 kPa with 50 x 50 x 41
// = 102,500 states. The steps are not round numbers, so the grid does not
// sit only on the branch points of the formulas, but it includes both ends
// of every range and 0.01 °C neighbours of the triple point.
func denseGrid() []gridState {
	const nt, nrh, np = 50, 50, 41
	g := make([]gridState, 0, nt*nrh*np)
	for i := 0; i < nt; i++ {
		t := -40 + 100*float64(i)/float64(nt-1)
		if i == 20 {
			t = 0.005 // between 0 °C and the triple point, where eqs. 5 and 6 switch
		}
		for j := 0; j < nrh; j++ {
			rh := 0.01 + 0.99*float64(j)/float64(nrh-1)
			for k := 0; k < np; k++ {
				p := 60000 + 50000*float64(k)/float64(np-1)
				g = append(g, gridState{t, rh, p})
			}
		}
	}
	return g
}

func writeGrid(t testing.TB, g []gridState, ip bool) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "grid.csv")
	f, err := os.Create(path)
	require.NoError(t, err)
	w := bufio.NewWriter(f)
	for _, s := range g {
		if ip {
			fmt.Fprintf(w, "%.17g,%.17g,%.17g\n", psychro.CToF(s.tC), s.rh, psychro.PaToPsi(s.pPa))
		} else {
			fmt.Fprintf(w, "%.17g,%.17g,%.17g\n", s.tC, s.rh, s.pPa)
		}
	}
	require.NoError(t, w.Flush())
	require.NoError(t, f.Close())
	return path
}

// worst tracks the largest error of one quantity and where it happened.
type worst struct {
	name  string
	rel   bool
	limit float64
	err   float64
	at    string
}

func (w *worst) add(got, want float64, at string) {
	e := math.Abs(got - want)
	if w.rel {
		e /= math.Max(math.Abs(want), 1e-12)
	}
	if e > w.err || math.IsNaN(e) {
		w.err, w.at = e, at
	}
}

// TestPsychrolibCrossCheck compares dewline with npm psychrolib 1.1.1 (MIT
// licence; an independent implementation of ASHRAE Handbook - Fundamentals
// 2017 ch. 1) on 102,500 states in SI and again in IP. Targets from the
// project's accuracy goal: relative error < 1e-4 on W, h, v and density;
// < 0.01 K (0.018 °F) on dew point and wet bulb. psychrolib stops its
// iterations at 0.001 K, which bounds the agreement on t_d and t_wb.
func TestPsychrolibCrossCheck(t *testing.T) {
	grid := denseGrid()
	for _, system := range []string{"SI", "IP"} {
		t.Run(system, func(t *testing.T) {
			ip := system == "IP"
			states := make([][3]float64, len(grid))
			for i, g := range grid {
				states[i] = [3]float64{g.tC, g.rh, g.pPa}
				if ip {
					states[i] = [3]float64{psychro.CToF(g.tC), g.rh, psychro.PaToPsi(g.pPa)}
				}
			}
			rows := testkit.PsychrolibStates(t, system, states)

			tTol := 0.01 // K
			if ip {
				tTol = 0.018 // °F, 0.01 K
			}
			checks := []*worst{
				{name: "W", rel: true, limit: 1e-4},
				{name: "dew point", limit: tTol},
				{name: "wet bulb", limit: tTol},
				{name: "enthalpy", rel: true, limit: 1e-4},
				{name: "volume", rel: true, limit: 1e-4},
				{name: "density", rel: true, limit: 1e-4},
				{name: "W from dew point", rel: true, limit: 1e-4},
				{name: "W from wet bulb", rel: true, limit: 1e-4},
			}
			enth := checks[3]
			plateau := 0
			for i, g := range grid {
				ref := rows[i]
				require.Len(t, ref, 8, "psychrolib's row for %+v", g)
				at := fmt.Sprintf("t=%.3f°C rh=%.3f p=%.0fPa", g.tC, g.rh, g.pPa)
				s, err := psychro.NewStateRH(g.tC, g.rh, g.pPa)
				require.NoError(t, err, at)
				got := []float64{s.HumRatio, s.DewPointC, s.WetBulbC, s.EnthalpyKJPerKg * 1000, s.VolumeM3PerKg, s.DensityKgPerM3}
				wTd, err := psychro.HumRatioFromDewPoint(ref[1], g.pPa)
				var wTwb float64
				if ip {
					p := s.IP()
					got = []float64{p.HumRatio, p.DewPointF, p.WetBulbF, p.EnthalpyBtuPerLb, p.VolumeFt3PerLb, p.DensityLbPerFt3}
					wTd, err = psychro.HumRatioFromDewPoint(psychro.FToC(ref[1]), g.pPa)
					require.NoError(t, err, at)
					wTwb, err = psychro.HumRatioFromWetBulbIP(psychro.CToF(g.tC), ref[2], psychro.PaToPsi(g.pPa))
				} else {
					require.NoError(t, err, at)
					wTwb, err = psychro.HumRatioFromWetBulb(g.tC, ref[2], g.pPa)
				}
				require.NoError(t, err, at)
				got = append(got, wTd, wTwb)
				freezing := 0.0
				if ip {
					freezing = 32
				}
				if got[2] == freezing && math.Abs(ref[2]-freezing) > tTol {
					// Very dry air near 0 °C: eqs. 33 and 35 both have a root;
					// dewline returns the ice-water plateau, psychrolib the
					// root its bisection meets. "W from wet bulb" below still
					// checks that psychrolib's answer is a true root.
					plateau++
					got[2] = ref[2]
				}
				for j, c := range checks {
					if c == enth {
						// Enthalpy crosses zero near -2 °C (SI) and 0 °F (IP):
						// relative error there is against a floor of
						// 1 kJ/kg (SI) or 0.43 Btu/lb (IP).
						floor := 1000.0
						if ip {
							floor = 0.43
						}
						e := math.Abs(got[j]-ref[j]) / math.Max(math.Abs(ref[j]), floor)
						if e > c.err {
							c.err, c.at = e, at
						}
						continue
					}
					c.add(got[j], ref[j], at)
				}
			}
			t.Logf("%d of %d states on the wet-bulb freezing plateau (compared through W only)", plateau, len(grid))
			require.Less(t, plateau, len(grid)/100, "the plateau band is narrow")
			for _, c := range checks {
				kind := "abs"
				if c.rel {
					kind = "rel"
				}
				t.Logf("%s worst %s error vs psychrolib: %.3g at %s", c.name, kind, c.err, c.at)
				require.LessOrEqualf(t, c.err, c.limit, "%s: worst error %.3g at %s", c.name, c.err, c.at)
			}
		})
	}
}
