package main

import (
	"context"
	"flag"
	"fmt"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/importer"
)

func runCheck(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	useStore := fs.Bool("store", false, "also report what the configured store holds for each point")
	fromS := fs.String("from", "", "with --store: start of the window to inspect (default: 7 days before --to)")
	toS := fs.String("to", "", "with --store: end of the window, the last day included (2026-07-31) or a time excluded (default: now)")
	var inputs stringList
	fs.Var(&inputs, "input", "trend export (CSV) to inspect against the configuration; repeatable")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline check --config FILE [--input trends.csv ...] [--store [--from T] [--to T]]")
		fmt.Fprintln(fs.Output(), "Period bounds: "+periodRule+".")
		fmt.Fprintf(fs.Output(), "Exit status: 0 all points look right, 1 an error (the configuration, a secret, a file), 2 a usage mistake, %d points need a look or an export has more than %.0f %% of its rows rejected.\n", exitNeedsLook, 100*importer.MaxRejectedShare)
		fs.PrintDefaults()
	}
	cfg, err := parseWithConfig(fs, args, e.stdout)
	if err != nil {
		return err
	}
	if err := cfg.CheckSecrets(); err != nil {
		return fmt.Errorf("%s: the configuration is valid, but a secret it names is missing:\n%w", *cfgPath, err)
	}
	points := 0
	for _, a := range cfg.AirHandlers {
		points += len(a.Points)
	}
	fmt.Fprintf(e.stdout, "%s: valid; %d air handler(s), %d point(s), store %s, grid %v\n", *cfgPath, len(cfg.AirHandlers), points, cfg.Store.Kind, cfg.Grid.Step)
	for i := range cfg.AirHandlers {
		fmt.Fprintf(e.stdout, "  %s %s\n", cfg.AirHandlers[i].ID, cfg.AirHandlers[i].EnteringAir())
		if w := cfg.AirHandlers[i].CoolingFallback(); w != "" {
			fmt.Fprintf(e.stdout, "  %s %s\n", cfg.AirHandlers[i].ID, w)
		}
	}
	if len(inputs) == 0 && !*useStore {
		return nil
	}
	checks, err := importer.NewChecks(cfg)
	if err != nil {
		return err
	}
	if len(inputs) > 0 {
		if err := checks.ReadExports(e.stdout, inputs, cfg); err != nil {
			return err
		}
	} else {
		to := time.Now()
		if *toS != "" {
			if to, _, err = parseTo("--to", *toS, cfg.Location); err != nil {
				return err
			}
		}
		from := to.Add(-7 * 24 * time.Hour)
		if *fromS != "" {
			if from, err = parseFrom("--from", *fromS, cfg.Location); err != nil {
				return err
			}
		}
		st, err := openStore(ctx, cfg, true, e.log)
		if err != nil {
			return err
		}
		defer st.Close()
		fmt.Fprintf(e.stdout, "store window %s .. %s\n", from.In(cfg.Location).Format(time.RFC3339), to.In(cfg.Location).Format(time.RFC3339))
		if err := checks.ReadStore(ctx, st, from, to); err != nil {
			return err
		}
	}
	n, err := ingest.WritePointChecks(e.stdout, cfg.Location, checks.Points)
	if err != nil {
		return err
	}
	if msg := checks.NeedsLook(n); msg != "" {
		return &exitError{code: exitNeedsLook, msg: msg}
	}
	return nil
}
