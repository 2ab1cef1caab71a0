package ingest

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sort"
	"sync"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// RecordSource yields trend records in time order (ingest/csvfile.Files
// merges several exports that way); io.EOF ends it.
type RecordSource interface {
	Next() (Record, error)
}

// MaxDisorder is how much earlier than the latest record before it a
// record of the configured points may be. RecordHours keeps an hour open
// until the input is more than this past it, so a record within it always
// reaches its hour; one earlier could fall in an hour already emitted and
// is refused (OutOfOrderError) rather than dropped. The exports of several
// files merged by time (csvfile.Files) keep their files' bound.
const MaxDisorder = time.Hour

// OutOfOrderError is a record more than MaxDisorder earlier than one
// before it: an export sorted by point, newest first, or with rows
// appended out of order. Such a file is imported ("dewline import"), which
// takes any order, and analysed from the store.
type OutOfOrderError struct {
	File   string
	Line   int
	Series string
	Time   time.Time // the record's
	Latest time.Time // the latest record before it
}

func (e *OutOfOrderError) Error() string {
	return fmt.Sprintf("%s line %d: %s at %s comes after a record at %s: the export is not in time order (it may be sorted by point or newest first); import it with \"dewline import\" and analyse from the store, or sort its rows by time",
		e.File, e.Line, e.Series, e.Time.UTC().Format(time.RFC3339), e.Latest.UTC().Format(time.RFC3339))
}

// Order is what ScanOrder found in an export: the span of its records of
// configured points and the first that RecordHours would refuse.
type Order struct {
	First, Last time.Time // zero when there is none
	OutOfOrder  *OutOfOrderError
}

// ScanOrder reads src to its end (one file: files in order stay in order
// merged) and reports the span of its records of the series in ix and the
// first of them that is out of order as RecordHours would refuse it.
func ScanOrder(ctx context.Context, src RecordSource, ix PointIndex) (Order, error) {
	var (
		o      Order
		oldest time.Time // MaxDisorder before o.Last
		// A wide export repeats its columns in order: the router tries the
		// series after the last one met before the index (a map look-up
		// per record was most of a scan's cost).
		routes = newRouter(ix)
	)
	err := readBatches(ctx, src, func(recs []Record) error {
		for i := range recs {
			rec := &recs[i]
			if routes.find(rec.Series).targets == nil {
				continue
			}
			switch {
			case o.First.IsZero():
				o.First, o.Last, oldest = rec.Time, rec.Time, rec.Time.Add(-MaxDisorder)
				continue
			case o.OutOfOrder == nil && rec.Time.Before(oldest):
				o.OutOfOrder = &OutOfOrderError{File: rec.File, Line: rec.Line, Series: rec.Series, Time: rec.Time, Latest: o.Last}
			}
			if rec.Time.Before(o.First) {
				o.First = rec.Time
			}
			if rec.Time.After(o.Last) {
				o.Last, oldest = rec.Time, rec.Time.Add(-MaxDisorder)
			}
		}
		return nil
	})
	return o, err
}

// RecordHours streams records from exports into hours of several air
// handlers at once, without storing them: memory stays flat however long
// the files are. Records are matched to points by series name (the CSV
// column or long-format point name) and converted to SI row by row (see
// RowUnits): in the unit the row states, or else the configured one. A file
// whose first stated unit for a series differs from the configured one is
// refused, not guessed. Records must come in time order give or take
// MaxDisorder; an earlier one ends the read with an OutOfOrderError.
type RecordHours struct {
	Src         RecordSource
	AirHandlers map[string]AirHandlerPoints
	Step        time.Duration
	// Records counts the records used; Unmatched counts records whose
	// series no air handler maps.
	Records   int
	Unmatched Unmatched
	// RowUnits reads each record in the unit its row states and counts the
	// rows converted or rejected for their unit (see RowUnits).
	RowUnits *RowUnits
	// Duplicates counts records that repeat their series' previous time
	// with another value (the later is used).
	Duplicates Duplicates

	recycler hourRecycler
}

// Release implements agent.HourReleaser: h, an hour this source emitted,
// is filled again by a later hour. Nothing may use h after the call.
func (rh *RecordHours) Release(h *metrics.Hour) { rh.recycler.release(h) }

// Hours implements agent.HourSource. A zero from starts at the hour of the
// first record; a zero to ends after the hour of the last.
func (rh *RecordHours) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	for _, ahu := range ahus {
		if _, ok := rh.AirHandlers[ahu]; !ok {
			return fmt.Errorf("read %s: no points configured", ahu)
		}
	}
	byName, err := NewPointIndex(pick(rh.AirHandlers, ahus))
	if err != nil {
		return err
	}
	rh.Unmatched = Unmatched{}
	rh.RowUnits = NewRowUnits(byName)
	rh.Duplicates = Duplicates{}
	lead := time.Duration(0)
	for _, ahu := range ahus {
		u := rh.AirHandlers[ahu]
		for r := range u.Points {
			lead = max(lead, staleOf(u, r))
		}
	}
	aligners := map[string]*Aligner{}
	var order []string
	start := func(first time.Time) error {
		if from.IsZero() {
			from = first.UTC().Truncate(time.Hour)
		}
		for _, ahu := range ahus {
			u := rh.AirHandlers[ahu]
			stale := make(map[metrics.Role]time.Duration, len(u.Points))
			for r := range u.Points {
				stale[r] = staleOf(u, r)
			}
			a, err := NewAligner(ahu, from, rh.Step, stale)
			if err != nil {
				return err
			}
			aligners[ahu] = a
			rh.recycler.track(a)
			lookAtConfiguredUnits(a, u) // as StoreHours: the values pushed are SI from the configured units
			order = append(order, ahu)
		}
		sort.Strings(order)
		return nil
	}
	// emitFrom is the input time from which the earliest pending hour can
	// be emitted: an hour is complete once the input is an hour past its
	// end (room for small disorder), and it is emitted once the input is
	// FlatLookahead further, so a run of identical values can be seen to go
	// on after it.
	emitFrom := func() time.Time {
		var first time.Time
		for i, ahu := range order {
			if n := aligners[ahu].Next(); i == 0 || n.Before(first) {
				first = n
			}
		}
		return first.Add(2*time.Hour + FlatLookahead)
	}
	emit := func(until time.Time) error {
		if !to.IsZero() && until.After(to) {
			until = to
		}
		// Hours of the air handlers interleave in time order.
		for {
			progressed := false
			for _, ahu := range order {
				a := aligners[ahu]
				if !a.Next().Add(time.Hour).After(until) {
					if err := a.Emit(a.Next().Add(time.Hour), fn); err != nil {
						return err
					}
					progressed = true
				}
			}
			if !progressed {
				return nil
			}
		}
	}
	routes := newRouter(byName)
	var (
		last, next time.Time // the latest record time in the period; when emit has work
		// oldest is the earliest time a record may have: MaxDisorder
		// before the latest record of a configured point.
		latest, oldest time.Time
		lo, hi         time.Time // the period and its lead-in, once started
		// Every aligner starts at from, so a time is converted to the
		// aligners' nanoseconds once for all (the records of a wide row
		// share theirs).
		conv   *Aligner
		convT  time.Time
		convNs int64
	)
	err = readBatches(ctx, rh.Src, func(recs []Record) error {
		for i := range recs {
			rec := &recs[i]
			rt := routes.find(rec.Series)
			if rt.targets == nil {
				rh.Unmatched.Add(rec.Series)
				continue
			}
			var ru RowUnit // a row without a unit of its own: the configured ones
			if rec.Unit != "" {
				var ok bool
				var err error
				if ru, ok, err = rh.RowUnits.check(rec, rt.targets); err != nil {
					return err
				}
				if !ok {
					continue // counted in RowUnits
				}
			}
			if rec.Time.Before(oldest) {
				return &OutOfOrderError{File: rec.File, Line: rec.Line, Series: rec.Series, Time: rec.Time, Latest: latest}
			}
			if rec.Time.After(latest) {
				latest, oldest = rec.Time, rec.Time.Add(-MaxDisorder)
			}
			if len(order) == 0 {
				if err := start(rec.Time); err != nil {
					return err
				}
				lo, hi = from.Add(-lead), to
				next = emitFrom()
				conv = aligners[order[0]]
				convT, convNs = from, 0
			}
			if !hi.IsZero() && !rec.Time.Before(hi) || rec.Time.Before(lo) {
				continue // outside the period and its lead-in
			}
			rh.Records++
			rh.Duplicates.See(&rt.last, rec)
			if rt.dest == nil {
				rt.resolve(aligners)
			}
			if rec.Time != convT {
				convT, convNs = rec.Time, conv.since(rec.Time)
			}
			for j := range rt.dest {
				if d := &rt.dest[j]; d.role >= 0 {
					v := rec.Value
					if ru.stated {
						v = ru.unit.ToSI(v)
					} else {
						v = d.unit.ToSI(v)
					}
					d.a.pushNs(d.role, convNs, v)
				}
			}
			if rec.Time.After(last) {
				last = rec.Time
				if !last.Before(next) {
					if err := emit(last.Add(-time.Hour - FlatLookahead).UTC().Truncate(time.Hour)); err != nil {
						return err
					}
					next = emitFrom()
				}
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	if len(order) == 0 {
		return nil // no matching records at all
	}
	end := to
	if end.IsZero() {
		end = last.UTC().Truncate(time.Hour).Add(time.Hour)
	}
	return emit(end)
}

// router finds a series' targets by name. Records come in a repeating
// order (a wide export's columns, row after row), so the route after the
// last one found is tried before the map.
type router struct {
	byName PointIndex
	routes map[string]*route
	seen   []*route // in the order first met
	pos    int      // index in seen of the last route found
}

// route is one series: its configured uses and, once the aligners exist,
// where each use goes.
type route struct {
	name    string
	targets []PointTarget // nil: no air handler maps the series
	dest    []routeDest
	seq     int // index in router.seen
	last    LastRecord
}

type routeDest struct {
	a    *Aligner
	role int          // stream index in a; -1 when a does not align the role
	unit psychro.Unit // the unit configured for the target (RowUnit.ToSI's fallback)
}

func newRouter(byName PointIndex) *router {
	return &router{byName: byName, routes: map[string]*route{}}
}

func (r *router) find(name string) *route {
	if n := len(r.seen); n > 0 {
		p := r.pos + 1
		if p == n {
			p = 0
		}
		if rt := r.seen[p]; rt.name == name {
			r.pos = p
			return rt
		}
	}
	rt, ok := r.routes[name]
	if !ok {
		rt = &route{name: name, targets: r.byName[name], seq: len(r.seen)}
		if len(r.routes) < maxRoutes {
			r.routes[name] = rt
			r.seen = append(r.seen, rt)
		}
	}
	r.pos = rt.seq
	if rt.seq >= len(r.seen) {
		r.pos = -1 // not remembered: start again from the first next time
	}
	return rt
}

// maxRoutes bounds the series names remembered; a long export may hold
// many points no air handler maps.
const maxRoutes = 1 << 16

func (rt *route) resolve(aligners map[string]*Aligner) {
	rt.dest = make([]routeDest, len(rt.targets))
	for i, tg := range rt.targets {
		a := aligners[tg.AHU]
		rt.dest[i] = routeDest{a: a, role: a.roleIndex(tg.Role), unit: tg.Unit}
	}
}

// BatchSource is a RecordSource that also fills a slice of records at a
// time (csvfile.Files and csvfile.Reader do): n > 0 records and no error,
// or 0 and the error that ends the stream (io.EOF at its end).
type BatchSource interface {
	Read(dst []Record) (int, error)
}

// readBatch is how many records the reading goroutine hands over at once.
const readBatch = 1024

// readBatches reads src on a goroutine of its own, a batch of records at a
// time, and calls fn with each batch in order on the caller's goroutine, so
// parsing the exports overlaps with aligning and computing what was read.
// It returns fn's error, or src's first error other than io.EOF; src is no
// longer used when it returns.
func readBatches(ctx context.Context, src RecordSource, fn func([]Record) error) error {
	type batch struct {
		recs []Record
		err  error
	}
	full := make(chan batch, 4)
	free := make(chan []Record, 6)
	for range 6 {
		free <- make([]Record, readBatch)
	}
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(full)
		bs, _ := src.(BatchSource)
		for {
			var buf []Record
			select {
			case buf = <-free:
			case <-done:
				return
			}
			n, err := 0, error(nil)
			if bs != nil {
				n, err = bs.Read(buf)
			} else {
				for n < len(buf) {
					var rec Record
					if rec, err = src.Next(); err != nil {
						break
					}
					buf[n] = rec
					n++
				}
			}
			if n > 0 {
				select {
				case full <- batch{recs: buf[:n]}:
				case <-done:
					return
				}
			}
			if err != nil {
				select {
				case full <- batch{err: err}:
				case <-done:
				}
				return
			}
		}
	}()
	stop := func() {
		close(done)
		wg.Wait()
	}
	for b := range full {
		if b.err != nil {
			stop()
			if errors.Is(b.err, io.EOF) {
				return nil
			}
			return b.err
		}
		if err := ctx.Err(); err != nil {
			stop()
			return err
		}
		if err := fn(b.recs); err != nil {
			stop()
			return err
		}
		free <- b.recs[:cap(b.recs)]
	}
	stop()
	return nil
}

// pick returns the units of the named air handlers; unknown names are left
// for the caller's own check.
func pick(units map[string]AirHandlerPoints, ahus []string) map[string]AirHandlerPoints {
	out := make(map[string]AirHandlerPoints, len(ahus))
	for _, a := range ahus {
		if u, ok := units[a]; ok {
			out[a] = u
		}
	}
	return out
}
