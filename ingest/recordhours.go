package ingest

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
)

// RecordSource yields trend records in time order (ingest/csvfile.Files
// merges several exports that way); io.EOF ends it.
type RecordSource interface {
	Next() (Record, error)
}

// RecordHours streams records from exports into hours of several air
// handlers at once, without storing them: memory stays flat however long
// the files are. Records are matched to points by series name (the CSV
// column or long-format point name) and converted to SI row by row (see
// RowUnits): in the unit the row states, or else the configured one. A file
// whose first stated unit for a series differs from the configured one is
// refused, not guessed.
type RecordHours struct {
	Src   RecordSource
	Units map[string]UnitPoints
	Step  time.Duration
	// Records counts the records used; Unmatched counts records whose
	// series no air handler maps.
	Records   int
	Unmatched Unmatched
	// RowUnits reads each record in the unit its row states and counts the
	// rows converted or rejected for their unit (see RowUnits).
	RowUnits *RowUnits
}

// Hours implements agent.HourSource. A zero from starts at the hour of the
// first record; a zero to ends after the hour of the last.
func (rh *RecordHours) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	for _, ahu := range ahus {
		if _, ok := rh.Units[ahu]; !ok {
			return fmt.Errorf("read %s: no points configured", ahu)
		}
	}
	byName, err := NewPointIndex(pick(rh.Units, ahus))
	if err != nil {
		return err
	}
	rh.Unmatched = Unmatched{}
	rh.RowUnits = NewRowUnits(byName)
	lead := time.Duration(0)
	for _, ahu := range ahus {
		u := rh.Units[ahu]
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
			u := rh.Units[ahu]
			stale := make(map[metrics.Role]time.Duration, len(u.Points))
			for r := range u.Points {
				stale[r] = staleOf(u, r)
			}
			a, err := NewAligner(ahu, from, rh.Step, stale)
			if err != nil {
				return err
			}
			aligners[ahu] = a
			order = append(order, ahu)
		}
		sort.Strings(order)
		return nil
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
	var last time.Time
	for n := 0; ; n++ {
		if n%4096 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		rec, err := rh.Src.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return err
		}
		targets, ok := byName[rec.Series]
		if !ok {
			rh.Unmatched.Add(rec.Series)
			continue
		}
		ru, ok, err := rh.RowUnits.Check(rec)
		if err != nil {
			return err
		}
		if !ok {
			continue // counted in RowUnits
		}
		if len(order) == 0 {
			if err := start(rec.Time); err != nil {
				return err
			}
		}
		if !to.IsZero() && !rec.Time.Before(to) || rec.Time.Before(from.Add(-lead)) {
			continue // outside the period and its lead-in
		}
		rh.Records++
		for _, tg := range targets {
			aligners[tg.AHU].Push(tg.Role, Sample{Time: rec.Time, Value: ru.ToSI(tg, rec.Value)})
		}
		if rec.Time.After(last) {
			last = rec.Time
			// Records arrive in time order; an hour is complete once the
			// input is an hour past its end (room for small disorder), and
			// it is emitted once the input is FlatLookahead further, so a
			// run of identical values can be seen to go on after it.
			if err := emit(last.Add(-time.Hour - FlatLookahead).UTC().Truncate(time.Hour)); err != nil {
				return err
			}
		}
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

// pick returns the units of the named air handlers; unknown names are left
// for the caller's own check.
func pick(units map[string]UnitPoints, ahus []string) map[string]UnitPoints {
	out := make(map[string]UnitPoints, len(ahus))
	for _, a := range ahus {
		if u, ok := units[a]; ok {
			out[a] = u
		}
	}
	return out
}
