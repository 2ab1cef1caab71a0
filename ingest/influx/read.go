package influx

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Query is one point for ReadPoints: where it lives (Ref) and what it
// measures (Kind), which selects the unit table for Ref.Unit.
type Query struct {
	Ref  metrics.PointRef
	Kind psychro.Kind
}

// ReadSeries calls fn with the samples of one point logged in [from, to),
// in time order, in SI. It converts from ref.Unit for a point with its own
// measurement and field, and reads SI as stored at the default location
// (see the package documentation). An unknown unit is an error before any
// query. No data in the window is not an error: fn is simply not called
// (CheckPoint tells a quiet point from a missing one). An error from fn
// stops the read and is returned as is.
func (c *Client) ReadSeries(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, from, to time.Time, fn func(ingest.Sample) error) error {
	return c.ReadPoints(ctx, []Query{{Ref: ref, Kind: kind}}, from, to, 0,
		func(_ int, s ingest.Sample) error { return fn(s) })
}

// ReadPoints reads several points, typically all of one air handler, in a
// single Flux query and calls fn(i, s) with each sample of points[i], in SI.
//
// every = 0 reads the raw samples with their exact timestamps (nanoseconds
// kept). every > 0 has the server average each point over windows of that
// length, aligned to multiples of every since the Unix epoch (UTC), and
// stamps each mean with its window's start (the first window starts at
// from); windows without samples are skipped.
//
// Samples of one point come in time order; calls for different points may
// interleave. The window is [from, to): a sample at to is never passed on,
// also on InfluxDB 1.x, whose range() includes its stop time.
//
// A point must match one series: its measurement and field, with tags that
// include the point's Tags. When it matches more (it leaves out a tag that
// tells them apart), the read fails with ErrAmbiguousPoint once the second
// series arrives. On any error the samples already passed to fn are a
// partial result.
func (c *Client) ReadPoints(ctx context.Context, points []Query, from, to time.Time, every time.Duration, fn func(i int, s ingest.Sample) error) error {
	plan, err := planRead(c.opt.Bucket, points, from, to, every)
	if err != nil {
		return err
	}
	if plan == nil {
		return nil
	}
	rows := newTableRows(plan.locs, plan.toSI)
	var dispatch []int
	err = c.run(ctx, plan.flux, rows.reset, func(f *fluxCSV) (bool, error) {
		if f.newTable {
			dispatch = plan.route(f, dispatch[:0])
			if len(dispatch) == 0 {
				return false, fmt.Errorf("the server returned a series (measurement %q, field %q) that matches none of the points asked for",
					f.get(colMeasurement), f.get(colField))
			}
			if err := rows.claim(f, dispatch); err != nil {
				return false, err
			}
		}
		return rows.row(f, dispatch, from, to, fn)
	})
	if err != nil {
		return fmt.Errorf("read %s: %w", plan.what(), err)
	}
	return nil
}

// readPlan is a prepared ReadPoints query and what is needed to route its
// tables back to the points.
type readPlan struct {
	flux string
	locs []location
	toSI []func(float64) float64
}

func planRead(bucket string, points []Query, from, to time.Time, every time.Duration) (*readPlan, error) {
	if !from.Before(to) {
		return nil, fmt.Errorf("read window [%s, %s) is empty; from must be before to", fluxTime(from), fluxTime(to))
	}
	if every < 0 {
		return nil, fmt.Errorf("aggregation window %s is negative; use 0 for raw samples", every)
	}
	if len(points) == 0 {
		return nil, nil
	}
	p := &readPlan{locs: make([]location, len(points)), toSI: make([]func(float64) float64, len(points))}
	var preds []string
	seen := map[string]bool{}
	for i, q := range points {
		loc, toSI, err := locatePoint(q)
		if err != nil {
			return nil, err
		}
		p.locs[i], p.toSI[i] = loc, toSI
		if pr := "(" + loc.predicate() + ")"; !seen[pr] {
			seen[pr] = true
			preds = append(preds, pr)
		}
	}

	// No group() or sort(): InfluxDB returns each series as its own table,
	// already in time order, and a point is one series (ReadPoints checks
	// it), so the result streams straight from storage; sorting merged
	// series on the server cost about a quarter of a raw read. All tags
	// stay (drop, not keep): keeping only some would merge the series that
	// differ in the others into one table and hide an ambiguous point.
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: %s)\n", fluxString(bucket))
	fmt.Fprintf(&b, "  |> range(start: %s, stop: %s)\n", fluxTime(from), fluxTime(to))
	fmt.Fprintf(&b, "  |> filter(fn: (r) => %s)\n", strings.Join(preds, " or "))
	if every > 0 {
		// InfluxDB 1.x includes the stop time in range(); raw samples at
		// `to` are dropped as they arrive, but one must not reach a mean.
		fmt.Fprintf(&b, "  |> filter(fn: (r) => r._time < %s)\n", fluxTime(to))
		fmt.Fprintf(&b, "  |> aggregateWindow(every: %s, fn: mean, createEmpty: false, timeSrc: \"_start\")\n", fluxDuration(every))
	}
	fmt.Fprintf(&b, "  |> drop(columns: %s)\n", fluxStringList([]string{colStart, colStop}))
	p.flux = b.String()
	return p, nil
}

// route appends to dst the points that the current table of f belongs to:
// same measurement and field, and every tag of the point on the table.
func (p *readPlan) route(f *fluxCSV, dst []int) []int {
	m, fld := f.get(colMeasurement), f.get(colField)
	for i, l := range p.locs {
		if l.measurement != m || l.field != fld {
			continue
		}
		match := true
		for _, k := range l.keys {
			if !f.has(k) || f.get(k) != l.tags[k] {
				match = false
				break
			}
		}
		if match {
			dst = append(dst, i)
		}
	}
	return dst
}

// what names the points of a read for messages.
func (p *readPlan) what() string {
	if len(p.locs) == 1 {
		return fmt.Sprintf("point %q (%s)", p.locs[0].name, p.locs[0].describe())
	}
	names := make([]string, len(p.locs))
	for i, l := range p.locs {
		names[i] = strconv.Quote(l.name)
	}
	return fmt.Sprintf("%d points (%s)", len(p.locs), strings.Join(names, ", "))
}

// tableRows passes the rows of a Flux answer on to the points they belong
// to. It keeps, for each point, the table its samples came in (a second
// table means the point matches more than one series) and the time of its
// last sample (samples must come in time order).
type tableRows struct {
	locs   []location
	toSI   []func(float64) float64
	last   []time.Time
	series []string // result table of each point, "" before its first
	tags   []string // tags of that table, for messages
}

func newTableRows(locs []location, toSI []func(float64) float64) *tableRows {
	return &tableRows{locs: locs, toSI: toSI, last: make([]time.Time, len(locs)),
		series: make([]string, len(locs)), tags: make([]string, len(locs))}
}

// reset forgets what an answer passed on, before the query is run again.
func (t *tableRows) reset() { clear(t.series); clear(t.last) }

// claim records that the points dispatch come in f's current table; a point
// already seen in another table fails with ErrAmbiguousPoint.
func (t *tableRows) claim(f *fluxCSV, dispatch []int) error {
	id := f.result + "\x00" + f.table
	for _, i := range dispatch {
		switch t.series[i] {
		case "":
			t.series[i], t.tags[i] = id, f.tags()
		case id:
		default:
			return fmt.Errorf("point %q matches more than one series, tagged %s and %s; add the tag that tells them apart to its tags: %w",
				t.locs[i].name, t.tags[i], f.tags(), ErrAmbiguousPoint)
		}
	}
	return nil
}

// row passes f's current row, in SI, to fn for each point of dispatch; a
// row outside [from, to) is skipped. It reports whether fn was called.
func (t *tableRows) row(f *fluxCSV, dispatch []int, from, to time.Time, fn func(i int, s ingest.Sample) error) (bool, error) {
	at, err := f.time()
	if err != nil {
		return false, err
	}
	if at.Before(from) || !at.Before(to) {
		return false, nil
	}
	v, err := f.value()
	if err != nil {
		return false, fmt.Errorf("point %q at %s: %w", t.locs[dispatch[0]].name, fluxTime(at), err)
	}
	for _, i := range dispatch {
		if at.Before(t.last[i]) {
			return false, fmt.Errorf("point %q: sample at %s came after one at %s; the server returned the series out of order",
				t.locs[i].name, fluxTime(at), fluxTime(t.last[i]))
		}
		t.last[i] = at
		if err := fn(i, ingest.Sample{Time: at, Value: t.toSI[i](v)}); err != nil {
			return true, err
		}
	}
	return true, nil
}

// locatePoint finds q's series and how its values become SI: a point with
// its own measurement and field by its unit; one in dewline's sample
// measurement is stored in SI already.
func locatePoint(q Query) (location, func(float64) float64, error) {
	u, err := unitFor(q.Ref, q.Kind)
	if err != nil {
		return location{}, nil, err
	}
	loc, err := locate(q.Ref)
	if err != nil {
		return location{}, nil, err
	}
	if !loc.own {
		return loc, func(v float64) float64 { return v }, nil
	}
	return loc, u.ToSI, nil
}
