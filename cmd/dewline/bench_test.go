package main

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// The benchmark air handler: one year of one-minute readings of ten points
// in a wide export, an invented humid-climate unit with a cold coil by day
// and reheat around the clock.
const benchConfig = `version: 1
site: {timezone: UTC, altitude: 30m, units: ip}
air_handlers:
  - id: AHU-B
` + dxPlant + drawThroughFan + `    target: {max_space_dewpoint: 55F}
    points:
` + scenarioPoints + `      reheat_kw: {column: RHKW, unit: kW}
      outdoor_temp: {column: OAT, unit: F}
      outdoor_rh: {column: OARH, unit: "%"}
      space_temp: {column: RAT, unit: F}
      space_rh: {column: RARH, unit: "%"}
`

var (
	benchMu    sync.Mutex
	benchDir   string
	benchPaths = map[int]string{}
)

// benchFiles writes the configuration and an export of the first minutes
// of the benchmark year once per run and size.
func benchFiles(b *testing.B, minutes int) (cfgPath, csvPath string) {
	b.Helper()
	benchMu.Lock()
	defer benchMu.Unlock()
	if benchDir == "" {
		dir, err := os.MkdirTemp("", "dewline-bench")
		if err != nil {
			b.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "config.yaml"), []byte(benchConfig), 0o600); err != nil {
			b.Fatal(err)
		}
		benchDir = dir
	}
	cfgPath = filepath.Join(benchDir, "config.yaml")
	if p, ok := benchPaths[minutes]; ok {
		return cfgPath, p
	}
	p := filepath.Join(benchDir, fmt.Sprintf("ahu-%d.csv", minutes))
	if err := writeBenchCSV(p, minutes); err != nil {
		b.Fatal(err)
	}
	benchPaths[minutes] = p
	return cfgPath, p
}

func writeBenchCSV(path string, minutes int) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	fmt.Fprintln(w, "Time,MAT,MARH,LAT,SAT,CFM,RHKW,OAT,OARH,RAT,RARH")
	t0 := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	for m := 0; m < minutes; m++ {
		t := t0.Add(time.Duration(m) * time.Minute)
		d := float64(m) / 1440
		day := t.Hour() >= 7 && t.Hour() < 19
		mat := 76 + 3*math.Sin(d*2*math.Pi) + 0.3*math.Sin(float64(m)/37)
		rh := 55 + 8*math.Sin(d/365*2*math.Pi) + 2*math.Sin(float64(m)/53)
		lat, cfm := 54.0, 6000.0
		if day {
			lat, cfm = 51, 9000
		}
		lat += 0.2 * math.Sin(float64(m)/11)
		sat := 61 + 0.3*math.Sin(float64(m)/7)
		rkw := 1.08 * cfm * (sat - lat - 0.9) / 3412
		fmt.Fprintf(w, "%s,%.2f,%.1f,%.2f,%.2f,%.0f,%.2f,%.1f,%.1f,%.1f,%.1f\n", t.Format("2006-01-02T15:04:05Z"),
			mat, rh, lat, sat, cfm, rkw, 80+10*math.Sin(d*2*math.Pi), 70+10*math.Sin(d), 74+0.5*math.Sin(float64(m)/90), 48+3*math.Sin(float64(m)/70))
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

const (
	benchMinutes      = 365 * 24 * 60
	benchMonthMinutes = 30 * 24 * 60
)

// parseExport reads every record of the export, the fastest way the
// reader offers (a slice at a time), and returns how many it read.
func parseExport(b *testing.B, path string) int {
	files, err := csvfile.OpenFiles([]string{path}, csvfile.Options{Location: time.UTC})
	if err != nil {
		b.Fatal(err)
	}
	defer files.Close()
	buf := make([]ingest.Record, 1024)
	n := 0
	for {
		k, err := files.Read(buf)
		if errors.Is(err, io.EOF) {
			return n
		}
		if err != nil {
			b.Fatal(err)
		}
		n += k
	}
}

// analyzeExport runs the whole analysis of the export and returns its hours.
func analyzeExport(b *testing.B, cfg *config.Config, path string) int {
	a := &cfg.AirHandlers[0]
	files, err := csvfile.OpenFiles([]string{path}, csvfile.Options{Location: time.UTC})
	if err != nil {
		b.Fatal(err)
	}
	defer files.Close()
	src := &ingest.RecordHours{Src: files, Step: cfg.Grid.Step,
		AirHandlers: map[string]ingest.AirHandlerPoints{a.ID: {Points: a.PointMap(), Stale: cfg.StaleLimits(a)}}}
	an := &agent.Analyzer{Cfg: cfg, Source: src}
	hours := 0
	_, _, err = an.Run(context.Background(), time.Time{}, time.Time{}, nil, func(context.Context, *metrics.Record, []metrics.Transition) error {
		hours++
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	return hours
}

// benchParse runs the sub-benchmark "parse", the reference of the year's
// benchmarks: reading the year export alone, every record. It returns the
// wall and processor nanoseconds of one parse. size, when not 0, is the
// export's size in bytes, for MB/s.
func benchParse(b *testing.B, csvPath string, size int64) (ns, cpu float64) {
	b.Run("parse", func(b *testing.B) {
		if size > 0 {
			b.SetBytes(size)
		}
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			if n := parseExport(b, csvPath); n != 10*benchMinutes {
				b.Fatalf("%d records", n)
			}
		}
		ns = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		cpu = float64(testkit.CPUTime()-cpu0) / float64(b.N)
		b.ReportMetric(float64(benchMinutes)/(ns/1e9), "rows/s")
	})
	return ns, cpu
}

// BenchmarkAnalyzeYear compares, in the same run, reading the year export
// alone (parse: every record, a slice at a time) with the whole analysis
// from it (analyze: parse, convert, align, compute with uncertainty,
// alerts). The goal is analyze within 1.5x of parse in wall time (x_parse);
// cpu_x_parse is the ratio of processor times (all of the analysis'
// goroutines against the parse's one), which a loaded machine disturbs less.
func BenchmarkAnalyzeYear(b *testing.B) {
	cfgPath, csvPath := benchFiles(b, benchMinutes)
	cfg, err := config.Load(cfgPath)
	if err != nil {
		b.Fatal(err)
	}
	st, err := os.Stat(csvPath)
	if err != nil {
		b.Fatal(err)
	}
	parseNs, parseCPU := benchParse(b, csvPath, st.Size())
	beside := func(b *testing.B) {
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		b.ReportMetric(8760/(ns/1e9), "hours/s")
		if parseNs > 0 {
			b.ReportMetric(ns/parseNs, "x_parse")
		}
	}
	b.Run("analyze", func(b *testing.B) {
		b.SetBytes(st.Size())
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			if hours := analyzeExport(b, cfg, csvPath); hours != 8760 {
				b.Fatalf("%d hours", hours)
			}
		}
		cpu := float64(testkit.CPUTime()-cpu0) / float64(b.N)
		beside(b)
		if parseCPU > 0 {
			b.ReportMetric(cpu/parseCPU, "cpu_x_parse")
		}
	})
	// The whole command, as a user runs it: the analysis and the hourly
	// CSV written beside it (no store).
	b.Run("command", func(b *testing.B) {
		b.SetBytes(st.Size())
		out := filepath.Join(b.TempDir(), "hourly.csv")
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			analyzeCommand(b, cfgPath, csvPath, out)
		}
		cpu := float64(testkit.CPUTime()-cpu0) / float64(b.N)
		beside(b)
		if parseCPU > 0 {
			b.ReportMetric(cpu/parseCPU, "cpu_x_parse")
		}
	})
}

// analyzeCommand runs "dewline analyze" on the export, writing the hourly
// records to out and nothing to a store.
func analyzeCommand(b *testing.B, cfgPath, csvPath, out string) {
	var stderr bytes.Buffer
	if code := run(context.Background(), []string{"--log-level", "error", "analyze", "--config", cfgPath, "--input", csvPath,
		"--out", out, "--no-store"}, io.Discard, &stderr); code != 0 {
		b.Fatalf("analyze exited %d: %s", code, stderr.String())
	}
}

// BenchmarkAnalyzeMemory analyses a month and the year of the same air
// handler and reports the bytes and allocations per hour analysed: the
// analysis streams, so they must not grow with the length (the year's
// figures equal the month's, within the noise of the garbage collector).
func BenchmarkAnalyzeMemory(b *testing.B) {
	cfgPath, _ := benchFiles(b, benchMinutes)
	cfg, err := config.Load(cfgPath)
	if err != nil {
		b.Fatal(err)
	}
	for _, tc := range []struct {
		name    string
		minutes int
	}{{"month", benchMonthMinutes}, {"year", benchMinutes}} {
		_, path := benchFiles(b, tc.minutes)
		b.Run(tc.name, func(b *testing.B) {
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			hours := 0
			for b.Loop() {
				hours += analyzeExport(b, cfg, path)
			}
			runtime.ReadMemStats(&after)
			if hours != b.N*tc.minutes/60 {
				b.Fatalf("%d hours in %d runs", hours, b.N)
			}
			b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/float64(hours), "B/hour")
			b.ReportMetric(float64(after.Mallocs-before.Mallocs)/float64(hours), "allocs/hour")
		})
	}
	// The whole command, writing the hourly CSV: the same must hold.
	for _, tc := range []struct {
		name    string
		minutes int
	}{{"command_month", benchMonthMinutes}, {"command_year", benchMinutes}} {
		cfgPath, path := benchFiles(b, tc.minutes)
		b.Run(tc.name, func(b *testing.B) {
			out := filepath.Join(b.TempDir(), "hourly.csv")
			var before, after runtime.MemStats
			runtime.ReadMemStats(&before)
			for b.Loop() {
				analyzeCommand(b, cfgPath, path, out)
			}
			runtime.ReadMemStats(&after)
			hours := float64(b.N * tc.minutes / 60)
			b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/hours, "B/hour")
			b.ReportMetric(float64(after.Mallocs-before.Mallocs)/hours, "allocs/hour")
		})
	}
}
