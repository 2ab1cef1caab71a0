package ingest

import (
	"context"
	"fmt"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// SeriesReader reads one point's samples in SI, in time order, with
// from <= t < to. Both stores satisfy it (ingest/store.SeriesReader).
type SeriesReader interface {
	ReadSeries(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, from, to time.Time, fn func(Sample) error) error
}

// UnitPoints is what alignment needs to know about an air handler.
type UnitPoints struct {
	Points map[metrics.Role]metrics.PointRef
	Stale  map[metrics.Role]time.Duration
}

// StoreHours reads air handlers' points from a store a chunk at a time and
// aligns them into hours, so memory stays flat however long the period.
type StoreHours struct {
	Reader SeriesReader
	Units  map[string]UnitPoints
	Step   time.Duration
	Chunk  time.Duration // default one day
	// IsMissing reports errors that mean "this point has no data in the
	// store" rather than a store failure; such points are skipped and
	// listed in Missing, and their roles have zero coverage.
	IsMissing func(error) bool
	Missing   []string // each missing point once: "<ahu> <role> (<point>)"
	// OnMissing, when set, is called the first time a point is found
	// missing, so a long-running agent can report it.
	OnMissing func(ahu string, role metrics.Role, point string)
	// Read counts the samples read; OnRead, when set, receives the count of
	// each read.
	Read   int
	OnRead func(n int)
	seen   map[string]bool
}

// Hours implements agent.HourSource.
func (s *StoreHours) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	chunk := s.Chunk
	if chunk <= 0 {
		chunk = 24 * time.Hour
	}
	from = from.UTC().Truncate(time.Hour)
	missing := map[string]bool{}
	for _, ahu := range ahus {
		u, ok := s.Units[ahu]
		if !ok {
			return fmt.Errorf("read %s: no points configured", ahu)
		}
		stale := make(map[metrics.Role]time.Duration, len(u.Points))
		for r := range u.Points {
			stale[r] = staleOf(u, r)
		}
		a, err := NewAligner(ahu, from, s.Step, stale)
		if err != nil {
			return err
		}
		// The store holds SI converted from the configured units: the
		// aligner judges, as "dewline check --store" does, whether the
		// values look logged in another unit.
		units := make(map[metrics.Role]string, len(u.Points))
		for r, ref := range u.Points {
			units[r] = ref.Unit
		}
		a.LookAtUnits(units)
		roles := make([]string, 0, len(u.Points))
		for r := range u.Points {
			roles = append(roles, string(r))
		}
		sort.Strings(roles)
		lead := time.Duration(0)
		for _, r := range roles {
			if st := staleOf(u, metrics.Role(r)); st > lead {
				lead = st
			}
		}
		for cs := from; cs.Before(to); cs = cs.Add(chunk) {
			ce := cs.Add(chunk)
			if ce.After(to) {
				ce = to
			}
			// The first chunk reads back one stale limit so the value logged
			// before the period can hold into it.
			rs := cs
			if cs.Equal(from) {
				rs = cs.Add(-lead)
			}
			for _, r := range roles {
				role := metrics.Role(r)
				ref := u.Points[role]
				spec, _ := metrics.LookupRole(r)
				if missing[ref.Name()] {
					continue
				}
				n := 0
				err := s.Reader.ReadSeries(ctx, ref, spec.Kind, rs, ce, func(smp Sample) error {
					n++
					a.Push(role, smp)
					return nil
				})
				s.Read += n
				if s.OnRead != nil && n > 0 {
					s.OnRead(n)
				}
				if err != nil {
					if s.IsMissing != nil && s.IsMissing(err) {
						missing[ref.Name()] = true
						key := fmt.Sprintf("%s %s (%s)", ahu, r, ref.Name())
						if s.seen == nil {
							s.seen = map[string]bool{}
						}
						if !s.seen[key] {
							s.seen[key] = true
							s.Missing = append(s.Missing, key)
							if s.OnMissing != nil {
								s.OnMissing(ahu, role, ref.Name())
							}
						}
						continue
					}
					return fmt.Errorf("read %s %s: %w", ahu, r, err)
				}
			}
			// Hours that end inside the chunk are complete; a final partial
			// hour is emitted at the end of the period.
			until := ce
			if !ce.Before(to) {
				until = to.Truncate(time.Hour)
				if until.Before(to) {
					until = until.Add(time.Hour)
				}
			}
			if err := a.Emit(until, fn); err != nil {
				return err
			}
		}
	}
	return nil
}

func staleOf(u UnitPoints, r metrics.Role) time.Duration {
	if d, ok := u.Stale[r]; ok && d > 0 {
		return d
	}
	spec, _ := metrics.LookupRole(string(r))
	return spec.Stale
}
