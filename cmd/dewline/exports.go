package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/importer"
)

// scanExports reads each regular file of inputs once, before an analysis
// streams them: the span of their records of the configured points (the
// default period starts at the earliest, not at the first row) and the
// first record out of order, which streaming would refuse. A pipe cannot
// be read twice; RecordHours checks its order as it streams.
func scanExports(ctx context.Context, inputs []string, cfg *config.Config, ix ingest.PointIndex) (ingest.Order, error) {
	var all ingest.Order
	for _, path := range inputs {
		if fi, err := os.Stat(path); err != nil || !fi.Mode().IsRegular() {
			continue // OpenFiles reports what is wrong with it
		}
		f, err := csvfile.OpenFiles([]string{path}, cfg.CSVOptions())
		if err != nil {
			return all, err
		}
		o, err := ingest.ScanOrder(ctx, f, ix)
		f.Close()
		if err != nil {
			return all, err
		}
		if all.OutOfOrder == nil {
			all.OutOfOrder = o.OutOfOrder
		}
		if !o.First.IsZero() && (all.First.IsZero() || o.First.Before(all.First)) {
			all.First = o.First
		}
		if o.Last.After(all.Last) {
			all.Last = o.Last
		}
	}
	return all, nil
}

// importExports imports inputs into a new embedded store in dir, for an
// analysis of exports that are not in time order: the import takes rows in
// any order, as "dewline import" does. What each file held is reported as
// the import command reports it, to w.
func importExports(ctx context.Context, inputs []string, cfg *config.Config, cfgPath, dir string, ix ingest.PointIndex, w io.Writer, log zerolog.Logger) (*stores, error) {
	st, err := openScratchStore(ctx, cfg, dir, log)
	if err != nil {
		return nil, err
	}
	for _, path := range inputs {
		prog := telemetry.NewProgress("importing "+path, log)
		s, err := importer.File(ctx, path, importer.Options{Config: cfg, ConfigPath: cfgPath, Store: st.Store, Index: ix,
			MaxBytes: 1 << 62, Log: log, Progress: prog.Update})
		s.Write(w)
		if ne := (*importer.NothingWrittenError)(nil); errors.As(err, &ne) {
			continue // nothing of the configured points, as a stream would find
		}
		if err != nil {
			st.Close()
			return nil, fmt.Errorf("import %s into a temporary store: %w", path, err)
		}
	}
	return st, nil
}
