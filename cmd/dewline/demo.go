package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"github.com/dewline/dewline/deploy/demo"
	"github.com/dewline/dewline/ingest/outfile"
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
	if err := demoDirFree(*dir, *force); err != nil {
		return err
	}
	if *days < demo.MinDays || *days > demo.MaxDays {
		return usagef("--days %d: choose %d to %d", *days, demo.MinDays, demo.MaxDays)
	}
	if !*noServe {
		// A busy port is found before minutes of work, not after.
		if err := listenFree(*listen); err != nil {
			return err
		}
	}
	if err := markDemoDir(*dir); err != nil {
		return err
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
	// Where to go next: the configuration is the best start for a site of
	// one's own, and the exports show what it reads.
	cfgAbs, _ := filepath.Abs(sc.ConfigPath)
	fmt.Fprintf(w, "configuration: %s\n  (commented; copy it to start your own site, then run dewline check --config on the copy)\n", cfgAbs)
	names := make([]string, 0, len(sc.Exports))
	for _, x := range sc.Exports {
		names = append(names, filepath.Base(x))
	}
	fmt.Fprintf(w, "exports: %s: %s\n", filepath.Dir(cfgAbs), strings.Join(names, ", "))
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
	if err := serveDashboard(ctx, e, cfg, st, *listen); err != nil {
		if errors.Is(err, syscall.EADDRINUSE) {
			return fmt.Errorf("%w; the report is written: choose another address with --listen (e.g. 127.0.0.1:9471), or pass --no-serve", err)
		}
		return err
	}
	return nil
}

// listenFree checks that the dashboard can listen on addr, and says how to
// go on when it cannot.
func listenFree(addr string) error {
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		if errors.Is(err, syscall.EADDRINUSE) {
			return usagef("--listen %s is in use (an earlier demo or dewline serve?): stop it, choose another address with --listen (e.g. 127.0.0.1:9471), or pass --no-serve to stop after the report", addr)
		}
		return usagef("--listen %s: %v", addr, err)
	}
	return ln.Close()
}

// demoMarker marks a folder the demo wrote; the demo writes into such a
// folder again without --force.
const demoMarker = ".dewline-demo"

// demoDirFree refuses a --dir that holds anything but an earlier demo's
// files (a real site's configuration, store or exports would be replaced),
// unless force.
func demoDirFree(dir string, force bool) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
	case err != nil:
		return fmt.Errorf("--dir %s: %w", dir, err)
	case len(entries) > 0 && !force:
		if _, err := os.Stat(filepath.Join(dir, demoMarker)); err != nil {
			var names []string
			for _, e := range entries[:min(3, len(entries))] {
				names = append(names, e.Name())
			}
			more := ""
			if len(entries) > 3 {
				more = fmt.Sprintf(" and %d more", len(entries)-3)
			}
			return usagef("--dir %s already holds files the demo did not write (%s%s): the demo would replace a configuration, store or exports of that name; choose an empty or new folder, or add --force",
				dir, strings.Join(names, ", "), more)
		}
	}
	return nil
}

// markDemoDir creates dir and marks it as the demo's.
func markDemoDir(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("--dir %s: %w", dir, err)
	}
	return outfile.WriteBytes(filepath.Join(dir, demoMarker), []byte("written by dewline demo: \"dewline demo --dir\" may write here again\n"))
}
