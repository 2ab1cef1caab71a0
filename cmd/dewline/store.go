package main

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Measurement names dewline writes to InfluxDB (documented in the README).
const (
	measurementHourly = "dewline_hourly"
	measurementAlert  = "dewline_alert"
)

// stores is the configured store, opened: the embedded file or InfluxDB.
type stores struct {
	kind string
	emb  *embedded.Store
	flux *influx.Client
}

// openStore opens the configured store. readOnly opens the embedded file
// without writing (it must exist).
func openStore(ctx context.Context, cfg *agent.Config, readOnly bool, log zerolog.Logger) (*stores, error) {
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
		return &stores{kind: "influxdb", flux: c}, nil
	default:
		s, err := embedded.Open(ctx, cfg.StorePath(), embedded.Options{ReadOnly: readOnly, DayZone: cfg.Location})
		if err != nil {
			return nil, fmt.Errorf("open the embedded store: %w", err)
		}
		log.Debug().Str("store", "embedded").Str("path", s.Path()).Msg("store opened")
		return &stores{kind: "embedded", emb: s}, nil
	}
}

func (s *stores) Close() {
	if s.emb != nil {
		_ = s.emb.Close()
	}
	if s.flux != nil {
		s.flux.Close()
	}
}

// reader returns the store as a series reader and the test for "point has no data".
func (s *stores) reader() (ingest.SeriesReader, func(error) bool) {
	if s.flux != nil {
		return s.flux, func(err error) bool { return errors.Is(err, influx.ErrNoSuchPoint) }
	}
	return embeddedReader{s.emb}, func(err error) bool { return errors.Is(err, embedded.ErrUnknownSeries) }
}

// embeddedReader adapts the embedded store, which keeps SI values, to ingest.SeriesReader.
type embeddedReader struct{ s *embedded.Store }

func (r embeddedReader) ReadSeries(ctx context.Context, ref metrics.PointRef, _ psychro.Kind, from, to time.Time, fn func(ingest.Sample) error) error {
	return r.s.ReadSeries(ctx, ref, from, to, fn)
}

func hourRow(r *metrics.Record) embedded.HourRow {
	f := map[string]float64{}
	for _, x := range r.Fields() {
		f[x.Name] = x.Value
	}
	return embedded.HourRow{AHU: r.AHU, Hour: r.HourStart, Schema: metrics.RecordSchema, Fields: f, Flags: r.Flags}
}

// putResults writes hourly records and the alert transitions computed
// from them together: in InfluxDB as one batch of dewline_hourly and
// dewline_alert points, in the embedded store in one transaction with the
// alerts and webhook events (the same records the agent writes). A
// failure leaves no hour stored without its alerts.
func (s *stores) putResults(ctx context.Context, recs []metrics.Record, tr []metrics.Transition, currency string) error {
	if len(recs) == 0 && len(tr) == 0 {
		return nil
	}
	if s.flux != nil {
		return s.flux.WritePoints(ctx, append(hourlyPoints(recs), alertPoints(tr)...))
	}
	rows := make([]embedded.HourRow, 0, len(recs))
	for i := range recs {
		rows = append(rows, hourRow(&recs[i]))
	}
	var alerts []embedded.AlertRow
	var events []embedded.AlertEvent
	for _, t := range tr {
		row, ev, err := alertRecords(t, currency)
		if err != nil {
			return err
		}
		alerts, events = append(alerts, row), append(events, ev)
	}
	return s.emb.PutResults(ctx, rows, alerts, events)
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
