package ingest

import (
	"sync"

	"github.com/dewline/dewline/metrics"
)

// hourRecycler takes back hours from a consumer that is done with them
// (agent.HourReleaser) and hands each to the aligner of its air handler,
// which fills it again: an analysis then allocates a few hours in flight,
// not one per hour of the period.
type hourRecycler struct {
	mu sync.Mutex
	by map[string]*Aligner
}

// track makes a the aligner that takes back the hours of its air handler.
func (r *hourRecycler) track(a *Aligner) {
	r.mu.Lock()
	if r.by == nil {
		r.by = map[string]*Aligner{}
	}
	r.by[a.ahu] = a
	r.mu.Unlock()
}

// forget stops taking back hours for a's air handler once a has aligned
// its period, so a source reading many air handlers keeps no aligner alive
// past its read (a later hour of it is left to the garbage collector).
func (r *hourRecycler) forget(a *Aligner) {
	r.mu.Lock()
	if r.by[a.ahu] == a {
		delete(r.by, a.ahu)
	}
	r.mu.Unlock()
}

// forgetAll forgets every aligner.
func (r *hourRecycler) forgetAll() {
	r.mu.Lock()
	clear(r.by)
	r.mu.Unlock()
}

// release hands h to its aligner; an hour of an air handler no longer
// aligned is left to the garbage collector.
func (r *hourRecycler) release(h *metrics.Hour) {
	if h == nil {
		return
	}
	r.mu.Lock()
	a := r.by[h.AHU]
	r.mu.Unlock()
	if a != nil {
		a.Recycle(h)
	}
}
