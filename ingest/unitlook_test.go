package ingest

import (
	"math"
	"math/rand/v2"
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

// TestUnitLook_RangesAreExact: the precomputed ranges count a value as
// typical exactly when the rule's own formula does, spec.Typical of the
// value converted (from the logged unit, or from SI through the configured
// unit), for every role, every pair of units of its kind, and values
// spread over and beyond the typical range, its ends and their
// neighbours to a few ulps among them.
func TestUnitLook_RangesAreExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	checked := 0
	for _, spec := range metrics.Roles() {
		for _, confName := range psychro.UnitNames(spec.Kind) {
			l := newUnitLook(spec, confName)
			require.GreaterOrEqual(t, l.conf, 0, "%s %s", spec.Role, confName)
			conf := l.units[l.conf]
			var xs []float64
			for _, u := range l.units {
				// The unit conversions must keep the order of values: the
				// ranges rest on it.
				require.Greater(t, u.ToSI(1), u.ToSI(0), "unit %s", u.Name)
				for _, si := range []float64{spec.TypMin, spec.TypMax} {
					for _, x := range []float64{u.FromSI(si), conf.FromSI(si), si} {
						y := x
						for k := 0; k < 4; k++ {
							xs = append(xs, y, math.Nextafter(x, math.Inf(-1)))
							y = math.Nextafter(y, math.Inf(1))
							x = math.Nextafter(x, math.Inf(-1))
						}
					}
				}
			}
			for _, r := range append(append([]valueRange(nil), l.raw...), l.si...) {
				for _, x := range []float64{r.lo, r.hi} {
					xs = append(xs, x, math.Nextafter(x, math.Inf(1)), math.Nextafter(x, math.Inf(-1)))
				}
			}
			span := spec.TypMax - spec.TypMin
			for k := 0; k < 2000; k++ {
				si := spec.TypMin - span + 3*span*rng.Float64()
				xs = append(xs, si, conf.FromSI(si))
			}
			xs = append(xs, 0, math.Copysign(0, -1), -1e300, 1e300, math.MaxFloat64, -math.MaxFloat64)
			for _, x := range xs {
				if math.IsInf(x, 0) || math.IsNaN(x) {
					continue
				}
				got, gotSI := l.tally(), l.tally()
				l.add(&got, x)
				l.addSI(&gotSI, x)
				for i, u := range l.units {
					assert.Equal(t, spec.Typical(u.ToSI(x)), got.typ[i] == 1,
						"%s logged in %s: raw %v (%x)", spec.Role, u.Name, x, math.Float64bits(x))
					assert.Equal(t, spec.Typical(u.ToSI(conf.FromSI(x))), gotSI.typ[i] == 1,
						"%s configured in %s, looked at in %s: SI %v (%x)", spec.Role, confName, u.Name, x, math.Float64bits(x))
					checked++
				}
			}
		}
	}
	t.Logf("%d values x units checked", checked)
}
