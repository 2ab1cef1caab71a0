package influx

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"maps"
	"math"
	"slices"
	"strings"
	"time"

	"github.com/influxdata/influxdb-client-go/v2/api/write"

	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// Measurement names dewline writes to InfluxDB (documented in the README).
const (
	MeasurementHourly = "dewline_hourly"
	MeasurementAlert  = "dewline_alert"
)

// State measurements in InfluxDB (points at StateTime, replaced on
// every commit): checkpoints (string field "hour", RFC 3339) and alert
// rule states (string field "state", JSON; empty when inactive), tagged
// site and ahu (and kind).
const (
	MeasurementCheckpoint = "dewline_checkpoint"
	MeasurementAlertState = "dewline_alert_state"
)

// agentStore is the agent's store.AgentStore on InfluxDB.
//
// Results, alert rule states and checkpoints live in InfluxDB, so any
// replica can take over an air handler (a reshard) and continue where the
// last one stopped; they are written in one batch with the checkpoint
// last. The webhook queue stays in a local file (the state file beside the
// configuration): delivering an event does not depend on who owns its air
// handler.
type agentStore struct {
	c     *Client
	site  string
	queue store.EventQueue
}

var (
	_ store.AgentStore     = (*agentStore)(nil)
	_ store.StateLoader    = (*agentStore)(nil)
	_ store.BatchCommitter = (*agentStore)(nil)
)

// SiteTag is the value of the site tag of every point dewline writes for
// a site (results, alert transitions, checkpoints, alert rule states): its
// id, or "default" for a site without one.
func SiteTag(site string) string {
	if site == "" {
		return "default"
	}
	return site
}

func (rs *agentStore) siteTag() string { return SiteTag(rs.site) }

func (rs *agentStore) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	var cp time.Time
	var ok bool
	err := rs.c.ReadState(ctx, MeasurementCheckpoint, map[string]string{"site": rs.siteTag(), "ahu": ahu}, "", func(_, field, v string) error {
		if field != "hour" {
			return nil
		}
		t, err := time.Parse(time.RFC3339, v)
		if err != nil {
			return fmt.Errorf("checkpoint of %s: %q is not a time", ahu, v)
		}
		cp, ok = t.UTC(), true
		return nil
	})
	return cp, ok, err
}

func (rs *agentStore) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	raw := map[string]json.RawMessage{}
	err := rs.c.ReadState(ctx, MeasurementAlertState, map[string]string{"site": rs.siteTag(), "ahu": ahu}, "kind", func(kind, field, v string) error {
		if field == "state" && v != "" {
			raw[kind] = json.RawMessage(v)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return store.DecodeStates(ahu, raw)
}

// LoadStates reads the checkpoints and alert rule states of ahus in one
// query.
func (rs *agentStore) LoadStates(ctx context.Context, ahus []string) (map[string]store.AHUState, error) {
	if len(ahus) == 0 {
		return map[string]store.AHUState{}, nil
	}
	want := make(map[string]bool, len(ahus))
	for _, a := range ahus {
		want[a] = true
	}
	out := map[string]store.AHUState{}
	raw := map[string]map[string]json.RawMessage{}
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: %s)\n  |> range(start: %s, stop: %s)\n", fluxString(rs.c.opt.Bucket),
		fluxTime(StateTime), fluxTime(StateTime.Add(time.Second)))
	// The air handlers as a set of tag values (one regular expression, as
	// ReadBatch selects them): a shard reads its own states only.
	fmt.Fprintf(&b, "  |> filter(fn: (r) => (r._measurement == %s and r._field == \"hour\" or r._measurement == %s and r._field == \"state\") and %s == %s and %s)\n",
		fluxString(MeasurementCheckpoint), fluxString(MeasurementAlertState), fluxColumn("site"), fluxString(rs.siteTag()), fluxOneOf("ahu", slices.Compact(slices.Sorted(maps.Keys(want)))))
	b.WriteString("  |> last()\n")
	err := rs.c.run(ctx, b.String(), func() { clear(out); clear(raw) }, func(f *fluxCSV) (bool, error) {
		ahu := f.get("ahu")
		if !want[ahu] {
			return false, nil
		}
		v := f.get(colValue)
		switch f.get(colMeasurement) {
		case MeasurementCheckpoint:
			t, err := time.Parse(time.RFC3339, v)
			if err != nil {
				return false, fmt.Errorf("checkpoint of %s: %q is not a time", ahu, v)
			}
			st := out[ahu]
			st.Checkpoint, st.HasCheckpoint = t.UTC(), true
			out[ahu] = st
		case MeasurementAlertState:
			if v == "" {
				return false, nil
			}
			if raw[ahu] == nil {
				raw[ahu] = map[string]json.RawMessage{}
			}
			raw[ahu][f.get("kind")] = json.RawMessage(v)
		}
		return false, nil
	})
	if err != nil {
		return nil, fmt.Errorf("read checkpoints and alert states: %w", err)
	}
	for ahu, r := range raw {
		states, err := store.DecodeStates(ahu, r)
		if err != nil {
			return nil, err
		}
		st := out[ahu]
		st.Alerts = states
		out[ahu] = st
	}
	return out, nil
}

// Commit writes the hours and alerts; the results are written to InfluxDB
// first, confirmed, and only then are the alerts and their events queued
// in the local file.
func (rs *agentStore) Commit(ctx context.Context, ahu string, recs []metrics.Record, up store.AlertUpdate, through time.Time) error {
	return rs.CommitBatch(ctx, []store.CommitItem{{AHU: ahu, Records: recs, Alerts: up, Through: through}})
}

// CommitBatch writes every item's hours, alerts and rule states, then
// every checkpoint, in requests of Options.BatchSize points; once InfluxDB
// has them all, each item's alerts and events are queued in the local
// file (an item with neither transitions nor open alerts has nothing to
// queue).
func (rs *agentStore) CommitBatch(ctx context.Context, items []store.CommitItem) error {
	var pts, cps []Point
	for _, it := range items {
		states, err := store.EncodeStates(it.Alerts.States)
		if err != nil {
			return err
		}
		pts = append(pts, HourlyPoints(rs.site, it.Records)...)
		pts = append(pts, AlertPoints(rs.site, it.Alerts.Transitions)...)
		pts = append(pts, OpenAlertPoints(rs.site, slices.Collect(maps.Values(it.Alerts.States)))...)
		// Every rule's state is written, empty when inactive, so a closed
		// alert's old state is replaced; the checkpoints come last.
		for _, rule := range metrics.Rules() {
			pts = append(pts, Point{Measurement: MeasurementAlertState,
				Tags:    map[string]string{"site": rs.siteTag(), "ahu": it.AHU, "kind": rule.Kind},
				Strings: map[string]string{"state": string(states[rule.Kind])}, Time: StateTime})
		}
		cps = append(cps, Point{Measurement: MeasurementCheckpoint, Tags: map[string]string{"site": rs.siteTag(), "ahu": it.AHU},
			Strings: map[string]string{"hour": it.Through.UTC().Format(time.RFC3339)}, Time: StateTime})
	}
	if err := rs.c.WritePoints(ctx, append(pts, cps...)); err != nil {
		return fmt.Errorf("write results to InfluxDB: %w", err)
	}
	// The local file keeps only the webhook queue (and the alerts its
	// events refer to).
	for _, it := range items {
		if !queues(it.Alerts) {
			continue
		}
		if err := rs.queue.Queue(ctx, it.AHU, it.Alerts); err != nil {
			return err
		}
	}
	return nil
}

// queues reports whether up has anything for the local queue: a
// transition, or an alert that is not merely pending.
func queues(up store.AlertUpdate) bool {
	if len(up.Transitions) > 0 {
		return true
	}
	for _, a := range up.States {
		if a.Status != metrics.StatusPending {
			return true
		}
	}
	return false
}

func (rs *agentStore) PendingEvents(ctx context.Context, limit int) ([]store.Event, error) {
	return rs.queue.PendingEvents(ctx, limit)
}

func (rs *agentStore) MarkDelivered(ctx context.Context, seq int64, at time.Time) error {
	return rs.queue.MarkDelivered(ctx, seq, at)
}

func (rs *agentStore) Close() error { return rs.queue.Close() }

// HourlyPoints are site's records as dewline_hourly points, tagged site
// (SiteTag) and ahu: two sites' air handlers of the same id are two series.
func HourlyPoints(site string, recs []metrics.Record) []Point {
	pts := make([]Point, 0, len(recs))
	for _, r := range recs {
		f := map[string]float64{}
		var missing []string
		for _, x := range r.Fields() {
			if isBad(x.Value) {
				missing = append(missing, x.Name)
			} else {
				f[x.Name] = x.Value
			}
		}
		// InfluxDB merges the fields of a re-written point with the old
		// ones, and cannot store NaN: the fields with no value this time are
		// listed in "missing", and "flags" is always written, so a re-written
		// hour never keeps a stale value unmarked.
		p := Point{Measurement: MeasurementHourly, Tags: map[string]string{"site": SiteTag(site), "ahu": r.AHU}, Fields: f, Time: r.HourStart,
			Strings: map[string]string{"flags": strings.Join(r.Flags, " "), "missing": strings.Join(missing, " ")}}
		pts = append(pts, p)
	}
	return pts
}

// AlertPoints are site's alert transitions as dewline_alert points, tagged
// site (SiteTag), ahu, kind, severity and status. While-open updates are
// not transitions and write no point (the open transition point carries
// the running totals, OpenAlertPoints).
func AlertPoints(site string, tr []metrics.Transition) []Point {
	pts := make([]Point, 0, len(tr))
	for _, t := range tr {
		if t.IsUpdate() {
			continue
		}
		a := t.Alert
		pts = append(pts, Point{Measurement: MeasurementAlert,
			Tags:    map[string]string{"site": SiteTag(site), "ahu": a.AHU, "kind": a.Kind, "severity": string(a.Severity), "status": string(t.To)},
			Fields:  map[string]float64{"energy_kwh": a.EnergyKWh, "money": a.Money, "open": b2f(t.To == metrics.StatusOpen)},
			Strings: alertStrings(a),
			Time:    t.At})
	}
	return pts
}

// OpenAlertPoints are the open alerts' current states as dewline_alert
// points: each replaces its alert's open transition point (same series and
// time, the hour it opened) with the running totals and the latest reason,
// so a transition stays one point, re-writing it is idempotent, and the
// read side's figures grow with every hour the alert stays open. A state
// kept before the opening hour was recorded (Opened zero) is written at the
// end of the last hour evaluated instead.
func OpenAlertPoints(site string, open []metrics.Alert) []Point {
	var tr []metrics.Transition
	for _, a := range open {
		if a.Status != metrics.StatusOpen {
			continue
		}
		at := a.Opened
		if at.IsZero() {
			at = a.LastSeen.Add(time.Hour)
		}
		tr = append(tr, metrics.Transition{From: metrics.StatusPending, To: metrics.StatusOpen, Alert: a, At: at})
	}
	slices.SortFunc(tr, func(x, y metrics.Transition) int { return strings.Compare(x.Alert.ID, y.Alert.ID) })
	return AlertPoints(site, tr)
}

func isBad(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// alertStrings are the string fields of an alert transition point: its
// identity, reason, and start and end (RFC 3339, end empty while ongoing),
// so that the dashboard can rebuild the alert from its last transition.
func alertStrings(a metrics.Alert) map[string]string {
	end := ""
	if !a.End.IsZero() {
		end = a.End.UTC().Format(time.RFC3339)
	}
	return map[string]string{"id": a.ID, "reason": a.Told(), "start": a.Start.UTC().Format(time.RFC3339), "end": end}
}

// LineProtocol is p as the client writes it: InfluxDB line protocol, with
// the protocol's escaping, tags and fields in name order.
func LineProtocol(p Point) string {
	return strings.TrimSuffix(write.PointToLineProtocol(clientPoint(p), time.Nanosecond), "\n")
}

// clientPoint is p as the client's point type.
func clientPoint(p Point) *write.Point {
	wp := write.NewPointWithMeasurement(p.Measurement)
	for _, k := range sortedKeys(p.Tags) {
		wp.AddTag(k, p.Tags[k])
	}
	for _, k := range sortedKeys(p.Fields) {
		wp.AddField(k, p.Fields[k])
	}
	for _, k := range sortedKeys(p.Strings) {
		wp.AddField(k, p.Strings[k])
	}
	return wp.SetTime(p.Time)
}

// DryRun wraps the agent's results: it reads checkpoints and alert states
// from them, prints what a commit would write to InfluxDB as line
// protocol, and writes nothing. With Check (the store is InfluxDB), a
// commit that a write would refuse (a name line protocol cannot carry, a
// value that is not finite) is refused the same way and prints nothing.
type DryRun struct {
	Inner store.ResultStore
	W     io.Writer
	Site  string // the site id the points are tagged with
	Check bool   // refuse what Client.WritePoints would refuse
}

var (
	_ store.ResultStore = (*DryRun)(nil)
	_ store.StateLoader = (*DryRun)(nil)
)

// LoadStates reads the inner store's checkpoints and alert states, at once
// when it can.
func (d *DryRun) LoadStates(ctx context.Context, ahus []string) (map[string]store.AHUState, error) {
	if sl, ok := d.Inner.(store.StateLoader); ok {
		return sl.LoadStates(ctx, ahus)
	}
	out := make(map[string]store.AHUState, len(ahus))
	for _, ahu := range ahus {
		cp, has, err := d.Inner.Checkpoint(ctx, ahu)
		if err != nil {
			return nil, err
		}
		alerts, err := d.Inner.AlertStates(ctx, ahu)
		if err != nil {
			return nil, err
		}
		out[ahu] = store.AHUState{Checkpoint: cp, HasCheckpoint: has, Alerts: alerts}
	}
	return out, nil
}

func (d *DryRun) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	return d.Inner.Checkpoint(ctx, ahu)
}

func (d *DryRun) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	return d.Inner.AlertStates(ctx, ahu)
}

// Commit prints the hourly and alert points and where the checkpoint would move.
func (d *DryRun) Commit(_ context.Context, ahu string, recs []metrics.Record, up store.AlertUpdate, through time.Time) error {
	pts := append(HourlyPoints(d.Site, recs), AlertPoints(d.Site, up.Transitions)...)
	pts = append(pts, OpenAlertPoints(d.Site, slices.Collect(maps.Values(up.States)))...)
	if d.Check {
		for i, p := range pts {
			if err := checkPoint(p); err != nil {
				return fmt.Errorf("%s: point %d (measurement %q at %s) would be refused by InfluxDB: %w", ahu, i, p.Measurement, fluxTime(p.Time), err)
			}
		}
	}
	for _, p := range pts {
		fmt.Fprintln(d.W, LineProtocol(p))
	}
	fmt.Fprintf(d.W, "# %s: checkpoint would move to %s (dry run: nothing written)\n", ahu, through.UTC().Format(time.RFC3339))
	return nil
}
