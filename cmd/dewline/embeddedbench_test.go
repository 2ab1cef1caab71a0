package main

import (
	"context"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"github.com/dewline/dewline/ingest/importer"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// allocated is the bytes this process has allocated so far.
func allocated() uint64 {
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.TotalAlloc
}

// BenchmarkEmbeddedYear measures the embedded store on the air handler-year
// of BenchmarkAnalyzeYear (ten one-minute points, 5.3 million values), each
// step beside its reference in the same run:
//
//   - parse: reading the export alone; import: `dewline import` of it into
//     a new store file (parse, convert, write). Goal: import within 2x of
//     parse (x_parse).
//   - read: every sample of the year's ten series read back; analyze: the
//     analysis of the year from the store (read, align, compute, alerts).
//     Goal: analyze within 1.5x of read (x_read).
//
// Beside the wall-time ratios, cpu_x_parse and cpu_x_read compare processor
// times (all goroutines), MB_file is the store file after the import and
// MB_alloc the bytes allocated per import or read.
func BenchmarkEmbeddedYear(b *testing.B) {
	_, csvPath := benchFiles(b, benchMinutes)
	dir := b.TempDir()
	cfgPath := filepath.Join(dir, "config.yaml")
	if err := os.WriteFile(cfgPath, []byte(benchConfig+"store: {kind: embedded, path: year.db}\n"), 0o600); err != nil {
		b.Fatal(err)
	}
	cfg, err := config.Load(cfgPath)
	if err != nil {
		b.Fatal(err)
	}
	a := &cfg.AirHandlers[0]
	units := map[string]ingest.AirHandlerPoints{a.ID: {Points: a.PointMap(), Stale: cfg.StaleLimits(a)}}
	ix, err := ingest.NewPointIndex(units)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	open := func(b *testing.B) *stores {
		st, err := openStore(ctx, cfg, false, zerolog.Nop())
		if err != nil {
			b.Fatal(err)
		}
		return st
	}
	removeStore := func(b *testing.B) {
		for _, suffix := range []string{"", "-wal", "-shm"} {
			if err := os.Remove(cfg.StorePath() + suffix); err != nil && !os.IsNotExist(err) {
				b.Fatal(err)
			}
		}
	}
	from := time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)
	to := from.Add(benchMinutes * time.Minute)

	parseNs, parseCPU := benchParse(b, csvPath, 0)
	b.Run("import", func(b *testing.B) {
		cpu0 := testkit.CPUTime()
		alloc0 := allocated()
		for b.Loop() {
			b.StopTimer()
			removeStore(b)
			st := open(b)
			b.StartTimer()
			s, err := importer.File(ctx, csvPath, importer.Options{Config: cfg, ConfigPath: cfgPath, Store: st.Store, Index: ix,
				MaxBytes: 1 << 40, Log: zerolog.Nop()})
			if err != nil {
				b.Fatal(err)
			}
			if s.Written != 10*benchMinutes {
				b.Fatalf("%d values written", s.Written)
			}
			b.StopTimer()
			st.Close()
			b.StartTimer()
		}
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		cpu := float64(testkit.CPUTime()-cpu0) / float64(b.N)
		b.ReportMetric(10*benchMinutes/(ns/1e9), "values/s")
		b.ReportMetric(float64(allocated()-alloc0)/float64(b.N)/(1<<20), "MB_alloc")
		if fi, err := os.Stat(cfg.StorePath()); err == nil {
			b.ReportMetric(float64(fi.Size())/(1<<20), "MB_file")
		}
		if parseNs > 0 {
			b.ReportMetric(ns/parseNs, "x_parse")
			b.ReportMetric(cpu/parseCPU, "cpu_x_parse")
		}
	})
	// The store the last import left is read back and analysed.
	st := open(b)
	defer st.Close()
	var readNs, readCPU float64
	b.Run("read", func(b *testing.B) {
		cpu0 := testkit.CPUTime()
		alloc0 := allocated()
		for b.Loop() {
			n := 0
			for role, ref := range a.PointMap() {
				spec, _ := metrics.LookupRole(string(role))
				err := st.ReadSeries(ctx, ref, spec.Kind, from.Add(-time.Hour), to, func(ingest.Sample) error { n++; return nil })
				if err != nil {
					b.Fatal(err)
				}
			}
			if n != 10*benchMinutes {
				b.Fatalf("%d samples read", n)
			}
		}
		readNs = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		readCPU = float64(testkit.CPUTime()-cpu0) / float64(b.N)
		b.ReportMetric(float64(allocated()-alloc0)/float64(b.N)/(1<<20), "MB_alloc")
	})
	b.Run("analyze", func(b *testing.B) {
		cpu0 := testkit.CPUTime()
		for b.Loop() {
			src := &ingest.StoreHours{Reader: st, AirHandlers: units, Step: cfg.Grid.Step, IsMissing: st.IsMissing}
			an := &agent.Analyzer{Cfg: cfg, Source: src}
			hours := 0
			_, _, err := an.Run(ctx, from, to, nil, func(context.Context, *metrics.Record, []metrics.Transition) error {
				hours++
				return nil
			})
			if err != nil {
				b.Fatal(err)
			}
			if hours != 8760 {
				b.Fatalf("%d hours", hours)
			}
		}
		ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
		cpu := float64(testkit.CPUTime()-cpu0) / float64(b.N)
		b.ReportMetric(8760/(ns/1e9), "hours/s")
		if readNs > 0 {
			b.ReportMetric(ns/readNs, "x_read")
			b.ReportMetric(cpu/readCPU, "cpu_x_read")
		}
	})
}
