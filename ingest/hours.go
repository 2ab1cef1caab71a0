package ingest

import (
	"context"
	"fmt"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// SeriesReader reads one point's samples in SI, in time order, with
// from <= t < to. Both stores satisfy it (ingest/store.SeriesReader).
type SeriesReader interface {
	ReadSeries(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, from, to time.Time, fn func(Sample) error) error
}

// PointRead is one point of a batch read: where it lives and what it
// measures.
type PointRead struct {
	Ref  metrics.PointRef
	Kind psychro.Kind
}

// BatchReader reads many points, of many air handlers, in one request: fn
// receives each sample of points[i] as fn(i, s), in SI, with from <= t <
// to, in time order per point (calls for different points may
// interleave). A store that implements it beside SeriesReader lets
// StoreHours read a chunk of all its air handlers at once. An error fails
// the whole read: it names no point that a caller could skip.
type BatchReader interface {
	ReadBatch(ctx context.Context, points []PointRead, from, to time.Time, fn func(i int, s Sample) error) error
}

// PointChecker looks a point up: an error that StoreHours.IsMissing
// accepts says it matches nothing in the store (ingest/store.PointChecker
// is this interface).
type PointChecker interface {
	CheckPoint(ctx context.Context, ref metrics.PointRef, from, to time.Time) error
}

// AirHandlerPoints is what alignment needs to know about an air handler.
type AirHandlerPoints struct {
	Points map[metrics.Role]metrics.PointRef
	Stale  map[metrics.Role]time.Duration
}

// StoreHours reads air handlers' points from a store a chunk at a time and
// aligns them into hours, so memory stays flat however long the period.
// When the Reader is also a BatchReader, each chunk of all the air
// handlers asked for is one read (their hours are emitted after it, air
// handler by air handler); otherwise each point is read on its own.
type StoreHours struct {
	Reader      SeriesReader
	AirHandlers map[string]AirHandlerPoints
	Step        time.Duration
	Chunk       time.Duration // default one day
	// IsMissing reports errors that mean "this point has no data in the
	// store" rather than a store failure; such points are skipped and
	// listed in Missing, and their roles have zero coverage.
	IsMissing func(error) bool
	Missing   []string // each missing point once: "<ahu> <role> (<point>)"
	// OnMissing, when set, is called the first time a point is found
	// missing, so a long-running agent can report it.
	OnMissing func(ahu string, role metrics.Role, point string)
	// CheckFirst, with a BatchReader that is also a PointChecker, looks
	// each point up once before the first batch, so that one matching
	// nothing is listed in Missing and left out, as on the point-by-point
	// path (a batch cannot tell it from a quiet point). For a one-off
	// analysis; the agent looks its points up once at start instead
	// (agent.CheckPoints), not at every run.
	CheckFirst bool
	// ByHour has the batch path yield each hour of all the air handlers
	// (by id) before the next hour, as ingest.RecordHours does, rather
	// than each air handler's hours of a chunk together (which the agent
	// commits at once).
	ByHour bool
	// Read counts the samples read; OnRead, when set, receives the count of
	// each read.
	Read   int
	OnRead func(n int)
	seen   map[string]bool

	recycler hourRecycler
}

// Release implements agent.HourReleaser: h, an hour this source emitted,
// is filled again by a later hour. Nothing may use h after the call.
func (s *StoreHours) Release(h *metrics.Hour) { s.recycler.release(h) }

// Hours implements agent.HourSource.
func (s *StoreHours) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	chunk := s.Chunk
	if chunk <= 0 {
		chunk = 24 * time.Hour
	}
	from = from.UTC().Truncate(time.Hour)
	// The aligners of this read take back its hours while it lasts; none is
	// kept past it (a portfolio's run would hold every air handler's).
	defer s.recycler.forgetAll()
	if br, ok := s.Reader.(BatchReader); ok {
		return s.hoursBatch(ctx, br, ahus, from, to, chunk, fn)
	}
	missing := map[string]bool{}
	for _, ahu := range ahus {
		u, ok := s.AirHandlers[ahu]
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
		s.recycler.track(a)
		lookAtConfiguredUnits(a, u)
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
					s.missingPoint(ahu, role, ref.Name()) // found missing for another air handler
					continue
				}
				n, idx := 0, a.roleIndex(role)
				err := s.Reader.ReadSeries(ctx, ref, spec.Kind, rs, ce, func(smp Sample) error {
					n++
					if idx >= 0 {
						a.push(idx, smp.Time, smp.Value)
					}
					return nil
				})
				s.Read += n
				if s.OnRead != nil && n > 0 {
					s.OnRead(n)
				}
				if err != nil {
					if s.IsMissing != nil && s.IsMissing(err) {
						missing[ref.Name()] = true
						s.missingPoint(ahu, role, ref.Name())
						continue
					}
					return fmt.Errorf("read %s %s: %w", ahu, r, err)
				}
			}
			if err := a.Emit(emitUntil(ce, to), fn); err != nil {
				return err
			}
		}
		s.recycler.forget(a)
	}
	return nil
}

// missingPoint lists a point found missing, once per air handler and role.
func (s *StoreHours) missingPoint(ahu string, role metrics.Role, point string) {
	key := fmt.Sprintf("%s %s (%s)", ahu, role, point)
	if s.seen == nil {
		s.seen = map[string]bool{}
	}
	if !s.seen[key] {
		s.seen[key] = true
		s.Missing = append(s.Missing, key)
		if s.OnMissing != nil {
			s.OnMissing(ahu, role, point)
		}
	}
}

// lookAtConfiguredUnits has a judge, as "dewline check --store" does,
// whether the values look logged in another unit than configured: the
// store holds SI converted from the configured units.
func lookAtConfiguredUnits(a *Aligner, u AirHandlerPoints) {
	units := make(map[metrics.Role]string, len(u.Points))
	for r, ref := range u.Points {
		units[r] = ref.Unit
	}
	a.LookAtUnits(units)
}

// hoursBatch is Hours over a BatchReader: one read per chunk for all of
// ahus. Missing points (IsMissing) cannot be told apart in a batch; a
// BatchReader reports a point without data by passing no samples.
func (s *StoreHours) hoursBatch(ctx context.Context, br BatchReader, ahus []string, from, to time.Time, chunk time.Duration, fn func(*metrics.Hour) error) error {
	type owner struct {
		ahu int
		idx int // the role's index in the aligner (Aligner.roleIndex)
	}
	var (
		aligners = make([]*Aligner, len(ahus))
		leads    = make([]time.Duration, len(ahus))
		points   []PointRead
		owners   []owner
		maxLead  time.Duration
		check    PointChecker
		checked  = map[string]error{} // by point name: what CheckPoint said
	)
	if s.CheckFirst && s.IsMissing != nil {
		check, _ = br.(PointChecker)
	}
	for k, ahu := range ahus {
		u, ok := s.AirHandlers[ahu]
		if !ok {
			return fmt.Errorf("read %s: no points configured", ahu)
		}
		stale := make(map[metrics.Role]time.Duration, len(u.Points))
		roles := make([]string, 0, len(u.Points))
		for r := range u.Points {
			stale[r] = staleOf(u, r)
			roles = append(roles, string(r))
			leads[k] = max(leads[k], stale[r])
		}
		maxLead = max(maxLead, leads[k])
		a, err := NewAligner(ahu, from, s.Step, stale)
		if err != nil {
			return err
		}
		aligners[k] = a
		s.recycler.track(a)
		lookAtConfiguredUnits(a, u)
		sort.Strings(roles)
		for _, r := range roles {
			spec, _ := metrics.LookupRole(r)
			ref := u.Points[metrics.Role(r)]
			if check != nil {
				err, done := checked[ref.Name()]
				if !done {
					err = check.CheckPoint(ctx, ref, from.Add(-leads[k]), to)
					checked[ref.Name()] = err
				}
				if err != nil {
					if !s.IsMissing(err) {
						return fmt.Errorf("read %s %s: %w", ahu, r, err)
					}
					s.missingPoint(ahu, metrics.Role(r), ref.Name())
					continue // as on the point-by-point path: no samples, no coverage
				}
			}
			points = append(points, PointRead{Ref: ref, Kind: spec.Kind})
			owners = append(owners, owner{k, a.roleIndex(metrics.Role(r))})
		}
	}
	var byID []*Aligner // the order ByHour emits in
	if s.ByHour {
		byID = slices.SortedFunc(slices.Values(aligners), func(a, b *Aligner) int { return strings.Compare(a.ahu, b.ahu) })
	}
	what := fmt.Sprintf("%d air handlers", len(ahus))
	if len(ahus) == 1 {
		what = ahus[0]
	}
	for cs := from; cs.Before(to); cs = cs.Add(chunk) {
		ce := cs.Add(chunk)
		if ce.After(to) {
			ce = to
		}
		// The first chunk reads back one stale limit so the value logged
		// before the period can hold into it: each air handler its own.
		rs, first := cs, cs.Equal(from)
		if first {
			rs = cs.Add(-maxLead)
		}
		n := 0
		err := br.ReadBatch(ctx, points, rs, ce, func(i int, smp Sample) error {
			o := owners[i]
			if first && smp.Time.Before(cs.Add(-leads[o.ahu])) {
				return nil
			}
			n++
			if o.idx >= 0 {
				aligners[o.ahu].push(o.idx, smp.Time, smp.Value)
			}
			return nil
		})
		s.Read += n
		if s.OnRead != nil && n > 0 {
			s.OnRead(n)
		}
		if err != nil {
			return fmt.Errorf("read %s: %w", what, err)
		}
		until := emitUntil(ce, to)
		if s.ByHour && len(aligners) > 0 {
			// Hour by hour across the air handlers, as the CSV path yields
			// them; the aligners all start at the hour of from.
			for h := aligners[0].next.Add(time.Hour); !h.After(until); h = h.Add(time.Hour) {
				for _, a := range byID {
					if err := a.Emit(h, fn); err != nil {
						return err
					}
				}
			}
			continue
		}
		for _, a := range aligners {
			if err := a.Emit(until, fn); err != nil {
				return err
			}
		}
	}
	return nil
}

// emitUntil is how far the hours may be emitted once a chunk ending at ce
// of a period ending at to is read. Hours that end inside the chunk are
// complete, but an hour is emitted only once the samples FlatLookahead
// after it are pushed (they are in the next chunk), so a sensor stuck
// across the chunk's end is seen to go on, as on the CSV path. A final
// partial hour is emitted at the end of the period.
func emitUntil(ce, to time.Time) time.Time {
	if ce.Before(to) {
		return ce.Add(-FlatLookahead).Truncate(time.Hour)
	}
	until := to.Truncate(time.Hour)
	if until.Before(to) {
		until = until.Add(time.Hour)
	}
	return until
}

func staleOf(u AirHandlerPoints, r metrics.Role) time.Duration {
	if d, ok := u.Stale[r]; ok && d > 0 {
		return d
	}
	spec, _ := metrics.LookupRole(string(r))
	return spec.Stale
}
