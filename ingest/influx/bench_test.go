package influx

import (
	"context"
	"math"
	"testing"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"

	"github.com/dewline/dewline/deploy/testkit"
)

// benchWeek is one air handler's week of 1-minute trends: 10 points, each
// a field of one measurement tagged with site and unit, as a building
// automation export to InfluxDB typically lays them out.
type benchData struct {
	measurement string
	start       time.Time
	days        int
	step        time.Duration
	points      []Query
}

func (w *benchData) end() time.Time { return w.start.AddDate(0, 0, w.days) }

var benchWeek = &benchData{
	measurement: "bench_ahu_week",
	start:       time.Date(2024, time.July, 1, 0, 0, 0, 0, time.UTC),
	days:        7,
	step:        time.Minute,
}

func init() {
	fields := []struct {
		field string
		kind  psychro.Kind
		unit  string
	}{
		{"mixed_air_temp", psychro.KindTemperature, "°F"},
		{"mixed_air_rh", psychro.KindRH, "%"},
		{"coil_leaving_temp", psychro.KindTemperature, "°F"},
		{"supply_temp", psychro.KindTemperature, "°F"},
		{"supply_flow", psychro.KindFlow, "CFM"},
		{"outdoor_temp", psychro.KindTemperature, "°F"},
		{"outdoor_rh", psychro.KindRH, "%"},
		{"compressor_kw", psychro.KindPower, "kW"},
		{"reheat_kw", psychro.KindPower, "kW"},
		{"fan_kw", psychro.KindPower, "kW"},
	}
	for _, f := range fields {
		benchWeek.points = append(benchWeek.points, Query{
			Ref: metrics.PointRef{
				Measurement: benchWeek.measurement, Field: f.field,
				Tags: map[string]string{"site": "bench", "ahu": "AHU-1"}, Unit: f.unit,
			},
			Kind: f.kind,
		})
	}
}

// writeBenchWeek writes the week. Writing it again replaces the same points,
// so reruns against one server leave the same data.
func writeBenchWeek(tb testing.TB, c *Client) int {
	tb.Helper()
	ctx := context.Background()
	n := 0
	for i, q := range benchWeek.points {
		var samples []ingest.Sample
		for t := benchWeek.start; t.Before(benchWeek.end()); t = t.Add(benchWeek.step) {
			// A daily cycle per point, in SI; values differ by point.
			phase := float64(t.Sub(benchWeek.start)) / float64(24*time.Hour) * 2 * math.Pi
			samples = append(samples, ingest.Sample{Time: t, Value: float64(i+1) * (1.2 + math.Sin(phase+float64(i)))})
		}
		if q.Kind == psychro.KindRH {
			for j := range samples {
				samples[j].Value /= 10
			}
		}
		if err := c.WriteSamples(ctx, q.Ref, q.Kind, samples); err != nil {
			tb.Fatalf("write bench week: %v", err)
		}
		n += len(samples)
	}
	return n
}

// BenchmarkInflux_ReadAirHandlerWeek reads one air handler's week (10 points
// × 7 days × 1 minute = 100,800 samples) from the local test server with
// ReadPoints, raw and as 15-minute means, and reports samples/s.
func BenchmarkInflux_ReadAirHandlerWeek(b *testing.B) {
	url, db := testkit.InfluxDB(b)
	c, err := New(Options{URL: url, Bucket: db + "/autogen"})
	if err != nil {
		b.Fatal(err)
	}
	defer c.Close()
	written := writeBenchWeek(b, c)
	if written != 100800 {
		b.Fatalf("wrote %d samples, want 100800", written)
	}
	for _, cfg := range []struct {
		name  string
		every time.Duration
	}{
		{"raw", 0},
		{"mean15m", 15 * time.Minute},
	} {
		b.Run(cfg.name, func(b *testing.B) {
			b.ReportAllocs()
			total := 0
			for b.Loop() {
				n := 0
				err := c.ReadPoints(context.Background(), benchWeek.points, benchWeek.start, benchWeek.end(), cfg.every,
					func(int, ingest.Sample) error { n++; return nil })
				if err != nil {
					b.Fatal(err)
				}
				total += n
			}
			b.ReportMetric(float64(total)/b.Elapsed().Seconds(), "samples/s")
			b.ReportMetric(float64(total)/float64(b.N), "samples/op")
		})
	}
}
