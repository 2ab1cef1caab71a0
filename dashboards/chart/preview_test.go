package chart

import (
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"
)

// TestPreview renders sample charts (demo data, edge cases included: a
// gap in a line, NaN and negative bars, IP units, altitude) and checks the
// invariants every chart meets (render: well-formed, no NaN or Inf, no
// style, a title, an aria-label and a view box). With DEWLINE_CHART_PREVIEW
// set to a folder it also writes them there as SVG files, for looking at
// them in a browser or converting them to PNG.
func TestPreview(t *testing.T) {
	dir := os.Getenv("DEWLINE_CHART_PREVIEW")
	if dir != "" {
		require.NoError(t, os.MkdirAll(dir, 0o755))
	}
	write := func(name string, fn func(io.Writer) error) {
		b, _ := render(t, fn)
		if dir != "" {
			require.NoError(t, os.WriteFile(filepath.Join(dir, name+".svg"), b, 0o644))
			t.Logf("%s.svg: %d bytes", name, len(b))
		}
	}
	times, loc := demoHours(t, 720)
	energy := demoEnergy(720)
	write("stacked-720h", func(b io.Writer) error {
		return StackedBars(b, Frame{Title: "Hourly energy, June", YLabel: "Energy, kWh", Zone: loc}, times, time.Hour, energy)
	})
	write("stacked-48h", func(b io.Writer) error {
		s := demoEnergy(48)
		return StackedBars(b, Frame{Title: "Hourly energy, two days", YLabel: "Energy, kWh", Zone: loc}, times[:48], time.Hour, s)
	})
	n := 7 * 24
	req, act := make([]float64, n), make([]float64, n)
	lo, hi := make([]float64, n), make([]float64, n)
	for i := range n {
		h := float64(i % 24)
		req[i] = 13.5 + 0.8*math.Sin(h/24*2*math.Pi)
		act[i] = 11 + 0.4*math.Cos(h/5)
		if i%37 == 5 {
			act[i] = math.NaN()
		}
		lo[i], hi[i] = req[i]-0.6, req[i]+0.6
	}
	write("lines-week", func(b io.Writer) error {
		return Lines(b, Frame{Title: "Coil leaving temperature", YLabel: "Temperature, °C", Zone: loc}, times[:n],
			[]Series{{Name: "Required leaving", Values: req}, {Name: "Actual leaving", Values: act}},
			[]Band{{Name: "Required ± uncertainty", Lo: lo, Hi: hi}})
	})
	write("hbars", func(b io.Writer) error {
		return HBars(b, Frame{Title: "Avoidable reheat by air handler", YLabel: "kWh per day"},
			[]string{"AHU-1 east wing", "AHU-2", "AHU-3 laboratory with a very long name", "AHU-4", "AHU-5"},
			[]float64{312, 188.5, 95, math.NaN(), -12}, "")
	})
	write("spark", func(b io.Writer) error { return Spark(b, energy[1].Values[:72], 120, 28, "") })
	paths := demoPaths(t, 720)
	target := &PsyTarget{MaxDewPointC: 13, MaxRH: 0.6, SpaceTempC: 24, Label: "space 24 °C, 60 %"}
	write("psy-si-720", func(b io.Writer) error {
		return PsyChart{Title: "June processes", Paths: paths, Target: target}.Render(b)
	})
	write("psy-ip-24", func(b io.Writer) error {
		return PsyChart{Title: "One day", IP: true, TMinC: psychro.FToC(30), TMaxC: psychro.FToC(110), WMax: 0.028,
			Paths: paths[:24], Target: target}.Render(b)
	})
	write("psy-wetbulb-altitude", func(b io.Writer) error {
		return PsyChart{Title: "Wet-bulb lines at 1500 m", PressurePa: 84556, Lines: LinesWetBulb, Paths: paths[:3]}.Render(b)
	})
}
