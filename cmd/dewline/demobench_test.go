package main

import (
	"context"
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/deploy/demo"
	"github.com/dewline/dewline/ingest/csvfile"
)

// BenchmarkDemo times what "dewline demo" does between generating the
// scenario and writing the report: import the exports into a fresh
// embedded store and analyse every air handler-hour from it. The
// reference, in the same run, only reads the same exports with the CSV
// reader, the floor under any import. (The goal for the whole demo is
// under 30 s on two cores.)
func BenchmarkDemo(b *testing.B) {
	dir := b.TempDir()
	sc, err := demo.Write(dir, demo.Options{})
	if err != nil {
		b.Fatal(err)
	}
	cfg, err := loadConfig(sc.ConfigPath)
	if err != nil {
		b.Fatal(err)
	}
	b.Run("read-exports", func(b *testing.B) {
		for b.Loop() {
			files, err := csvfile.OpenFiles(sc.Exports, cfg.CSVOptions())
			if err != nil {
				b.Fatal(err)
			}
			n := 0
			for {
				if _, err := files.Next(); err != nil {
					if !errors.Is(err, io.EOF) {
						b.Fatal(err)
					}
					break
				}
				n++
			}
			files.Close()
			b.ReportMetric(float64(n), "rows")
		}
	})
	b.Run("import+analyze", func(b *testing.B) {
		e := &env{stdout: io.Discard, stderr: io.Discard, log: zerolog.Nop()}
		store := filepath.Join(dir, demo.StoreFile)
		for b.Loop() {
			for _, s := range []string{"", "-wal", "-shm"} {
				_ = os.Remove(store + s)
			}
			ctx := context.Background()
			if err := runImport(ctx, e, append([]string{"--config", sc.ConfigPath}, sc.Exports...)); err != nil {
				b.Fatal(err)
			}
			if err := runAnalyze(ctx, e, []string{"--config", sc.ConfigPath, "--from", sc.From.Format(time.RFC3339), "--to", sc.To.Format(time.RFC3339)}); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(len(sc.AirHandlers)*int(sc.To.Sub(sc.From).Hours())), "hours")
	})
}
