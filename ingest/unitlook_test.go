package ingest

import (
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// TestAligner_LooksAtUnits: hour by hour, the aligner names the unit a
// role's values look logged in when it is not the configured one, by
// check's rule over the hour and the day before it.
func TestAligner_LooksAtUnits(t *testing.T) {
	t0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	// raw returns the logged value of hour h: a supply of 13-17 °C.
	type tc struct {
		name  string
		every time.Duration
		unit  string
		raw   func(h int, i int) float64
		want  func(h int) string
	}
	f := func(c float64) float64 { return psychro.CToF(c) }
	for _, tt := range []tc{
		{"°C logged, °F configured, 1-minute log", time.Minute, "F",
			func(h, i int) float64 { return 13 + 4*float64(i%10)/10 },
			func(int) string { return "°C" }},
		// Four samples an hour: the rule's ten samples are there from the
		// third hour on.
		{"°C logged, °F configured, 15-minute log", 15 * time.Minute, "F",
			func(h, i int) float64 { return 13 + float64(i) },
			func(h int) string {
				if h < 2 {
					return ""
				}
				return "°C"
			}},
		{"°F logged and configured", time.Minute, "F",
			func(h, i int) float64 { return f(13 + 4*float64(i%10)/10) },
			func(int) string { return "" }},
		// One cold hour (a supply of 35-39 °F, typical as °C but not as °F)
		// among warm ones is not a wrong unit: the day around it fits.
		{"°F configured, one cold hour", time.Minute, "F",
			func(h, i int) float64 {
				if h == 5 {
					return 35 + 4*float64(i%10)/10
				}
				return f(13 + 4*float64(i%10)/10)
			},
			func(int) string { return "" }},
	} {
		t.Run(tt.name, func(t *testing.T) {
			u, err := psychro.LookupUnit(psychro.KindTemperature, tt.unit)
			require.NoError(t, err)
			a, err := NewAligner("AHU-1", t0, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
			require.NoError(t, err)
			a.LookAtUnits(map[metrics.Role]string{metrics.RoleSupplyTemp: tt.unit})
			const hours = 8
			for h := 0; h < hours; h++ {
				for i := 0; i < int(time.Hour/tt.every); i++ {
					at := t0.Add(time.Duration(h)*time.Hour + time.Duration(i)*tt.every)
					a.Push(metrics.RoleSupplyTemp, Sample{Time: at, Value: u.ToSI(tt.raw(h, i))})
				}
			}
			h := 0
			require.NoError(t, a.Emit(t0.Add(hours*time.Hour), func(hr *metrics.Hour) error {
				assert.Equal(t, tt.want(h), hr.Quality[metrics.RoleSupplyTemp].OtherUnit, "hour %d", h)
				h++
				return nil
			}))
			assert.Equal(t, hours, h)
		})
	}
}

// BenchmarkAligner_LookAtUnits: aligning a day of one-minute supply
// temperatures with the unit judged, beside the same without (the
// reference, in the same run).
func BenchmarkAligner_LookAtUnits(b *testing.B) {
	t0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	for _, look := range []bool{false, true} {
		name := "reference"
		if look {
			name = "look_at_units"
		}
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				a, err := NewAligner("AHU-1", t0, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
				if err != nil {
					b.Fatal(err)
				}
				if look {
					a.LookAtUnits(map[metrics.Role]string{metrics.RoleSupplyTemp: "F"})
				}
				for m := 0; m < 24*60; m++ {
					a.Push(metrics.RoleSupplyTemp, Sample{Time: t0.Add(time.Duration(m) * time.Minute), Value: 14 + float64(m%7)/10})
				}
				if err := a.Emit(t0.Add(24*time.Hour), func(*metrics.Hour) error { return nil }); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
