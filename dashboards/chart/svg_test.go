package chart

import (
	"io"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

const hostile = `<script>alert("x")</script> & 'quoted' "double"`

// TestEscaping: names, titles and labels from configuration come out as
// text (the XML decoder gives back exactly what went in), never as markup.
func TestEscaping(t *testing.T) {
	times, loc := demoHours(t, 24)
	vals := make([]float64, 24)
	for i := range vals {
		vals[i] = float64(i)
	}
	nan := math.NaN()
	charts := []struct {
		name string
		fn   func(io.Writer) error
	}{
		{"stacked", func(w io.Writer) error {
			return StackedBars(w, Frame{Title: hostile, YLabel: hostile, Zone: loc}, times, time.Hour,
				[]Series{{Name: hostile, Class: `x" onload="y`, Color: `red" onclick="z`, Values: vals}})
		}},
		{"lines", func(w io.Writer) error {
			return Lines(w, Frame{Title: hostile, YLabel: hostile}, times,
				[]Series{{Name: hostile, Values: vals}}, []Band{{Name: hostile, Lo: vals, Hi: vals}})
		}},
		{"hbars", func(w io.Writer) error {
			return HBars(w, Frame{Title: hostile, YLabel: hostile}, []string{hostile, "b"}, []float64{1, nan}, `url(javascript:x)`)
		}},
		{"psy", func(w io.Writer) error {
			return PsyChart{Title: hostile, Target: &PsyTarget{MaxDewPointC: 12, MaxRH: 0.6, SpaceTempC: 24, Label: hostile},
				Paths: []PsyPath{{Title: hostile, Class: hostile, Points: []PsyPoint{{TdbC: 25, W: 0.012, Label: hostile}}}}}.Render(w)
		}},
	}
	for _, c := range charts {
		t.Run(c.name, func(t *testing.T) {
			out, root := render(t, c.fn)
			s := string(out)
			assert.NotContains(t, s, "<script")
			assert.NotContains(t, s, "onload=")
			assert.NotContains(t, s, "onclick=")
			assert.NotContains(t, s, "javascript")
			// The decoded text holds the original string.
			found := root.find(func(n *node) bool { return strings.Contains(n.text, hostile) })
			assert.NotEmpty(t, found, "the title or a name must decode to the original text")
			for _, n := range root.find(func(*node) bool { return true }) {
				for k, v := range n.attr {
					if k == "aria-label" {
						continue
					}
					assert.NotContains(t, v, "<script", "attribute %s", k)
				}
			}
		})
	}
}

// TestEscaping_InvalidText: invalid UTF-8 and control characters cannot
// break the document.
func TestEscaping_InvalidText(t *testing.T) {
	bad := "a\x00b\x1bc\xff\xfe d\u0085e\uFFFF"
	render(t, func(w io.Writer) error {
		return HBars(w, Frame{Title: bad}, []string{bad}, []float64{3}, "")
	})
}

// TestDegenerateData: all missing, one value, constant, negative, empty:
// no error, no panic, and the invariants of render hold.
func TestDegenerateData(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	times, loc := demoHours(t, 48)
	fill := func(n int, f func(i int) float64) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = f(i)
		}
		return v
	}
	cases := []struct {
		name string
		vals []float64
	}{
		{"all missing", fill(48, func(int) float64 { return nan })},
		{"infinite", fill(48, func(i int) float64 { return []float64{inf, -inf, nan, 1}[i%4] })},
		{"one value", fill(48, func(i int) float64 {
			if i == 20 {
				return 7
			}
			return nan
		})},
		{"constant", fill(48, func(int) float64 { return 5 })},
		{"zeros", fill(48, func(int) float64 { return 0 })},
		{"negative", fill(48, func(i int) float64 { return -float64(i) - 0.5 })},
		{"mixed sign", fill(48, func(i int) float64 { return math.Sin(float64(i)) * 1e6 })},
		{"tiny", fill(48, func(i int) float64 { return 1e-300 * float64(i) })},
		{"huge", fill(48, func(i int) float64 { return 1e300 * float64(i%3-1) })},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			render(t, func(w io.Writer) error {
				return StackedBars(w, Frame{Title: c.name, Zone: loc}, times, time.Hour, []Series{{Name: "a", Values: c.vals}, {Name: "b", Values: c.vals}})
			})
			render(t, func(w io.Writer) error {
				return Lines(w, Frame{Title: c.name, Zone: loc}, times, []Series{{Name: "a", Values: c.vals}}, []Band{{Name: "b", Lo: c.vals, Hi: c.vals}})
			})
			render(t, func(w io.Writer) error {
				return HBars(w, Frame{Title: c.name}, make([]string, 48), c.vals, "")
			})
			render(t, func(w io.Writer) error { return Spark(w, c.vals, 100, 20, "") })
		})
	}
	t.Run("no times", func(t *testing.T) {
		render(t, func(w io.Writer) error { return StackedBars(w, Frame{Title: "empty"}, nil, time.Hour, nil) })
		render(t, func(w io.Writer) error { return Lines(w, Frame{Title: "empty"}, nil, nil, nil) })
		render(t, func(w io.Writer) error { return HBars(w, Frame{Title: "empty"}, nil, nil, "") })
		render(t, func(w io.Writer) error { return Spark(w, nil, 100, 20, "") })
		render(t, func(w io.Writer) error { return PsyChart{Title: "empty"}.Render(w) })
	})
	t.Run("single time", func(t *testing.T) {
		render(t, func(w io.Writer) error {
			return Lines(w, Frame{Title: "one"}, times[:1], []Series{{Name: "a", Values: []float64{3}}}, nil)
		})
		render(t, func(w io.Writer) error {
			return StackedBars(w, Frame{Title: "one"}, times[:1], time.Hour, []Series{{Name: "a", Values: []float64{3}}})
		})
	})
	t.Run("psy points", func(t *testing.T) {
		render(t, func(w io.Writer) error {
			return PsyChart{Title: "odd", Target: &PsyTarget{MaxDewPointC: nan, MaxRH: nan, SpaceTempC: nan},
				Paths: []PsyPath{
					{Points: []PsyPoint{{TdbC: nan, W: 0.01}, {TdbC: 20, W: inf}}},
					{Points: []PsyPoint{{TdbC: -40, W: 0.5}, {TdbC: 90, W: -1}, {TdbC: 25, W: 0.01}}},
					{Points: nil},
				}}.Render(w)
		})
	})
}

// TestErrors: bad input is refused with a message naming the fix, and
// nothing is written.
func TestErrors(t *testing.T) {
	times, _ := demoHours(t, 3)
	back := []time.Time{times[1], times[0]}
	cases := []struct {
		name string
		fn   func(io.Writer) error
		want string
	}{
		{"length", func(w io.Writer) error {
			return StackedBars(w, Frame{Title: "x"}, times, time.Hour, []Series{{Name: "a", Values: []float64{1}}})
		}, "one value per time"},
		{"step", func(w io.Writer) error { return StackedBars(w, Frame{}, times, 0, nil) }, "must be positive"},
		{"order", func(w io.Writer) error { return Lines(w, Frame{}, back, nil, nil) }, "sort the hours"},
		{"band", func(w io.Writer) error {
			return Lines(w, Frame{}, times, nil, []Band{{Lo: []float64{1}, Hi: []float64{1, 2, 3}}})
		}, "one of each per time"},
		{"size", func(w io.Writer) error { return Lines(w, Frame{Width: 5}, times, nil, nil) }, "Frame.Width"},
		{"labels", func(w io.Writer) error { return HBars(w, Frame{}, []string{"a"}, nil, "") }, "one label per value"},
		{"spark", func(w io.Writer) error { return Spark(w, nil, 0, 0, "") }, "size"},
		{"psy range", func(w io.Writer) error { return PsyChart{TMinC: 30, TMaxC: 10}.Render(w) }, "TMinC below TMaxC"},
		{"psy pressure", func(w io.Writer) error { return PsyChart{PressurePa: 14.7}.Render(w) }, "in Pa"},
		{"psy wmax", func(w io.Writer) error { return PsyChart{WMax: 30}.Render(w) }, "humidity ratio"},
		{"psy below", func(w io.Writer) error { return PsyChart{TMinC: 30, TMaxC: 40, WMax: 0.01}.Render(w) }, "raise WMax"},
		{"psy lines", func(w io.Writer) error { return PsyChart{Lines: "volume"}.Render(w) }, "unknown"},
		{"psy rh", func(w io.Writer) error { return PsyChart{Target: &PsyTarget{MaxRH: 60}}.Render(w) }, "fraction"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b strings.Builder
			err := c.fn(&b)
			require.Error(t, err)
			assert.Contains(t, err.Error(), c.want)
			assert.Zero(t, b.Len(), "nothing is written on error")
		})
	}
	x, y := PsyChart{TMinC: 30, TMaxC: 10}.Pos(20, 0.01)
	assert.True(t, math.IsNaN(x) && math.IsNaN(y), "Pos of an invalid chart is NaN")
}

// TestPathData: the compact writer's output parses (with the independent
// parser in helpers_test.go) back to the rounded absolute points.
func TestPathData(t *testing.T) {
	pts := [][]pt{
		{{10, 10}, {20, 10}, {30, 10}, {30, 5}, {30, 0}, {25.04, -3.06}, {0.06, 0.04}},
		{{100.25, 7}, {100.25, 7}, {99.95, 6.95}, {-5, -5}},
		{{0.5, 0.5}},
	}
	var s svgBuf
	p := newPath(&s)
	for _, sub := range pts {
		p.moveTo(sub[0].x, sub[0].y)
		for _, q := range sub[1:] {
			p.lineTo(q.x, q.y)
		}
		if len(sub) == 1 {
			p.dot()
		}
	}
	p.close()
	p.end()
	got := parsePath(t, string(s.b))
	require.Len(t, got, len(pts))
	round := func(v float64) float64 { return math.Round(v*10) / 10 }
	for i, sub := range pts {
		// Expected: rounded points without repeats and without interior
		// points of straight horizontal or vertical runs.
		var want []pt
		for _, q := range sub {
			r := pt{round(q.x), round(q.y)}
			if len(want) > 0 && want[len(want)-1] == r {
				continue
			}
			if n := len(want); n >= 2 {
				a, b := want[n-2], want[n-1]
				if (a.x == b.x && b.x == r.x && (b.y-a.y)*(r.y-b.y) > 0) || (a.y == b.y && b.y == r.y && (b.x-a.x)*(r.x-b.x) > 0) {
					want[n-1] = r
					continue
				}
			}
			want = append(want, r)
		}
		if i == len(pts)-1 {
			want = append(want, want[0]) // the dot, then the close
			want = append(want, want[0])
		}
		require.Len(t, got[i], len(want), "subpath %d: %q", i, s.b)
		for j := range want {
			assert.InDelta(t, want[j].x, got[i][j].x, 1e-9, "subpath %d point %d", i, j)
			assert.InDelta(t, want[j].y, got[i][j].y, 1e-9, "subpath %d point %d", i, j)
		}
	}
	assert.NoError(t, s.err)
	// A non-finite coordinate is an internal error, never written.
	var bad svgBuf
	newPath(&bad).moveTo(math.NaN(), 1)
	assert.Error(t, bad.flush(io.Discard))
	assert.NotContains(t, string(bad.b), "NaN")
}
