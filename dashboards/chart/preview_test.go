package chart

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"
)

// TestPreview writes sample charts (demo data) as SVG files into the folder
// named by DEWLINE_CHART_PREVIEW, for looking at them in a browser or
// converting them to PNG. It checks nothing and skips when the variable is unset.
func TestPreview(t *testing.T) {
	dir := os.Getenv("DEWLINE_CHART_PREVIEW")
	if dir == "" {
		t.Skip("set DEWLINE_CHART_PREVIEW to a folder to write sample charts")
	}
	require.NoError(t, os.MkdirAll(dir, 0o755))
	write := func(name string, render func(*bytes.Buffer) error) {
		var b bytes.Buffer
		require.NoError(t, render(&b), name)
		require.NoError(t, os.WriteFile(filepath.Join(dir, name+".svg"), b.Bytes(), 0o644))
		t.Logf("%s.svg: %d bytes", name, b.Len())
	}
	times, loc := demoHours(t, 720)
	energy := demoEnergy(720)
	write("stacked-720h", func(b *bytes.Buffer) error {
		return StackedBars(b, Frame{Title: "Hourly energy, June", YLabel: "Energy, kWh", Zone: loc}, times, time.Hour, energy)
	})
	write("stacked-48h", func(b *bytes.Buffer) error {
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
	write("lines-week", func(b *bytes.Buffer) error {
		return Lines(b, Frame{Title: "Coil leaving temperature", YLabel: "Temperature, °C", Zone: loc}, times[:n],
			[]Series{{Name: "Required leaving", Values: req}, {Name: "Actual leaving", Values: act}},
			[]Band{{Name: "Required ± uncertainty", Lo: lo, Hi: hi}})
	})
	write("hbars", func(b *bytes.Buffer) error {
		return HBars(b, Frame{Title: "Avoidable reheat by air handler", YLabel: "kWh per day"},
			[]string{"AHU-1 east wing", "AHU-2", "AHU-3 laboratory with a very long name", "AHU-4", "AHU-5"},
			[]float64{312, 188.5, 95, math.NaN(), -12}, "")
	})
	write("spark", func(b *bytes.Buffer) error { return Spark(b, energy[1].Values[:72], 120, 28, "") })
	paths := demoPaths(t, 720)
	target := &PsyTarget{MaxDewPointC: 13, MaxRH: 0.6, SpaceTempC: 24, Label: "space 24 °C, 60 %"}
	write("psy-si-720", func(b *bytes.Buffer) error {
		return PsyChart{Title: "June processes", Paths: paths, Target: target}.Render(b)
	})
	write("psy-ip-24", func(b *bytes.Buffer) error {
		return PsyChart{Title: "One day", IP: true, TMinC: psychro.FToC(30), TMaxC: psychro.FToC(110), WMax: 0.028,
			Paths: paths[:24], Target: target}.Render(b)
	})
	write("psy-wetbulb-altitude", func(b *bytes.Buffer) error {
		return PsyChart{Title: "Wet-bulb lines at 1500 m", PressurePa: 84556, Lines: LinesWetBulb, Paths: paths[:3]}.Render(b)
	})
}
