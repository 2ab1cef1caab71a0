package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/dewline/dewline/deploy/demo"
)

func runDemo(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	dir := fs.String("dir", "dewline-demo", "folder for the scenario's exports, configuration, store and report")
	seed := fs.Int64("seed", 1, "seed of the invented scenario; the same seed gives the same data")
	days := fs.Int("days", demo.DefaultDays, fmt.Sprintf("length of the scenario, %d to %d days", demo.MinDays, demo.MaxDays))
	noServe := fs.Bool("no-serve", false, "exit after writing the report instead of serving the dashboard")
	listen := fs.String("listen", "127.0.0.1:9470", "where the dashboard listens (loopback)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline demo [--dir dewline-demo] [--seed 1] [--days 21] [--no-serve] [--listen 127.0.0.1:9470]")
		fmt.Fprintln(fs.Output(), "Generates an invented building's trend exports, imports and analyses them, writes the report and serves the dashboard.")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	if *days < demo.MinDays || *days > demo.MaxDays {
		return usagef("--days %d: choose %d to %d", *days, demo.MinDays, demo.MaxDays)
	}
	w := e.stdout
	start := time.Now()
	fmt.Fprintf(w, "dewline demo: an invented building, generated from seed %d\n", *seed)
	sc, err := demo.Write(*dir, demo.Options{Seed: *seed, Days: *days})
	if err != nil {
		return err
	}
	zone, _ := time.LoadLocation(sc.Zone)
	fmt.Fprintf(w, "  %s, %d air handlers, %s to %s (%s), %d trend rows in %d exports (%.1f s)\n", sc.Site, len(sc.Units),
		sc.From.In(zone).Format("2 Jan"), sc.To.In(zone).Add(-time.Hour).Format("2 Jan 2006"), sc.Zone, sc.Rows, len(sc.Exports),
		time.Since(start).Seconds())
	for _, u := range sc.Units {
		fmt.Fprintf(w, "    %-6s %-34s %s\n", u.ID, u.Name, u.Behaviour)
	}
	// A fresh store: the demo always shows the same results.
	store := filepath.Join(filepath.Dir(sc.ConfigPath), demo.StoreFile)
	for _, suffix := range []string{"", "-wal", "-shm"} {
		if err := os.Remove(store + suffix); err != nil && !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("remove the previous demo store: %w", err)
		}
	}
	quiet := &env{stdout: io.Discard, stderr: e.stderr, log: e.log}
	t0 := time.Now()
	fmt.Fprintln(w, "importing the exports into the embedded store...")
	if err := runImport(ctx, quiet, append([]string{"--config", sc.ConfigPath}, sc.Exports...)); err != nil {
		return fmt.Errorf("import: %w", err)
	}
	fmt.Fprintf(w, "  imported in %.1f s\nanalysing every air handler-hour...\n", time.Since(t0).Seconds())
	t1 := time.Now()
	period := []string{"--config", sc.ConfigPath, "--from", sc.From.Format(time.RFC3339), "--to", sc.To.Format(time.RFC3339)}
	if err := runAnalyze(ctx, e, period); err != nil {
		return fmt.Errorf("analyze: %w", err)
	}
	fmt.Fprintf(w, "analysis: %.1f s (import and analysis together %.1f s)\n", time.Since(t1).Seconds(), time.Since(t0).Seconds())
	report := filepath.Join(filepath.Dir(sc.ConfigPath), "report.html")
	if err := runReport(ctx, quiet, append(period, "-o", report)); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	abs, _ := filepath.Abs(report)
	fmt.Fprintf(w, "report: %s\n", abs)
	if *noServe {
		return nil
	}
	cfg, err := loadConfig(sc.ConfigPath)
	if err != nil {
		return err
	}
	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	return serveDashboard(ctx, e, cfg, st, *listen)
}
