package ingest

import (
	"fmt"
	"math"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Series is one role's samples for alignment: SI values, ideally in time
// order. It should start up to Stale before the first hour, so the value
// logged just before the hour can hold into it.
type Series struct {
	Role    metrics.Role
	Stale   time.Duration // how long a sample may hold; 0 takes the role's default
	Samples []Sample
}

// Align puts each role's samples onto a grid of step and calls fn once per
// hour from the hour of from, for hours hours, in order. See Aligner for
// the rules.
func Align(ahu string, from time.Time, hours int, step time.Duration, series []Series, fn func(*metrics.Hour) error) error {
	stale := make(map[metrics.Role]time.Duration, len(series))
	for _, s := range series {
		stale[s.Role] = s.Stale
	}
	a, err := NewAligner(ahu, from, step, stale)
	if err != nil {
		return err
	}
	for _, s := range series {
		for _, smp := range s.Samples {
			a.Push(s.Role, smp)
		}
	}
	return a.Emit(from.UTC().Truncate(time.Hour).Add(time.Duration(hours)*time.Hour), fn)
}

// Aligner turns streams of samples into hours on a grid, incrementally, so
// memory stays flat however long the period: push samples as they are read
// and emit the hours that are complete.
//
// A sample holds from its time until the next sample, but never longer than
// its role's stale limit; the value of a step is the one holding at the
// step's midpoint, so interval logs on the minute and change-of-value logs
// at odd seconds both land where they belong. Samples that are NaN,
// infinite or outside the role's physical range are excluded and counted;
// they also end the hold of the sample before them, because at that moment
// the true value is unknown. Nothing is clipped or filled.
type Aligner struct {
	ahu     string
	step    time.Duration
	n       int
	next    time.Time // start of the next hour to emit
	roles   []*roleStream
	index   map[metrics.Role]int
	late    int
	emitted bool // an hour has been emitted: samples before next are late
}

type roleStream struct {
	role  metrics.Role
	spec  metrics.RoleSpec
	stale time.Duration
	queue []Sample // pushed, not yet consumed, in time order
	last  time.Time
	cur   Sample
	good  bool // cur is usable
	has   bool
}

// NewAligner aligns the given roles (with their stale limits; 0 takes the
// role's default) from the hour of from on a grid of step, which must
// divide an hour.
func NewAligner(ahu string, from time.Time, step time.Duration, roles map[metrics.Role]time.Duration) (*Aligner, error) {
	if step <= 0 || time.Hour%step != 0 {
		return nil, fmt.Errorf("align %s: grid step %v does not divide an hour", ahu, step)
	}
	a := &Aligner{ahu: ahu, step: step, n: int(time.Hour / step), next: from.UTC().Truncate(time.Hour), index: map[metrics.Role]int{}}
	names := make([]string, 0, len(roles))
	for r := range roles {
		names = append(names, string(r))
	}
	sort.Strings(names)
	for _, name := range names {
		r := metrics.Role(name)
		spec, ok := metrics.LookupRole(name)
		if !ok {
			return nil, fmt.Errorf("align %s: unknown role %q", ahu, name)
		}
		st := roles[r]
		if st <= 0 {
			st = spec.Stale
		}
		a.index[r] = len(a.roles)
		a.roles = append(a.roles, &roleStream{role: r, spec: spec, stale: st})
	}
	return a, nil
}

// Next returns the start of the next hour Emit will produce.
func (a *Aligner) Next() time.Time { return a.next }

// Late returns how many samples arrived for hours already emitted and were dropped.
func (a *Aligner) Late() int { return a.late }

// Push adds a sample of role. Samples of one role should come in time
// order; an earlier one is put in its place while its hour is still open.
// Once an hour has been emitted, samples before the next hour are dropped
// and counted by Late. Samples of unknown roles are ignored.
func (a *Aligner) Push(role metrics.Role, s Sample) {
	i, ok := a.index[role]
	if !ok {
		return
	}
	r := a.roles[i]
	switch {
	case a.emitted && s.Time.Before(a.next):
		a.late++
	case len(r.queue) == 0 || !s.Time.Before(r.last):
		r.queue = append(r.queue, s)
		r.last = s.Time
	default:
		j := sort.Search(len(r.queue), func(k int) bool { return r.queue[k].Time.After(s.Time) })
		r.queue = append(r.queue, Sample{})
		copy(r.queue[j+1:], r.queue[j:])
		r.queue[j] = s
	}
}

// Emit produces, in order, every hour that ends at or before until, and
// calls fn for each. Call it once the input has been read up to until.
func (a *Aligner) Emit(until time.Time, fn func(*metrics.Hour) error) error {
	for !a.next.Add(time.Hour).After(until) {
		if err := fn(a.hour()); err != nil {
			return err
		}
		a.next = a.next.Add(time.Hour)
		a.emitted = true
	}
	return nil
}

// hour aligns the hour starting at a.next and consumes its samples.
func (a *Aligner) hour() *metrics.Hour {
	hs := a.next
	he := hs.Add(time.Hour)
	h := &metrics.Hour{
		AHU: a.ahu, Start: hs, Step: a.step,
		Values:  make(map[metrics.Role][]float64, len(a.roles)),
		Quality: make(map[metrics.Role]metrics.RoleQuality, len(a.roles)),
	}
	for _, r := range a.roles {
		vals := make([]float64, a.n)
		var q metrics.RoleQuality
		present, k := 0, 0
		count := func(s Sample) {
			if s.Time.Before(hs) || !s.Time.Before(he) {
				return
			}
			q.Samples++
			if math.IsNaN(s.Value) || math.IsInf(s.Value, 0) {
				q.NotFinite++
			} else if !r.spec.Plausible(s.Value) {
				q.OutOfRange++
			}
		}
		for i := 0; i < a.n; i++ {
			mid := hs.Add(time.Duration(i)*a.step + a.step/2)
			for k < len(r.queue) && !r.queue[k].Time.After(mid) {
				s := r.queue[k]
				k++
				count(s)
				finite := !math.IsNaN(s.Value) && !math.IsInf(s.Value, 0)
				r.cur, r.good, r.has = s, finite && r.spec.Plausible(s.Value), true
			}
			if r.has && r.good && mid.Sub(r.cur.Time) <= r.stale {
				vals[i] = r.cur.Value
				present++
			} else {
				vals[i] = math.NaN()
			}
		}
		// Samples after the last midpoint but inside the hour count here
		// and update the held value for the next hour.
		for k < len(r.queue) && r.queue[k].Time.Before(he) {
			s := r.queue[k]
			k++
			count(s)
			finite := !math.IsNaN(s.Value) && !math.IsInf(s.Value, 0)
			r.cur, r.good, r.has = s, finite && r.spec.Plausible(s.Value), true
		}
		// Drop what was consumed; keep the backing array small.
		r.queue = append(r.queue[:0], r.queue[k:]...)
		q.Coverage = float64(present) / float64(a.n)
		h.Values[r.role] = vals
		h.Quality[r.role] = q
	}
	return h
}
