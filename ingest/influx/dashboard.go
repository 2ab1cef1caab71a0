package influx

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/metrics"
)

// results reads results back from InfluxDB: the hourly measurement
// pivoted into records, and the alerts rebuilt from their transitions.
type results struct {
	c    *Client
	site string // the site tag every read matches
	now  func() time.Time
}

func (ir *results) Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	q := WideQuery{Measurement: MeasurementHourly, Match: map[string]string{"site": ir.site}, From: from, To: to}
	if ahu != "" {
		q.Match["ahu"] = ahu
	}
	var rec metrics.Record
	ptrs := rec.FieldPtrs()
	return ir.c.ReadWide(ctx, q, func(row Row) error {
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
					return fmt.Errorf("read %s: %s %s field %s: %q is not a number", MeasurementHourly, rec.AHU, t.Format(time.RFC3339), col, text)
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

func (ir *results) Span(ctx context.Context) (time.Time, time.Time, bool, error) {
	return ir.c.Span(ctx, MeasurementHourly, "coverage", map[string]string{"site": ir.site}, ir.now())
}

// Alerts rebuilds each alert from its latest transition point; the
// points' string fields carry its start and end.
func (ir *results) Alerts(ctx context.Context, q dashboards.AlertQuery) ([]dashboards.Alert, error) {
	match := map[string]string{"site": ir.site}
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
	err := ir.c.ReadWide(ctx, WideQuery{Measurement: MeasurementAlert, Match: match, From: time.Unix(1, 0), To: to}, func(row Row) error {
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
