package main

import (
	"context"
	"errors"
	"fmt"
	"io"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/importer"
)

// importExports imports inputs into a new embedded store in dir, for an
// analysis of exports that are not in time order: the import takes rows in
// any order, as "dewline import" does. What each file held is reported as
// the import command reports it, to w.
func importExports(ctx context.Context, inputs []string, cfg *config.Config, cfgPath, dir string, ix ingest.PointIndex, w io.Writer, log zerolog.Logger) (*stores, error) {
	st, err := openScratchStore(ctx, cfg, dir, log)
	if err != nil {
		return nil, err
	}
	isEmpty := func(err error) bool {
		ne := (*importer.NothingWrittenError)(nil)
		return errors.As(err, &ne) // nothing of the configured points, as a stream would find
	}
	err = importer.Files(ctx, inputs, importer.Options{Config: cfg, ConfigPath: cfgPath, Store: st.Store, Index: ix, MaxBytes: 1 << 62, Log: log},
		func(path string) func(int, int) { return telemetry.NewProgress("importing "+path, log).Update }, w, isEmpty)
	if err != nil {
		st.Close()
		return nil, fmt.Errorf("import the exports into a temporary store: %w", err)
	}
	return st, nil
}
