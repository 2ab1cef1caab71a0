package psychro_test

import (
	"encoding/json"
	"os"
	"os/exec"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/psychro"

	"github.com/dewline/dewline/deploy/testkit"
)

// Benchmarks run the dense grid of the cross-check, state after state. The
// ...VsPsychrolib benchmarks also time npm psychrolib on the same grid in the
// same run (node, JIT warmed up) and report the ratio of states per second
// of wall time and of processor time: the goal is at least 7.9x for the
// bundle and 10x for the wet bulb.
//
//	deploy/dev/bench.sh           # or: go test -run '^$' -bench . ./psychro

var (
	benchGrid = denseGrid()
	benchW    = func() []float64 {
		w := make([]float64, len(benchGrid))
		for i, g := range benchGrid {
			w[i], _ = psychro.HumRatioFromRH(g.tC, g.rh, g.pPa)
		}
		return w
	}()
	benchTwb = func() []float64 {
		t := make([]float64, len(benchGrid))
		for i, g := range benchGrid {
			t[i], _ = psychro.WetBulbFromHumRatio(g.tC, benchW[i], g.pPa)
		}
		return t
	}()
	sink float64
)

type jsRates struct {
	Bundle     float64 `json:"bundle_per_s"`
	WetBulb    float64 `json:"wetbulb_per_s"`
	BundleCPU  float64 `json:"bundle_per_cpu_s"`
	WetBulbCPU float64 `json:"wetbulb_per_cpu_s"`
}

var (
	jsOnce sync.Once
	jsRate jsRates
	jsErr  error
)

func psychrolibRates(b *testing.B) jsRates {
	dir := testkit.Psychrolib(b)
	jsOnce.Do(func() {
		in := writeGrid(b, benchGrid, false)
		cmd := exec.Command("node", "testdata/psychrolib.js", "bench", in, "3")
		cmd.Env = append(os.Environ(), "DEWLINE_PSYCHROLIB="+dir)
		var out []byte
		if out, jsErr = cmd.Output(); jsErr == nil {
			jsErr = json.Unmarshal(out, &jsRate)
		}
	})
	if jsErr != nil {
		b.Fatalf("timing psychrolib: %v", jsErr)
	}
	return jsRate
}

func benchBundle(b *testing.B) time.Duration {
	b.ReportAllocs()
	cpu0 := testkit.CPUTime()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		g := benchGrid[i%n]
		s, err := psychro.NewStateRH(g.tC, g.rh, g.pPa)
		if err != nil {
			b.Fatal(err)
		}
		sink += s.WetBulbC
	}
	return testkit.CPUTime() - cpu0
}

func benchWetBulb(b *testing.B) time.Duration {
	b.ReportAllocs()
	cpu0 := testkit.CPUTime()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		g := benchGrid[i%n]
		twb, err := psychro.WetBulbFromHumRatio(g.tC, benchW[i%n], g.pPa)
		if err != nil {
			b.Fatal(err)
		}
		sink += twb
	}
	return testkit.CPUTime() - cpu0
}

// reportRatio reports the states per second of wall time beside
// psychrolib's (x_psychrolib), and per second of processor time
// (x_psychrolib_cpu): the machine's load changes between the two
// measurements, which the processor times see far less of.
func reportRatio(b *testing.B, cpu time.Duration, js, jsCPU float64) {
	goRate := float64(b.N) / b.Elapsed().Seconds()
	b.ReportMetric(goRate, "states/s")
	b.ReportMetric(js, "psychrolib_states/s")
	b.ReportMetric(goRate/js, "x_psychrolib")
	if cpu > 0 && jsCPU > 0 {
		b.ReportMetric(float64(b.N)/cpu.Seconds()/jsCPU, "x_psychrolib_cpu")
	}
}

// BenchmarkBundle: W from RH, dew point, wet bulb, enthalpy, volume, density.
func BenchmarkBundle(b *testing.B) { benchBundle(b) }

// BenchmarkBundleVsPsychrolib: the bundle against psychrolib's same five calls.
func BenchmarkBundleVsPsychrolib(b *testing.B) {
	js := psychrolibRates(b)
	cpu := benchBundle(b)
	reportRatio(b, cpu, js.Bundle, js.BundleCPU)
}

// BenchmarkWetBulb: wet bulb from dry bulb and W.
func BenchmarkWetBulb(b *testing.B) { benchWetBulb(b) }

// BenchmarkWetBulbVsPsychrolib: wet bulb against psychrolib's bisection.
func BenchmarkWetBulbVsPsychrolib(b *testing.B) {
	js := psychrolibRates(b)
	cpu := benchWetBulb(b)
	reportRatio(b, cpu, js.WetBulb, js.WetBulbCPU)
}

func BenchmarkSatVapPressure(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		v, _ := psychro.SatVapPressure(benchGrid[i%n].tC)
		sink += v
	}
}

func BenchmarkHumRatioFromRH(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		g := benchGrid[i%n]
		v, _ := psychro.HumRatioFromRH(g.tC, g.rh, g.pPa)
		sink += v
	}
}

func BenchmarkDewPointFromHumRatio(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		v, _ := psychro.DewPointFromHumRatio(benchW[i%n], benchGrid[i%n].pPa)
		sink += v
	}
}

func BenchmarkHumRatioFromWetBulb(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		g := benchGrid[i%n]
		v, _ := psychro.HumRatioFromWetBulb(g.tC, benchTwb[i%n], g.pPa)
		sink += v
	}
}

func BenchmarkEnthalpy(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		v, _ := psychro.Enthalpy(benchGrid[i%n].tC, benchW[i%n])
		sink += v
	}
}

func BenchmarkSpecificVolume(b *testing.B) {
	b.ReportAllocs()
	n := len(benchGrid)
	for i := 0; b.Loop(); i++ {
		g := benchGrid[i%n]
		v, _ := psychro.SpecificVolume(g.tC, benchW[i%n], g.pPa)
		sink += v
	}
}

func BenchmarkCoil(b *testing.B) {
	b.ReportAllocs()
	in, _ := psychro.NewStateRH(26, 0.55, psychro.StandardPressurePa)
	for b.Loop() {
		out, _ := psychro.CoilLeaving(in, 12, psychro.DefaultLeavingRH)
		c, _ := psychro.Coil(2, in, out)
		sink += c.Total
	}
}
