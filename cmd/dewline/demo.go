package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"path/filepath"
	"syscall"
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
	force := fs.Bool("force", false, "write into --dir even when it holds files the demo did not write (they may be replaced)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline demo [--dir dewline-demo] [--force] [--seed 1] [--days 21] [--no-serve] [--listen 127.0.0.1:9470]")
		fmt.Fprintln(fs.Output(), "Generates an invented building's trend exports, imports and analyses them, writes the report and serves the dashboard.")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	if err := demo.DirFree(*dir, *force); err != nil {
		return demoUsage(err)
	}
	if *days < demo.MinDays || *days > demo.MaxDays {
		return usagef("--days %d: choose %d to %d", *days, demo.MinDays, demo.MaxDays)
	}
	if !*noServe {
		// A busy port is found before minutes of work, not after.
		if err := demo.ListenFree(*listen); err != nil {
			return demoUsage(err)
		}
	}
	if err := demo.MarkDir(*dir); err != nil {
		return err
	}
	w := e.stdout
	start := time.Now()
	fmt.Fprintf(w, "dewline demo: an invented building, generated from seed %d\n", *seed)
	sc, err := demo.Write(*dir, demo.Options{Seed: *seed, Days: *days})
	if err != nil {
		return err
	}
	sc.Describe(w, time.Since(start))
	if err := sc.RemoveStore(); err != nil {
		return err
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
	sc.DescribeFiles(w, report)
	if *noServe {
		return nil
	}
	cfg, err := loadConfig(sc.ConfigPath)
	if err != nil {
		return err
	}
	if err := serveDashboard(ctx, e, cfg, *listen); err != nil {
		if errors.Is(err, syscall.EADDRINUSE) {
			return fmt.Errorf("%w; the report is written: choose another address with --listen (e.g. 127.0.0.1:9471), or pass --no-serve", err)
		}
		return err
	}
	return nil
}

// demoUsage reports a folder or an address the demo cannot use as a usage
// mistake.
func demoUsage(err error) error {
	var se *demo.SetupError
	if errors.As(err, &se) {
		return usagef("%s", err)
	}
	return err
}
