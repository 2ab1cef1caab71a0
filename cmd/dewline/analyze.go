package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"strings"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/importer"
	"github.com/dewline/dewline/ingest/outfile"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// stringList is a repeatable flag.
type stringList []string

func (s *stringList) String() string     { return strings.Join(*s, ",") }
func (s *stringList) Set(v string) error { *s = append(*s, v); return nil }

func runAnalyze(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("analyze", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	fromS := fs.String("from", "", "start of the period: a day (2026-07-01) or a time (2026-07-01T06:00 site time, or RFC 3339); default: the first stored sample of the configured points (with --input: the exports' first data)")
	toS := fs.String("to", "", "end of the period: the last day, included (2026-07-31), or a time, excluded; default: through the hour of the last stored sample (with --input: the exports' last data)")
	out := fs.String("out", "", "write the hourly records to this .csv or .json file")
	noStore := fs.Bool("no-store", false, "do not write results to the configured store")
	var inputs, units stringList
	fs.Var(&inputs, "input", "trend export (CSV) to analyse directly, without importing; repeatable")
	fs.Var(&units, "ahu", "analyse only this air handler; repeatable (default: all)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline analyze --config FILE [--from T] [--to T] [--input trends.csv ...] [--out hourly.csv|hourly.json] [--ahu ID ...] [--no-store]")
		fmt.Fprintln(fs.Output(), "Period bounds: "+periodRule+".")
		fs.PrintDefaults()
	}
	cfg, err := parseWithConfig(fs, args, e.stdout)
	if err != nil {
		return err
	}
	var from, to time.Time
	if *fromS != "" {
		if from, err = parseFrom("--from", *fromS, cfg.Location); err != nil {
			return err
		}
	}
	if *toS != "" {
		if to, _, err = parseTo("--to", *toS, cfg.Location); err != nil {
			return err
		}
	}
	if !from.IsZero() && !to.IsZero() && !to.After(from) {
		return usagef("--to must be after --from")
	}
	ahus := []string(units)
	if len(ahus) == 0 {
		for _, a := range cfg.AirHandlers {
			ahus = append(ahus, a.ID)
		}
	}
	log := e.log

	// Output file first: a bad path fails before any work. It is written
	// aside and put in place only when the run succeeds.
	var hw *ingest.HourlyWriter
	var outFile *outfile.File
	if *out != "" {
		format, err := ingest.FormatFor(*out)
		if err != nil {
			return usagef("--out: %v", err)
		}
		if err := outfile.RefuseInputs("--out", *out, append([]string{*cfgPath, cfg.StorePath(), cfg.StatePath()}, inputs...)...); err != nil {
			return usagef("%v", err)
		}
		if outFile, err = outfile.Create(*out); err != nil {
			return fmt.Errorf("--out: %w", err)
		}
		defer outFile.Abort()
		if hw, err = ingest.NewHourlyWriter(outFile, format); err != nil {
			return err
		}
	}

	// The store: read from it unless exports are given; write results to it unless told not to.
	var st *stores
	if len(inputs) == 0 || !*noStore {
		if st, err = openStore(ctx, cfg, false, log); err != nil {
			return err
		}
		defer st.Close()
	}

	unitPoints := map[string]ingest.AirHandlerPoints{}
	for _, id := range ahus {
		a, ok := cfg.AirHandler(id)
		if !ok {
			return usagef("--ahu %q: no such air handler in %s", id, *cfgPath)
		}
		unitPoints[id] = ingest.AirHandlerPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	var src agent.HourSource
	var files *csvfile.Files
	var storeSrc *ingest.StoreHours
	var recSrc *ingest.RecordHours
	readFrom := st // the store hours are read from
	if len(inputs) > 0 {
		// Exports stream in time order; ones that are not (sorted by
		// point, newest first) are imported into a temporary store and
		// analysed from it, as after "dewline import".
		ix, err := ingest.NewPointIndex(unitPoints)
		if err != nil {
			return err
		}
		order, err := csvfile.ScanOrder(ctx, inputs, cfg.CSVOptions(), ix)
		if err != nil {
			return err
		}
		if late := order.OutOfOrder; late != nil {
			dir, err := os.MkdirTemp("", "dewline-analyze-")
			if err != nil {
				return fmt.Errorf("a temporary store for exports not in time order: %w", err)
			}
			defer os.RemoveAll(dir)
			log.Warn().Str("file", late.File).Int("line", late.Line).Time("row_time", late.Time).Time("after", late.Latest).Str("store", dir).
				Msg("the export is not in time order: the exports are imported into a temporary store and analysed from it")
			if readFrom, err = importExports(ctx, inputs, cfg, *cfgPath, dir, ix, e.stderr, log); err != nil {
				return err
			}
			defer readFrom.Close()
			inputs = nil
		} else if from.IsZero() && !order.First.IsZero() {
			from = order.First.UTC().Truncate(time.Hour)
		}
	}
	if len(inputs) == 0 && (from.IsZero() || to.IsZero()) {
		// The period the store holds: from the first stored sample of the
		// points analysed through the hour of the last.
		first, last, err := storedSpan(ctx, readFrom, ahus, unitPoints)
		if err != nil {
			return err
		}
		if from.IsZero() {
			from = first
		}
		if to.IsZero() {
			to = last
		}
		if !to.After(from) {
			return usagef("--to must be after --from (the store holds samples %s .. %s)",
				first.In(cfg.Location).Format("2006-01-02 15:04"), last.In(cfg.Location).Format("2006-01-02 15:04"))
		}
		log.Info().Time("from", from).Time("to", to).Msg("period: the stored span of the points analysed")
	}
	if len(inputs) > 0 {
		files, err = csvfile.OpenFiles(inputs, cfg.CSVOptions())
		if err != nil {
			return err
		}
		defer files.Close()
		recSrc = &ingest.RecordHours{Src: files, AirHandlers: unitPoints, Step: cfg.Grid.Step}
		src = recSrc
	} else {
		// The backend itself, not its wrapper: StoreHours reads a batch of
		// all the air handlers at once where the store can (InfluxDB), a
		// day of them, or less for many, so that a read holds no more
		// air-handler hours than one of the agent's.
		chunk := time.Duration(max(1, min(24, agent.DefaultReadBatch/len(ahus)))) * time.Hour
		storeSrc = &ingest.StoreHours{Reader: readFrom.Store, AirHandlers: unitPoints, Step: cfg.Grid.Step, IsMissing: readFrom.IsMissing,
			CheckFirst: true, ByHour: true, Chunk: chunk}
		src = storeSrc
	}

	prog := telemetry.NewProgress("analysing", log)
	an := &agent.Analyzer{Cfg: cfg, Source: src}
	if !from.IsZero() && !to.IsZero() {
		an.Progress = prog.Update
	}
	// Results are written in batches of a day per air handler.
	pipe := agent.ResultPipeOptions{FileName: *out, Size: 24 * len(ahus), Open: an.OpenAlerts}
	if hw != nil {
		pipe.File = hw
	}
	if st != nil && !*noStore {
		pipe.Store = st
	}
	rw := agent.NewResultPipe(ctx, pipe)
	hours := 0
	start := time.Now()
	put := func(ctx context.Context, rec *metrics.Record, tr []metrics.Transition) error {
		hours++
		return rw.Add(rec, tr)
	}
	runFrom, runTo := from, to
	sums, failed, runErr := an.Run(ctx, runFrom, runTo, ahus, put)
	// Keep what was computed: the last batch is written even when
	// interrupted.
	flush := runErr == nil || errors.Is(runErr, context.Canceled)
	if err := rw.Close(flush); err != nil && runErr == nil {
		runErr = err
	}
	if hw != nil && runErr == nil {
		if err := hw.Close(); err != nil {
			runErr = fmt.Errorf("write %s: %w", *out, err)
		}
	}
	for _, f := range failed {
		log.Error().Str("ahu", f.AHU).Time("hour", f.Hour).Err(f.Err).Msg("hour failed")
	}
	if storeSrc != nil {
		for _, m := range storeSrc.Missing {
			if readFrom != st {
				log.Warn().Str("point", m).Msg("point not found in the exports")
				continue
			}
			log.Warn().Str("point", m).Msg("point has no data in the store; run dewline import")
		}
	}
	if recSrc != nil {
		importer.LogInputs(log, files.Readers(), recSrc.RowUnits, recSrc.Unmatched, &recSrc.Duplicates)
	}
	if runErr != nil {
		return runErr
	}
	if hours == 0 {
		return fmt.Errorf("no hours to analyse: the inputs hold no data for the configured points in the period")
	}
	if outFile != nil {
		if _, err := outFile.Commit(); err != nil {
			return err
		}
	}
	log.Info().Int("hours", hours).Dur("took_ms", time.Since(start)).Int("failed", len(failed)).Msg("analysis done")
	return agent.WriteSummaries(e.stdout, cfg, ahus, sums)
}

// storedSpan is the span of the stored samples of the air handlers'
// points, in whole hours: analyze's period when none is given.
func storedSpan(ctx context.Context, st *stores, ahus []string, points map[string]ingest.AirHandlerPoints) (from, to time.Time, err error) {
	sp, ok := st.Store.(store.SampleSpanner)
	if !ok {
		return time.Time{}, time.Time{}, usagef("give --from and --to: %s cannot tell the span of its samples", st.Describe())
	}
	var refs []metrics.PointRef
	for _, id := range ahus {
		for _, ref := range points[id].Points {
			refs = append(refs, ref)
		}
	}
	from, to, ok, err = store.Span(ctx, sp, refs)
	if err == nil && !ok {
		err = fmt.Errorf("%s holds no samples of the points configured for %s: load exports with \"dewline import\", or give --from and --to", st.Describe(), strings.Join(ahus, ", "))
	}
	return from, to, err
}
