package embedded

import (
	"context"
	"errors"
	"path/filepath"
	"sort"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Backend is the embedded store as a store.Store: everything, results,
// alerts, the webhook queue and checkpoints included, lives in its file.
type Backend struct {
	s       *Store
	payload store.PayloadFunc
}

var (
	_ store.Store             = (*Backend)(nil)
	_ store.ImportLogger      = (*Backend)(nil)
	_ store.BatchSampleWriter = (*Backend)(nil)
	_ store.AgentStore        = (*agentStore)(nil)
	_ store.EventQueue        = (*agentStore)(nil)
)

// NewBackend serves s as a store.Store; payload builds the webhook body
// of the alert events it queues. Closing the backend closes s.
func NewBackend(s *Store, payload store.PayloadFunc) *Backend {
	return &Backend{s: s, payload: payload}
}

// Store is the embedded store itself.
func (b *Backend) Store() *Store { return b.s }

// ReadSeries reads a series as imported; the store keeps SI values.
func (b *Backend) ReadSeries(ctx context.Context, ref metrics.PointRef, _ psychro.Kind, from, to time.Time, fn func(ingest.Sample) error) error {
	return b.s.ReadSeries(ctx, ref, from, to, fn)
}

// IsMissing reports a series that was never imported.
// SampleSpan implements store.SampleSpanner.
func (b *Backend) SampleSpan(ctx context.Context, ref metrics.PointRef) (time.Time, time.Time, bool, error) {
	return b.s.SampleSpan(ctx, ref)
}

func (b *Backend) IsMissing(err error) bool { return errors.Is(err, ErrUnknownSeries) }

// WriteSamples stores samples (SI) under the series name, with the unit
// the export logged them in.
func (b *Backend) WriteSamples(ctx context.Context, series string, t ingest.PointTarget, samples []ingest.Sample) error {
	_, err := b.s.WriteSamples(ctx, series, t.Kind.String(), psychro.SIUnitName(t.Kind), t.Unit.Name, samples)
	return err
}

// WriteSampleBatch stores several series' samples (SI) in one transaction.
func (b *Backend) WriteSampleBatch(ctx context.Context, batch []store.SeriesSamples) error {
	ss := make([]SeriesSamples, len(batch))
	for i, x := range batch {
		ss[i] = SeriesSamples{Name: x.Series, Kind: x.Target.Kind.String(), UnitSI: psychro.SIUnitName(x.Target.Kind),
			SourceUnit: x.Target.Unit.Name, Samples: x.Samples}
	}
	_, err := b.s.WriteBatch(ctx, ss)
	return err
}

// RecordImport logs an imported file.
func (b *Backend) RecordImport(ctx context.Context, l store.ImportLog) error {
	return b.s.RecordImport(ctx, ImportLog{File: l.File, SHA256: l.SHA256, RowsRead: l.RowsRead, Accepted: l.Accepted,
		Rejected: l.Rejected, Started: l.Started, Finished: l.Finished})
}

// PutResults writes records, alerts and their webhook events in one
// transaction (the same records the agent writes): a failure leaves no
// hour stored without its alerts.
func (b *Backend) PutResults(ctx context.Context, recs []metrics.Record, tr []metrics.Transition, open []metrics.Alert) error {
	if len(recs) == 0 && len(tr) == 0 && len(open) == 0 {
		return nil
	}
	rows := make([]HourRow, 0, len(recs))
	for i := range recs {
		rows = append(rows, hourRow(&recs[i]))
	}
	alerts := make([]AlertRow, 0, len(tr))
	events := make([]AlertEvent, 0, len(tr))
	for _, t := range tr {
		row, ev, err := alertRecords(t, b.payload)
		if err != nil {
			return err
		}
		alerts, events = append(alerts, row), append(events, ev)
	}
	// The open alerts' running totals replace the figures of the hour
	// they opened.
	for _, a := range open {
		if a.Status == metrics.StatusOpen {
			alerts = append(alerts, openRow(a))
		}
	}
	return b.s.PutResults(ctx, rows, alerts, events)
}

// openRow is an open alert's row with its running totals.
func openRow(a metrics.Alert) AlertRow {
	return AlertRow{ID: a.ID, AHU: a.AHU, Kind: a.Kind, Severity: string(a.Severity),
		State: string(a.Status), Start: a.Start, EnergyKWh: a.EnergyKWh, Cost: a.Money, Reason: a.Told()}
}

// Results is the dashboard's read side of the file.
func (b *Backend) Results(func() time.Time) dashboards.Results { return results{b.s} }

// Agent returns the agent's results in the same file; closing them leaves
// the backend open.
func (b *Backend) Agent(context.Context) (store.AgentStore, error) {
	return &agentStore{s: b.s, payload: b.payload}, nil
}

// Ping reports whether the file still answers: where it was opened, with
// this binary's schema (Store.Check).
func (b *Backend) Ping(ctx context.Context) error { return b.s.Check(ctx) }

// IsOutage takes every error as the store's: the file holds no point of
// its own that could fail alone.
func (b *Backend) IsOutage(error) bool { return true }

// Describe names the file.
func (b *Backend) Describe() string { return "the embedded store " + filepath.Base(b.s.Path()) }

// Close closes the file.
func (b *Backend) Close() error { return b.s.Close() }

// OpenQueue opens (creating it if needed) a state file that keeps only
// alerts and the webhook's event queue, for a store that keeps its results
// elsewhere.
func OpenQueue(ctx context.Context, path string, payload store.PayloadFunc) (store.EventQueue, error) {
	s, err := Open(ctx, path, Options{})
	if err != nil {
		return nil, err
	}
	return &agentStore{s: s, payload: payload, owns: true}, nil
}

// agentStore is the agent's store.AgentStore in one file: one transaction
// commits an air handler's hours, alerts, events, states and checkpoint.
type agentStore struct {
	s       *Store
	payload store.PayloadFunc
	owns    bool // Close closes s
}

func (a *agentStore) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	return a.s.Checkpoint(ctx, ahu)
}

func (a *agentStore) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	raw, err := a.s.AlertStates(ctx, ahu)
	if err != nil {
		return nil, err
	}
	return store.DecodeStates(ahu, raw)
}

// Commit writes the hours, alerts, events, rule states and checkpoint in
// one transaction.
func (a *agentStore) Commit(ctx context.Context, ahu string, recs []metrics.Record, up store.AlertUpdate, through time.Time) error {
	states, err := store.EncodeStates(up.States)
	if err != nil {
		return err
	}
	c := Commit{AHU: ahu, Through: through, States: states}
	for i := range recs {
		c.Rows = append(c.Rows, hourRow(&recs[i]))
	}
	if err := addAlerts(&c, up, a.payload); err != nil {
		return err
	}
	return a.s.Commit(ctx, c)
}

// Queue keeps only ahu's alerts and their events; the results and the
// checkpoint are kept elsewhere.
func (a *agentStore) Queue(ctx context.Context, ahu string, up store.AlertUpdate) error {
	c := Commit{AHU: ahu}
	if err := addAlerts(&c, up, a.payload); err != nil {
		return err
	}
	return a.s.Commit(ctx, c)
}

func (a *agentStore) PendingEvents(ctx context.Context, limit int) ([]store.Event, error) {
	evs, err := a.s.PendingAlertEvents(ctx, limit)
	if err != nil {
		return nil, err
	}
	out := make([]store.Event, 0, len(evs))
	for _, e := range evs {
		out = append(out, store.Event{Seq: e.Seq, AlertID: e.AlertID, Transition: e.Transition, At: e.At, Payload: e.Payload})
	}
	return out, nil
}

func (a *agentStore) MarkDelivered(ctx context.Context, seq int64, at time.Time) error {
	return a.s.MarkDelivered(ctx, seq, at)
}

func (a *agentStore) Close() error {
	if a.owns {
		return a.s.Close()
	}
	return nil
}

// addAlerts adds a run's transitions (alert rows and events) and its open
// and closed alerts to c.
func addAlerts(c *Commit, up store.AlertUpdate, payload store.PayloadFunc) error {
	for _, t := range up.Transitions {
		row, ev, err := alertRecords(t, payload)
		if err != nil {
			return err
		}
		c.Alerts = append(c.Alerts, row)
		if t.At.Before(up.QueueFrom) {
			continue // too old to notify: recorded, not queued
		}
		c.Events = append(c.Events, ev)
	}
	// While-open updates: an event each, after the transitions (the
	// sender delivers in queue order); the alert's row comes from States.
	for _, t := range up.Updates {
		if !t.IsUpdate() || t.At.Before(up.QueueFrom) {
			continue
		}
		body, err := payload(t)
		if err != nil {
			return err
		}
		c.Events = append(c.Events, AlertEvent{AlertID: t.Alert.ID, Transition: store.EventName(t), At: t.At, Payload: body})
	}
	// Pending alerts are kept in the alerts table too, for dashboards.
	kinds := make([]string, 0, len(up.States))
	for k := range up.States {
		kinds = append(kinds, k)
	}
	sort.Strings(kinds)
	for _, k := range kinds {
		a := up.States[k]
		if a.Status == metrics.StatusPending {
			continue // shown once it opens
		}
		c.Alerts = append(c.Alerts, openRow(a))
	}
	return nil
}

// alertRecords is a transition as the store keeps it: the alert's row and
// the event queued for the webhook, with its JSON body.
func alertRecords(t metrics.Transition, payload store.PayloadFunc) (AlertRow, AlertEvent, error) {
	a := t.Alert
	row := AlertRow{ID: a.ID, AHU: a.AHU, Kind: a.Kind, Severity: string(a.Severity),
		State: string(t.To), Start: a.Start, End: a.End, EnergyKWh: a.EnergyKWh, Cost: a.Money, Reason: a.Told()}
	body, err := payload(t)
	if err != nil {
		return row, AlertEvent{}, err
	}
	return row, AlertEvent{AlertID: a.ID, Transition: store.EventName(t), At: t.At, Payload: body}, nil
}

func hourRow(r *metrics.Record) HourRow {
	f := map[string]float64{}
	for _, x := range r.Fields() {
		f[x.Name] = x.Value
	}
	return HourRow{AHU: r.AHU, Hour: r.HourStart, Schema: metrics.RecordSchema, Fields: f, Flags: r.Flags}
}

// results reads results from the file for the dashboard.
type results struct{ st *Store }

func (e results) Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	return e.st.ReadRecords(ctx, ahu, from, to, fn)
}

func (e results) Days(ctx context.Context, from, to time.Time, fn func(dashboards.DaySums) error) (bool, error) {
	return e.st.ReadDays(ctx, from, to, func(d DayRow) error {
		return fn(dashboards.DaySums{AHU: d.AHU, Day: d.Day, Hours: d.Hours, Flagged: d.Flagged, Sums: d.Sums, NoCoolingInput: d.NoCoolingInput})
	})
}

func (e results) Span(ctx context.Context) (time.Time, time.Time, bool, error) {
	return e.st.HourSpan(ctx)
}

func (e results) Alerts(ctx context.Context, q dashboards.AlertQuery) ([]dashboards.Alert, error) {
	rows, err := e.st.ListAlerts(ctx, AlertFilter{AHU: q.AHU, State: q.State})
	if err != nil {
		return nil, err
	}
	var out []dashboards.Alert
	for _, r := range rows {
		a := dashboards.Alert{ID: r.ID, AHU: r.AHU, Kind: r.Kind, Severity: r.Severity, State: r.State,
			Start: r.Start, End: r.End, EnergyKWh: r.EnergyKWh, Money: r.Cost, Reason: r.Reason}
		if (q.Kind == "" || a.Kind == q.Kind) && a.Overlaps(q.From, q.To) {
			out = append(out, a)
		}
	}
	return out, nil
}

var _ store.SampleSpanner = (*Backend)(nil)
