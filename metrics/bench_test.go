package metrics_test

import (
	"bytes"
	"errors"
	"io"
	"math"
	"slices"
	"strconv"
	"testing"
	"time"

	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// benchDays is how many days of the benchmark hour the parse reference
// reads in one file: long enough that opening the file (the reader's
// buffers, about 0.9 MB) and detecting its layout weigh nothing beside the
// rows, as in an export of a month or a year. With a day's file they
// doubled the parse's time per hour or more.
const benchDays = 30

// benchHour is one air handler-hour of one-minute data with space sensors
// (so the required coil temperature changes every step).
func benchHour() (*metrics.AirHandler, *metrics.Hour) {
	u := testAirHandler()
	u.Target = metrics.Target{Kind: metrics.TargetSpaceDewPoint, DewPointC: 12.8}
	h := newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: func(i int) float64 { return 25 + math.Sin(float64(i)/9) },
		metrics.RoleEnteringRH:   func(i int) float64 { return 0.6 + 0.03*math.Cos(float64(i)/7) },
		metrics.RoleLeavingTemp:  func(i int) float64 { return 10.5 + 0.3*math.Sin(float64(i)/5) },
		metrics.RoleSupplyTemp:   func(i int) float64 { return 17.5 + 0.2*math.Cos(float64(i)/4) },
		metrics.RoleSupplyFlow:   constant(4),
		metrics.RoleSpaceTemp:    constant(23.5),
		metrics.RoleSpaceRH:      func(i int) float64 { return 0.5 + 0.01*math.Sin(float64(i)/3) },
		metrics.RoleOutdoorTemp:  constant(31),
	})
	return u, h
}

// hourExport writes the hour's samples as a wide CSV export in SI, the
// hour repeated for benchDays days (one row a minute, one column a role),
// and returns it with the number of values it holds.
func hourExport(h *metrics.Hour) ([]byte, int) {
	roles := make([]metrics.Role, 0, len(h.Values))
	for r := range h.Values {
		roles = append(roles, r)
	}
	slices.Sort(roles)
	var b []byte
	b = append(b, "Time"...)
	for _, r := range roles {
		b = append(b, ',')
		b = append(b, r...)
	}
	b = append(b, '\n')
	n := 0
	for d := 0; d < 24*benchDays; d++ {
		for i := 0; i < h.Steps(); i++ {
			t := h.Start.Add(time.Duration(d)*time.Hour + time.Duration(i)*h.Step)
			b = t.AppendFormat(b, time.RFC3339)
			for _, r := range roles {
				b = append(b, ',')
				b = strconv.AppendFloat(b, h.Values[r][i], 'f', 4, 64)
				n++
			}
			b = append(b, '\n')
		}
	}
	return b, n
}

// parseExport reads every value of an export, a slice of records at a
// time (the fastest way the reader offers), and returns how many it read.
func parseExport(b *testing.B, data []byte) int {
	r, err := csvfile.NewReader(bytes.NewReader(data), "hour.csv", csvfile.Options{Location: time.UTC})
	if err != nil {
		b.Fatal(err)
	}
	buf := make([]ingest.Record, 512)
	n := 0
	for {
		k, err := r.Read(buf)
		n += k
		if errors.Is(err, io.EOF) {
			return n
		}
		if err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkCompute compares, in the same run, the engine on one air
// handler-hour (compute) with parsing the same samples from a CSV export
// (parse: the hour's rows, read as part of a month's file). Both report
// ns/hour; compute reports its ratio to the parse in wall time (x_parse)
// and in processor time (cpu_x_parse, which a loaded machine disturbs
// less). The engine allocates nothing per step: allocs/op is the record's.
func BenchmarkCompute(b *testing.B) {
	u, h := benchHour()
	data, values := hourExport(h)
	hours := float64(24 * benchDays)
	var parseNs, parseCPU float64
	b.Run("parse", func(b *testing.B) {
		b.SetBytes(int64(len(data)))
		b.ReportAllocs()
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			if n := parseExport(b, data); n != values {
				b.Fatalf("%d values, want %d", n, values)
			}
		}
		parseNs = float64(b.Elapsed().Nanoseconds()) / float64(b.N) / hours
		parseCPU = float64(testkit.CPUTime()-cpu0) / float64(b.N) / hours
		b.ReportMetric(parseNs, "ns/hour")
	})
	b.Run("compute", func(b *testing.B) {
		b.ReportAllocs()
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			r := metrics.Compute(u, h)
			if r.Coverage != 1 {
				b.Fatal(r.Coverage)
			}
		}
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		cpu := float64(testkit.CPUTime()-cpu0) / float64(b.N)
		b.ReportMetric(ns, "ns/hour")
		b.ReportMetric(float64(h.Steps())/(ns/1e9), "steps/s")
		if parseNs > 0 {
			b.ReportMetric(ns/parseNs, "x_parse")
		}
		if parseCPU > 0 {
			b.ReportMetric(cpu/parseCPU, "cpu_x_parse")
		}
	})
}
