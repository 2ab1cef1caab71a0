package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/metrics"
)

// resultStore is the agent's agent.ResultStore and agent.EventStore.
//
// With the embedded store everything lives in its file and one transaction
// commits it. With InfluxDB, results, alert rule states and checkpoints
// live in InfluxDB, so any replica can take over an air handler (a
// reshard) and continue where the last one stopped; they are written in
// one batch with the checkpoint last. The webhook queue stays in a local
// file (the state file beside the configuration): delivering an event does
// not depend on who owns its air handler.
type resultStore struct {
	state    *embedded.Store
	flux     *influx.Client
	site     string
	currency string
}

// siteTag is the site tag of state points; a site without an id is "default".
func (rs *resultStore) siteTag() string {
	if rs.site == "" {
		return "default"
	}
	return rs.site
}

// State measurements in InfluxDB (points at influx.StateTime, replaced on
// every commit): checkpoints (string field "hour", RFC 3339) and alert
// rule states (string field "state", JSON; empty when inactive), tagged
// site and ahu (and kind).
const (
	measurementCheckpoint = "dewline_checkpoint"
	measurementAlertState = "dewline_alert_state"
)

var (
	_ agent.ResultStore = (*resultStore)(nil)
	_ agent.EventStore  = (*resultStore)(nil)
)

func (rs *resultStore) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	if rs.flux == nil {
		return rs.state.Checkpoint(ctx, ahu)
	}
	var cp time.Time
	var ok bool
	err := rs.flux.ReadState(ctx, measurementCheckpoint, map[string]string{"site": rs.siteTag(), "ahu": ahu}, "", func(_, field, v string) error {
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

func (rs *resultStore) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	var raw map[string]json.RawMessage
	var err error
	if rs.flux == nil {
		raw, err = rs.state.AlertStates(ctx, ahu)
	} else {
		raw = map[string]json.RawMessage{}
		err = rs.flux.ReadState(ctx, measurementAlertState, map[string]string{"site": rs.siteTag(), "ahu": ahu}, "kind", func(kind, field, v string) error {
			if field == "state" && v != "" {
				raw[kind] = json.RawMessage(v)
			}
			return nil
		})
	}
	if err != nil {
		return nil, err
	}
	out := make(map[string]metrics.Alert, len(raw))
	for kind, b := range raw {
		var a metrics.Alert
		if err := json.Unmarshal(b, &a); err != nil {
			return nil, fmt.Errorf("read alert state %s of %s: %w", kind, ahu, err)
		}
		out[kind] = a
	}
	return out, nil
}

// Commit writes the hours and alerts; with InfluxDB the results are written
// there first, confirmed, and only then is the local state (and so the
// checkpoint) committed.
func (rs *resultStore) Commit(ctx context.Context, ahu string, recs []metrics.Record, up agent.AlertUpdate, through time.Time) error {
	states := map[string]json.RawMessage{}
	for kind, a := range up.States {
		b, err := json.Marshal(a)
		if err != nil {
			return err
		}
		states[kind] = b
	}
	c := embedded.Commit{AHU: ahu, Through: through, States: states}
	if rs.flux != nil {
		pts := hourlyPoints(recs)
		pts = append(pts, alertPoints(up.Transitions)...)
		// Every rule's state is written, empty when inactive, so a closed
		// alert's old state is replaced; the checkpoint comes last.
		for _, rule := range metrics.Rules() {
			pts = append(pts, influx.Point{Measurement: measurementAlertState,
				Tags:    map[string]string{"site": rs.siteTag(), "ahu": ahu, "kind": rule.Kind},
				Strings: map[string]string{"state": string(states[rule.Kind])}, Time: influx.StateTime})
		}
		pts = append(pts, influx.Point{Measurement: measurementCheckpoint, Tags: map[string]string{"site": rs.siteTag(), "ahu": ahu},
			Strings: map[string]string{"hour": through.UTC().Format(time.RFC3339)}, Time: influx.StateTime})
		if err := rs.flux.WritePoints(ctx, pts); err != nil {
			return fmt.Errorf("write results to InfluxDB: %w", err)
		}
		// The local file keeps only the webhook queue (and the alerts its
		// events refer to).
		c = embedded.Commit{AHU: ahu}
	} else {
		for i := range recs {
			c.Rows = append(c.Rows, hourRow(&recs[i]))
		}
	}
	for _, t := range up.Transitions {
		row, ev, err := alertRecords(t, rs.currency)
		if err != nil {
			return err
		}
		c.Alerts = append(c.Alerts, row)
		c.Events = append(c.Events, ev)
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
		c.Alerts = append(c.Alerts, embedded.AlertRow{ID: a.ID, AHU: a.AHU, Kind: a.Kind, Severity: string(a.Severity),
			State: string(a.Status), Start: a.Start, EnergyKWh: a.EnergyKWh, Cost: a.Money, Reason: a.Reason})
	}
	return rs.state.Commit(ctx, c)
}

// alertRecords is a transition as the embedded store keeps it: the alert's
// row and the event queued for the webhook, with its JSON body.
func alertRecords(t metrics.Transition, currency string) (embedded.AlertRow, embedded.AlertEvent, error) {
	a := t.Alert
	row := embedded.AlertRow{ID: a.ID, AHU: a.AHU, Kind: a.Kind, Severity: string(a.Severity),
		State: string(t.To), Start: a.Start, End: a.End, EnergyKWh: a.EnergyKWh, Cost: a.Money, Reason: a.Reason}
	payload, err := agent.AlertPayload(t, currency)
	if err != nil {
		return row, embedded.AlertEvent{}, err
	}
	return row, embedded.AlertEvent{AlertID: a.ID, Transition: transitionName(t.To), At: t.At, Payload: payload}, nil
}

func transitionName(s metrics.Status) string {
	if s == metrics.StatusOpen {
		return agent.TransitionOpen
	}
	return agent.TransitionClosed
}

func (rs *resultStore) PendingEvents(ctx context.Context, limit int) ([]agent.Event, error) {
	evs, err := rs.state.PendingAlertEvents(ctx, limit)
	if err != nil {
		return nil, err
	}
	out := make([]agent.Event, 0, len(evs))
	for _, e := range evs {
		out = append(out, agent.Event{Seq: e.Seq, AlertID: e.AlertID, Transition: e.Transition, At: e.At, Payload: e.Payload})
	}
	return out, nil
}

func (rs *resultStore) MarkDelivered(ctx context.Context, seq int64, at time.Time) error {
	return rs.state.MarkDelivered(ctx, seq, at)
}

func hourlyPoints(recs []metrics.Record) []influx.Point {
	pts := make([]influx.Point, 0, len(recs))
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
		p := influx.Point{Measurement: measurementHourly, Tags: map[string]string{"ahu": r.AHU}, Fields: f, Time: r.HourStart,
			Strings: map[string]string{"flags": strings.Join(r.Flags, " "), "missing": strings.Join(missing, " ")}}
		pts = append(pts, p)
	}
	return pts
}

func alertPoints(tr []metrics.Transition) []influx.Point {
	pts := make([]influx.Point, 0, len(tr))
	for _, t := range tr {
		a := t.Alert
		pts = append(pts, influx.Point{Measurement: measurementAlert,
			Tags:    map[string]string{"ahu": a.AHU, "kind": a.Kind, "severity": string(a.Severity), "status": string(t.To)},
			Fields:  map[string]float64{"energy_kwh": a.EnergyKWh, "money": a.Money, "open": b2f(t.To == metrics.StatusOpen)},
			Strings: alertStrings(a),
			Time:    t.At})
	}
	return pts
}

// alertStrings are the string fields of an alert transition point: its
// identity, reason, and start and end (RFC 3339, end empty while ongoing),
// so that the dashboard can rebuild the alert from its last transition.
func alertStrings(a metrics.Alert) map[string]string {
	end := ""
	if !a.End.IsZero() {
		end = a.End.UTC().Format(time.RFC3339)
	}
	return map[string]string{"id": a.ID, "reason": a.Reason, "start": a.Start.UTC().Format(time.RFC3339), "end": end}
}

// dryRun wraps a result store: it reads checkpoints and alert states from
// it, prints what would be written as InfluxDB line protocol, and writes
// nothing.
type dryRun struct {
	inner agent.ResultStore
	w     io.Writer
}

func (d *dryRun) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	return d.inner.Checkpoint(ctx, ahu)
}

func (d *dryRun) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	return d.inner.AlertStates(ctx, ahu)
}

func (d *dryRun) Commit(_ context.Context, ahu string, recs []metrics.Record, up agent.AlertUpdate, through time.Time) error {
	for _, p := range append(hourlyPoints(recs), alertPoints(up.Transitions)...) {
		fmt.Fprintln(d.w, lineProtocol(p))
	}
	fmt.Fprintf(d.w, "# %s: checkpoint would move to %s (dry run: nothing written)\n", ahu, through.UTC().Format(time.RFC3339))
	return nil
}

// lineProtocol formats a point as InfluxDB line protocol, with the
// escaping the protocol defines for measurements, tags and fields.
func lineProtocol(p influx.Point) string {
	esc := strings.NewReplacer(",", `\,`, " ", `\ `, "=", `\=`)
	escMeas := strings.NewReplacer(",", `\,`, " ", `\ `)
	var b strings.Builder
	b.WriteString(escMeas.Replace(p.Measurement))
	keys := make([]string, 0, len(p.Tags))
	for k := range p.Tags {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		b.WriteString("," + esc.Replace(k) + "=" + esc.Replace(p.Tags[k]))
	}
	var fields []string
	for k, v := range p.Fields {
		fields = append(fields, esc.Replace(k)+"="+strconv.FormatFloat(v, 'g', -1, 64))
	}
	for k, v := range p.Strings {
		fields = append(fields, esc.Replace(k)+"="+strconv.Quote(v))
	}
	sort.Strings(fields)
	b.WriteString(" " + strings.Join(fields, ","))
	b.WriteString(" " + strconv.FormatInt(p.Time.UnixNano(), 10))
	return b.String()
}
