package chart

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// Page-weight budgets for a month of hours (720), in bytes. The dashboard
// shows several charts per air handler; these keep a page of them small.
const (
	budgetStacked720 = 40 << 10 // 3 stacked series
	budgetLines720   = 48 << 10 // 3 lines and an uncertainty band
	budgetPsy720     = 60 << 10 // 720 processes of 3 states
)

// monthCharts renders the three 720-hour charts of the budgets.
func monthCharts(t testing.TB) map[string]func(io.Writer) error {
	times, loc := demoHours(t, 720)
	energy := demoEnergy(720)
	lo, hi := make([]float64, 720), make([]float64, 720)
	for i, v := range energy[0].Values {
		lo[i], hi[i] = v*0.9, v*1.1
	}
	paths := demoPaths(t, 720)
	return map[string]func(io.Writer) error{
		"stacked": func(w io.Writer) error {
			return StackedBars(w, Frame{Title: "Hourly energy", YLabel: "kWh", Zone: loc}, times, time.Hour, energy)
		},
		"lines": func(w io.Writer) error {
			return Lines(w, Frame{Title: "Hourly energy", YLabel: "kWh", Zone: loc}, times, energy, []Band{{Name: "band", Lo: lo, Hi: hi}})
		},
		"psy": func(w io.Writer) error {
			return PsyChart{Title: "June", Paths: paths, Target: &PsyTarget{MaxDewPointC: 13, MaxRH: 0.6, SpaceTempC: 24}}.Render(w)
		},
	}
}

// TestSize: the month charts stay within their budgets (sizes are logged;
// run with -v to see them).
func TestSize(t *testing.T) {
	budgets := map[string]int{"stacked": budgetStacked720, "lines": budgetLines720, "psy": budgetPsy720}
	for name, fn := range monthCharts(t) {
		out, _ := render(t, fn)
		t.Logf("%s, 720 hours: %d bytes (budget %d)", name, len(out), budgets[name])
		assert.LessOrEqual(t, len(out), budgets[name], name)
	}
}

// Benchmarks render the month charts and, in the same run, a reference: a
// loop that formats as many coordinates as the chart's path data holds
// (counted in the rendered output) with fmt.Fprintf("%.1f") and with
// strconv.AppendFloat. The ratio x_fprintf says how the whole chart compares
// with merely printing its numbers.
//
//	go test -run '^$' -bench . -benchmem ./dashboards/chart

var (
	benchOnce   sync.Once
	benchCharts map[string]func(io.Writer) error
	benchCoords map[string][]float64
	refNs       sync.Map // chart name -> reference ns/op (fmt.Fprintf)
)

var pathNumber = regexp.MustCompile(`-?\d*\.?\d+`)

func benchSetup(b *testing.B) {
	benchOnce.Do(func() {
		benchCharts = monthCharts(b)
		benchCoords = map[string][]float64{}
		for name, fn := range benchCharts {
			var buf bytes.Buffer
			require.NoError(b, fn(&buf))
			root := parseSVG(b, buf.Bytes())
			var coords []float64
			for _, p := range root.find(func(n *node) bool { return n.attr["d"] != "" }) {
				for _, m := range pathNumber.FindAllString(p.attr["d"], -1) {
					v, _ := strconv.ParseFloat(m, 64)
					coords = append(coords, v+0.04) // not already rounded
				}
			}
			benchCoords[name] = coords
		}
	})
}

func benchChart(b *testing.B, name string) {
	benchSetup(b)
	fn := benchCharts[name]
	ref, ok := refNs.Load(name)
	if !ok {
		ref = timeFprintf(benchCoords[name])
		refNs.Store(name, ref)
	}
	var buf bytes.Buffer
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		if err := fn(&buf); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(buf.Len()), "bytes")
	b.ReportMetric(float64(len(benchCoords[name])), "coords")
	ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	b.ReportMetric(ns/ref.(float64), "x_fprintf")
}

// timeFprintf times the fmt.Fprintf reference for about 200 ms (testing's
// own benchmark runner cannot be nested inside a benchmark) and returns
// nanoseconds per pass.
func timeFprintf(coords []float64) float64 {
	var buf bytes.Buffer
	n := 0
	start := time.Now()
	for time.Since(start) < 200*time.Millisecond {
		buf.Reset()
		for _, v := range coords {
			fmt.Fprintf(&buf, "%.1f ", v)
		}
		n++
	}
	return float64(time.Since(start).Nanoseconds()) / float64(n)
}

func refFprintf(b *testing.B, coords []float64) {
	var buf bytes.Buffer
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		for _, v := range coords {
			fmt.Fprintf(&buf, "%.1f ", v)
		}
	}
}

func refAppendFloat(b *testing.B, coords []float64) {
	buf := make([]byte, 0, 1<<16)
	b.ReportAllocs()
	for b.Loop() {
		buf = buf[:0]
		for _, v := range coords {
			buf = strconv.AppendFloat(buf, math.Round(v*10)/10, 'f', -1, 64)
			buf = append(buf, ' ')
		}
	}
}

func BenchmarkStackedBars720(b *testing.B) { benchChart(b, "stacked") }
func BenchmarkLines720(b *testing.B)       { benchChart(b, "lines") }
func BenchmarkPsyChart720(b *testing.B)    { benchChart(b, "psy") }

// The references on their own, for the record: ref over the coordinates
// of chart.
func benchRef(b *testing.B, ref func(*testing.B, []float64), chart string) {
	benchSetup(b)
	ref(b, benchCoords[chart])
}

func BenchmarkRefFprintfStacked720(b *testing.B)     { benchRef(b, refFprintf, "stacked") }
func BenchmarkRefAppendFloatStacked720(b *testing.B) { benchRef(b, refAppendFloat, "stacked") }
func BenchmarkRefFprintfPsy720(b *testing.B)         { benchRef(b, refFprintf, "psy") }
func BenchmarkRefAppendFloatPsy720(b *testing.B)     { benchRef(b, refAppendFloat, "psy") }
