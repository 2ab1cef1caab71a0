package ingest

import (
	"context"
	"errors"
	"fmt"
	"io"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// RecordSource yields trend records in time order (ingest/csvfile.Files
// merges several exports that way); io.EOF ends it.
type RecordSource interface {
	Next() (Record, error)
}

// RecordHours streams records from exports into hours of several air
// handlers at once, without storing them: memory stays flat however long
// the files are. Records are matched to points by series name (the CSV
// column or long-format point name) and converted to SI with the unit the
// configuration gives; a file whose header states a different unit for the
// same column is refused, not guessed.
type RecordHours struct {
	Src   RecordSource
	Units map[string]UnitPoints
	Step  time.Duration
	// Records counts the records used; Unmatched counts records whose
	// series no air handler maps, by series name.
	Records   int
	Unmatched map[string]int
}

type target struct {
	ahu  string
	role metrics.Role
	unit psychro.Unit
}

// Hours implements agent.HourSource. A zero from starts at the hour of the
// first record; a zero to ends after the hour of the last.
func (rh *RecordHours) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	byName := map[string][]target{}
	cfgUnit := map[string]string{}
	for _, ahu := range ahus {
		u, ok := rh.Units[ahu]
		if !ok {
			return fmt.Errorf("read %s: no points configured", ahu)
		}
		for role, ref := range u.Points {
			spec, _ := metrics.LookupRole(string(role))
			unit, err := psychro.LookupUnit(spec.Kind, ref.Unit)
			if err != nil {
				return fmt.Errorf("%s %s: %w", ahu, role, err)
			}
			byName[ref.Name()] = append(byName[ref.Name()], target{ahu, role, unit})
			cfgUnit[ref.Name()] = ref.Unit
		}
	}
	rh.Unmatched = map[string]int{}
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
	checked := map[string]bool{}
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
			rh.Unmatched[rec.Series]++
			continue
		}
		if !checked[rec.Series] && rec.Unit != "" {
			checked[rec.Series] = true
			fileUnit, err := psychro.LookupUnit(targets[0].unit.Kind, rec.Unit)
			if err == nil && fileUnit.Name != targets[0].unit.Name {
				return fmt.Errorf("%s line %d: column %q is in %s according to the file but %s according to the configuration; correct the unit in the configuration",
					rec.File, rec.Line, rec.Series, fileUnit.Name, cfgUnit[rec.Series])
			}
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
			aligners[tg.ahu].Push(tg.role, Sample{Time: rec.Time, Value: tg.unit.ToSI(rec.Value)})
		}
		if rec.Time.After(last) {
			last = rec.Time
			// Records arrive in time order; an hour is complete once the
			// input is an hour past its end (room for small disorder).
			if err := emit(last.Add(-time.Hour).UTC().Truncate(time.Hour)); err != nil {
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
