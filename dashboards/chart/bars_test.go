package chart

import (
	"io"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// valueScale reads the value axis from the rendered tick labels: the
// labels' text is the value, their y (baseline, 4 below the tick) its
// position. It returns value -> y, and checks the ticks are nice numbers.
func valueScale(t *testing.T, root *node) func(float64) float64 {
	t.Helper()
	labs := root.labels("dlc-yaxis")
	require.GreaterOrEqual(t, len(labs), 2)
	vals := make([]float64, len(labs))
	for i, l := range labs {
		vals[i] = num(l.text)
		require.False(t, math.IsNaN(vals[i]), "tick label %q is a plain number", l.text)
	}
	step := vals[1] - vals[0]
	assert.True(t, isNice(math.Abs(step)), "tick step %g is 1, 2 or 5 x 10^k", step)
	for i := 1; i < len(vals); i++ {
		assert.InDelta(t, step, vals[i]-vals[i-1], math.Abs(step)*1e-9, "equal steps")
		assert.InDelta(t, labs[1].y-labs[0].y, labs[i].y-labs[i-1].y, 0.11, "equally spaced")
	}
	a, b := labs[0], labs[len(labs)-1]
	va, vb := vals[0], vals[len(vals)-1]
	return func(v float64) float64 { return (a.y - 4) + (v-va)*((b.y-4)-(a.y-4))/(vb-va) }
}

// plotRect returns the data clip rectangle.
func plotRect(t *testing.T, root *node) (x0, y0, x1, y1 float64) {
	t.Helper()
	r := root.find(func(n *node) bool {
		return n.name == "rect" && len(n.kids) == 0 && n.attr["id"] == "" && hasParent(root, n, "clipPath")
	})
	require.Len(t, r, 1)
	x0, y0 = num(r[0].attr["x"]), num(r[0].attr["y"])
	return x0, y0, x0 + num(r[0].attr["width"]), y0 + num(r[0].attr["height"])
}

func hasParent(root, n *node, name string) bool {
	for _, p := range root.find(func(m *node) bool { return m.name == name }) {
		for _, k := range p.kids {
			if k == n {
				return true
			}
		}
	}
	return false
}

// TestStackedBars_Sums: at the middle of every hour, the top of the stack
// lies at the sum of the positive values on the chart's own value scale
// (read from its tick labels), the bottom at the sum of the negative ones,
// and each series' band is as tall as its value. The sums are computed
// here from the inputs.
func TestStackedBars_Sums(t *testing.T) {
	for _, n := range []int{24, 720} { // bars apart, bars touching
		t.Run(time.Duration(n*int(time.Hour)).String(), func(t *testing.T) {
			times, loc := demoHours(t, n)
			r := rand.New(rand.NewPCG(1, uint64(n)))
			series := make([]Series, 3)
			for k := range series {
				series[k] = Series{Name: string(rune('A' + k)), Values: make([]float64, n)}
				for i := range n {
					v := 40 * r.Float64()
					switch {
					case k == 2 && i%5 == 0:
						v = -15 * r.Float64() // some negative values
					case k == 1 && i%7 == 0:
						v = math.NaN() // and gaps
					case k == 0 && i%11 == 0:
						v = 0
					}
					series[k].Values[i] = v
				}
			}
			_, root := render(t, func(w io.Writer) error {
				return StackedBars(w, Frame{Title: "Energy", YLabel: "kWh", Zone: loc}, times, time.Hour, series)
			})
			y := valueScale(t, root)
			x0, _, x1, _ := plotRect(t, root)
			paths := root.find(byClass("dlc-bars"))
			require.Len(t, paths, 3)
			polys := make([][][]pt, 3)
			for k, p := range paths {
				polys[k] = parsePath(t, p.attr["d"])
			}
			// Tolerance: coordinates are rounded to 0.1 px, and the tick
			// labels that define the scale too.
			const tolPx = 0.16
			for i := range n {
				xc := x0 + (float64(i)+0.5)/float64(n)*(x1-x0)
				pos, neg := 0.0, 0.0
				top, bottom := math.Inf(1), math.Inf(-1)
				for k := range series {
					v := series[k].Values[i]
					sp := spans(polys[k], xc)
					height := 0.0
					for _, s := range sp {
						top, bottom = math.Min(top, s[0]), math.Max(bottom, s[1])
						height += s[1] - s[0]
					}
					if math.IsNaN(v) {
						v = 0
					}
					want := math.Abs(y(0) - y(v))
					assert.InDelta(t, want, height, 2*tolPx, "hour %d series %d band height", i, k)
					if v > 0 {
						pos += v
					} else {
						neg += v
					}
				}
				if pos > 0 {
					assert.InDelta(t, y(pos), top, tolPx, "hour %d: top of the stack = %g", i, pos)
				}
				if neg < 0 {
					assert.InDelta(t, y(neg), bottom, tolPx, "hour %d: bottom of the stack = %g", i, neg)
				}
			}
		})
	}
}

// TestLines_Gaps: each run of values between gaps is one subpath whose
// vertices sit at the values on the chart's own scale; a lone value is a dot.
func TestLines_Gaps(t *testing.T) {
	times, loc := demoHours(t, 12)
	nan := math.NaN()
	vals := []float64{1, 2, 3, nan, 5, nan, nan, 4, 3.5, 3, nan, -1}
	_, root := render(t, func(w io.Writer) error {
		return Lines(w, Frame{Title: "t", Zone: loc}, times, []Series{{Name: "a", Values: vals}}, nil)
	})
	y := valueScale(t, root)
	x0, _, x1, _ := plotRect(t, root)
	lines := root.find(byClass("dlc-line"))
	require.Len(t, lines, 1)
	subs := parsePath(t, lines[0].attr["d"])
	runs := [][]int{{0, 1, 2}, {4}, {7, 8, 9}, {11}}
	require.Len(t, subs, len(runs))
	for r, idx := range runs {
		if len(idx) == 1 {
			require.Len(t, subs[r], 2, "a lone value is a zero-length segment (a dot)")
		}
		for j, i := range idx {
			if len(idx) > 1 {
				require.Len(t, subs[r], len(idx))
			}
			p := subs[r][j]
			assert.InDelta(t, x0+float64(i)/11*(x1-x0), p.x, 0.06)
			assert.InDelta(t, y(vals[i]), p.y, 0.16)
		}
	}
}
