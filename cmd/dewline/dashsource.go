package main

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest/embedded"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/metrics"
)

// results returns the configured store as the dashboard's read side.
func (s *stores) results(now func() time.Time) dashboards.Results {
	if s.flux != nil {
		return &influxResults{c: s.flux, now: now}
	}
	return embeddedResults{s.emb}
}

// embeddedResults reads results from the embedded store.
type embeddedResults struct{ st *embedded.Store }

func (e embeddedResults) Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	return e.st.ReadRecords(ctx, ahu, from, to, fn)
}

func (e embeddedResults) Days(ctx context.Context, from, to time.Time, fn func(dashboards.DaySums) error) (bool, error) {
	return e.st.ReadDays(ctx, from, to, func(d embedded.DayRow) error {
		return fn(dashboards.DaySums{AHU: d.AHU, Day: d.Day, Hours: d.Hours, Flagged: d.Flagged, Sums: d.Sums})
	})
}

func (e embeddedResults) Span(ctx context.Context) (time.Time, time.Time, bool, error) {
	return e.st.HourSpan(ctx)
}

func (e embeddedResults) Alerts(ctx context.Context, q dashboards.AlertQuery) ([]dashboards.Alert, error) {
	rows, err := e.st.ListAlerts(ctx, embedded.AlertFilter{AHU: q.AHU, State: q.State})
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

// influxResults reads results back from InfluxDB: the hourly measurement
// pivoted into records, and the alerts rebuilt from their transitions.
type influxResults struct {
	c   *influx.Client
	now func() time.Time
}

func (ir *influxResults) Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	q := influx.WideQuery{Measurement: measurementHourly, From: from, To: to}
	if ahu != "" {
		q.Match = map[string]string{"ahu": ahu}
	}
	var rec metrics.Record
	ptrs := rec.FieldPtrs()
	return ir.c.ReadWide(ctx, q, func(row influx.Row) error {
		t, err := row.Time()
		if err != nil {
			return err
		}
		for _, p := range ptrs {
			*p = math.NaN()
		}
		rec.AHU, rec.HourStart, rec.Flags = row.Get("ahu"), t.UTC(), rec.Flags[:0]
		for _, col := range row.Columns() {
			p, ok := ptrs[col]
			if !ok {
				continue
			}
			if text := row.Get(col); text != "" {
				v, err := strconv.ParseFloat(text, 64)
				if err != nil {
					return fmt.Errorf("read %s: %s %s field %s: %q is not a number", measurementHourly, rec.AHU, t.Format(time.RFC3339), col, text)
				}
				*p = v
			}
		}
		// A re-written hour keeps fields InfluxDB merged from the old
		// point; "missing" names those with no value now.
		for _, name := range strings.Fields(row.Get("missing")) {
			if p, ok := ptrs[name]; ok {
				*p = math.NaN()
			}
		}
		rec.Flags = append(rec.Flags, strings.Fields(row.Get("flags"))...)
		return fn(&rec)
	})
}

func (ir *influxResults) Span(ctx context.Context) (time.Time, time.Time, bool, error) {
	return ir.c.Span(ctx, measurementHourly, "coverage", ir.now())
}

// Alerts rebuilds each alert from its latest transition point; the
// points' string fields carry its start and end.
func (ir *influxResults) Alerts(ctx context.Context, q dashboards.AlertQuery) ([]dashboards.Alert, error) {
	match := map[string]string{}
	if q.AHU != "" {
		match["ahu"] = q.AHU
	}
	if q.Kind != "" {
		match["kind"] = q.Kind
	}
	// Transitions are written when they happen: an alert that overlaps
	// the window opened before its end, and may have opened long before
	// its start, so the read goes back to the epoch.
	to := q.To
	if to.IsZero() {
		to = ir.now().Add(24 * time.Hour)
	}
	byID := map[string]dashboards.Alert{}
	var order []string
	latest := map[string]time.Time{}
	err := ir.c.ReadWide(ctx, influx.WideQuery{Measurement: measurementAlert, Match: match, From: time.Unix(1, 0), To: to}, func(row influx.Row) error {
		t, err := row.Time()
		if err != nil {
			return err
		}
		id := row.Get("id")
		if id == "" {
			return nil
		}
		if prev, ok := latest[id]; ok && prev.After(t) {
			return nil
		}
		a := dashboards.Alert{ID: id, AHU: row.Get("ahu"), Kind: row.Get("kind"), Severity: row.Get("severity"),
			State: row.Get("status"), Reason: row.Get("reason"), EnergyKWh: parseOrNaN(row.Get("energy_kwh")), Money: parseOrNaN(row.Get("money"))}
		a.Start = parseTimeOr(row.Get("start"), startFromID(id))
		a.End = parseTimeOr(row.Get("end"), time.Time{})
		if a.State == string(metrics.StatusClosed) && a.End.IsZero() {
			a.End = t.UTC()
		}
		if _, seen := byID[id]; !seen {
			order = append(order, id)
		}
		byID[id], latest[id] = a, t
		return nil
	})
	if err != nil {
		return nil, err
	}
	var out []dashboards.Alert
	for _, id := range order {
		a := byID[id]
		if (q.State == "" || a.State == q.State) && a.Overlaps(q.From, q.To) {
			out = append(out, a)
		}
	}
	sortAlerts(out)
	return out, nil
}

func sortAlerts(a []dashboards.Alert) {
	slices.SortFunc(a, func(x, y dashboards.Alert) int {
		if c := x.Start.Compare(y.Start); c != 0 {
			return c
		}
		return strings.Compare(x.ID, y.ID)
	})
}

func parseOrNaN(s string) float64 {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

func parseTimeOr(s string, def time.Time) time.Time {
	t, err := time.Parse(time.RFC3339, s)
	if err != nil {
		return def
	}
	return t.UTC()
}

// startFromID reads the start hour from an alert ID (ahu/kind/20060102T15Z),
// for transitions written without a start field.
func startFromID(id string) time.Time {
	i := strings.LastIndexByte(id, '/')
	if i < 0 {
		return time.Time{}
	}
	t, err := time.Parse("20060102T15Z", id[i+1:])
	if err != nil {
		return time.Time{}
	}
	return t
}
