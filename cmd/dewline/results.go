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

// resultStore is the agent's agent.ResultStore and agent.EventStore: the
// embedded store keeps checkpoints, alert rule states and the event queue
// (the configured store, or with InfluxDB a local state file beside the
// configuration); results also go to InfluxDB when it is the store.
type resultStore struct {
	state    *embedded.Store
	flux     *influx.Client
	currency string
}

var (
	_ agent.ResultStore = (*resultStore)(nil)
	_ agent.EventStore  = (*resultStore)(nil)
)

func (rs *resultStore) Checkpoint(ctx context.Context, ahu string) (time.Time, bool, error) {
	return rs.state.Checkpoint(ctx, ahu)
}

func (rs *resultStore) AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error) {
	raw, err := rs.state.AlertStates(ctx, ahu)
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
	if rs.flux != nil {
		pts := hourlyPoints(recs)
		pts = append(pts, alertPoints(up.Transitions)...)
		if err := rs.flux.WritePoints(ctx, pts); err != nil {
			return fmt.Errorf("write results to InfluxDB: %w", err)
		}
	}
	c := embedded.Commit{AHU: ahu, Through: through, States: map[string]json.RawMessage{}}
	for i := range recs {
		c.Rows = append(c.Rows, hourRow(&recs[i]))
	}
	for kind, a := range up.States {
		b, err := json.Marshal(a)
		if err != nil {
			return err
		}
		c.States[kind] = b
	}
	for _, t := range up.Transitions {
		a := t.Alert
		c.Alerts = append(c.Alerts, embedded.AlertRow{ID: a.ID, AHU: a.AHU, Kind: a.Kind, Severity: string(a.Severity),
			State: string(t.To), Start: a.Start, End: a.End, EnergyKWh: a.EnergyKWh, Cost: a.Money, Reason: a.Reason})
		payload, err := agent.AlertPayload(t, rs.currency)
		if err != nil {
			return err
		}
		c.Events = append(c.Events, embedded.AlertEvent{AlertID: a.ID, Transition: transitionName(t.To), At: t.At, Payload: payload})
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
			Strings: map[string]string{"id": a.ID, "reason": a.Reason},
			Time:    t.At})
	}
	return pts
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
