package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"path/filepath"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"

	"github.com/dewline/dewline/agent/webhook"
)

// stores is the configured store, opened.
type stores struct{ store.Store }

// openStore opens the configured store: the one place that chooses a
// backend. readOnly opens the embedded file without writing (it must
// exist).
func openStore(ctx context.Context, cfg *config.Config, readOnly bool, log zerolog.Logger) (*stores, error) {
	payload := func(t metrics.Transition) (json.RawMessage, error) {
		return webhook.AlertPayload(t, cfg.Prices.Currency)
	}
	switch cfg.Store.Kind {
	case "influxdb":
		ic := cfg.Store.InfluxDB
		tok, err := ic.Token()
		if err != nil {
			return nil, err
		}
		c, err := influx.New(influx.Options{URL: ic.URL, Org: ic.Org, Bucket: ic.Bucket, Token: tok, Timeout: ic.Timeout})
		if err != nil {
			return nil, err
		}
		log.Debug().Str("store", "influxdb").Str("url", c.Options().String()).Msg("store opened")
		// The webhook queue stays in a local file beside the configuration.
		queue := func(ctx context.Context) (store.EventQueue, error) {
			return embedded.OpenQueue(ctx, cfg.StatePath(), payload)
		}
		return &stores{influx.NewBackend(c, influx.BackendOptions{Site: cfg.Site.ID, Queue: queue})}, nil
	default:
		s, err := embedded.Open(ctx, cfg.StorePath(), embedded.Options{ReadOnly: readOnly, DayZone: cfg.Location, Site: cfg.Site.ID})
		if err != nil {
			return nil, fmt.Errorf("open the embedded store: %w", err)
		}
		log.Debug().Str("store", "embedded").Str("path", s.Path()).Msg("store opened")
		if s.Immutable() {
			log.Warn().Str("path", s.Path()).Msg("the store's folder is read-only: its results are read as they are now; restart to show later ones")
		}
		return &stores{embedded.NewBackend(s, payload)}, nil
	}
}

// openScratchStore opens a new embedded store in dir, for the analysis
// of exports that must be imported first (see importExports).
func openScratchStore(ctx context.Context, cfg *config.Config, dir string, log zerolog.Logger) (*stores, error) {
	c := *cfg
	c.Store = config.Store{Kind: "embedded", Path: filepath.Join(dir, "exports.db")}
	return openStore(ctx, &c, false, log)
}

// dryRun wraps a result store so that a run prints what it would write, as
// InfluxDB line protocol, and writes nothing; for an InfluxDB store it
// refuses what the write would.
func dryRun(inner store.ResultStore, w io.Writer, cfg *config.Config) store.ResultStore {
	return &influx.DryRun{Inner: inner, W: w, Site: cfg.Site.ID, Check: cfg.Store.Kind == "influxdb"}
}

// Close closes the store.
func (s *stores) Close() { _ = s.Store.Close() }

// results is the store's read side for the dashboard, the report and the
// comparison.
func (s *stores) results(now func() time.Time) dashboards.Results { return s.Results(now) }
