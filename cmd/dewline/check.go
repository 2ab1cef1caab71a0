package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
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
		fmt.Fprintf(fs.Output(), "Exit status: 0 all points look right, 1 an error (the configuration, a secret, a file), 2 a usage mistake, %d points need a look.\n", exitNeedsLook)
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
	}
	if len(inputs) == 0 && !*useStore {
		return nil
	}
	units := map[string]ingest.UnitPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.UnitPoints{Points: a.PointMap()}
	}
	ix, err := ingest.NewPointIndex(units)
	if err != nil {
		return err
	}
	checks := map[string]*ingest.PointCheck{}
	for name, ts := range ix {
		checks[name] = ingest.NewPointCheck(name, ts)
	}
	if len(inputs) > 0 {
		files, err := csvfile.OpenFiles(inputs, cfg.CSVOptions())
		if err != nil {
			return err
		}
		defer files.Close()
		var unmatched ingest.Unmatched
		rowUnits := ingest.NewRowUnits(ix)
		for {
			rec, err := files.Next()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				return err
			}
			pc, ok := checks[rec.Series]
			if !ok {
				unmatched.Add(rec.Series)
				continue
			}
			ru, ok, err := rowUnits.Check(rec)
			if err != nil {
				return err
			}
			if !ok {
				continue // counted in rowUnits
			}
			t0 := pc.Targets[0]
			pc.Add(rec.Time, t0.Unit.FromSI(ru.ToSI(t0, rec.Value)))
		}
		for _, r := range files.Readers() {
			s := r.Stats()
			fmt.Fprintf(e.stdout, "%s: %s layout, %d rows, %d values, %d rejected\n", r.Name(), r.Layout(), s.Rows, s.Records, s.RejectedTotal())
			for _, ex := range s.Examples {
				fmt.Fprintf(e.stdout, "  rejected: %s\n", ex.String())
			}
		}
		importer.WriteRowUnits(e.stdout, rowUnits)
		if u := unmatched.Summary(unmatchedExamples); u != "" {
			fmt.Fprintf(e.stdout, "%s; map them under air_handlers[].points if they are needed\n", u)
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
		for _, pc := range checks {
			t0 := pc.Targets[0]
			err := st.ReadSeries(ctx, t0.Ref, t0.Kind, from, to, func(s ingest.Sample) error {
				pc.Add(s.Time, t0.Unit.FromSI(s.Value)) // the store holds SI
				return nil
			})
			if err != nil && !st.IsMissing(err) {
				return fmt.Errorf("read %s: %w", pc.Name, err)
			}
		}
	}
	n, err := ingest.WritePointChecks(e.stdout, cfg.Location, checks)
	if err != nil {
		return err
	}
	if n > 0 {
		return &exitError{code: exitNeedsLook, msg: fmt.Sprintf("%d point(s) need a look", n)}
	}
	return nil
}
