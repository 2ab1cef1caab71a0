package agent

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"
	"sync/atomic"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// HourSource yields aligned hours of air handlers in [from, to): for each
// air handler its hours in order (air handlers may interleave).
// ingest.StoreHours and ingest.CSVHours satisfy it.
type HourSource interface {
	Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error
}

// HourReleaser is an HourSource that takes back the hours it yields: the
// Analyzer releases each hour once its record is computed, and the source
// fills it again for a later hour, so an analysis allocates the hours in
// flight rather than one per hour of the period. ingest.StoreHours and
// ingest.RecordHours implement it.
type HourReleaser interface {
	Release(h *metrics.Hour)
}

// ResultFunc receives each hour's record and the alert transitions it
// caused. rec and tr are valid only during the call: keep a copy of what is
// needed after it.
type ResultFunc func(ctx context.Context, rec *metrics.Record, tr []metrics.Transition) error

// Summary totals one air handler's hours.
type Summary struct {
	AHU              string
	Hours            int     // hours evaluated
	CoveredHours     float64 // sum of coverage
	WaterKg          float64
	CoilKWh          float64
	ReheatKWh        float64
	ReheatNeededKWh  float64
	ReheatAvoidKWh   float64
	ReheatInputKWh   float64
	CoolingInputKWh  float64
	CoolingAvoidKWh  float64
	ElectricityKWh   float64
	FuelKWh          float64
	Cost             float64
	CostAvoidable    float64
	CO2Kg            float64
	CO2AvoidableKg   float64
	SHCHours         float64
	SHCUnneededHours float64
	WaterU95         float64 // hours' half-widths added in quadrature (hour biases taken as independent)
	ReheatAvoidU95   float64
	// NoCoolingInput counts the hours without a cooling input: the sums
	// above skip their empty values, and the EER leaves out their coil.
	NoCoolingInput metrics.CoolingGap
	Failed         int             // hours whose computation failed (see Errors)
	Alerts         []metrics.Alert // alerts pending or open at the end
}

// EffectiveEER is the period's effective EER in Btu/Wh, over the hours
// with a cooling input.
func (s *Summary) EffectiveEER() float64 {
	g := &s.NoCoolingInput
	in := s.CoolingInputKWh + s.ReheatInputKWh - g.ReheatInputKWh
	if in == 0 {
		return math.NaN()
	}
	return psychro.COPToEER((s.CoilKWh - g.CoilKWh - (s.ReheatKWh - g.ReheatKWh)) / in)
}

// Coverage is the mean coverage of the period's hours.
func (s *Summary) Coverage() float64 {
	if s.Hours == 0 {
		return 0
	}
	return s.CoveredHours / float64(s.Hours)
}

func (s *Summary) add(r *metrics.Record) {
	s.Hours++
	s.NoCoolingInput.Add(r)
	add := func(dst *float64, v float64) { // an hour without the value adds nothing
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			*dst += v
		}
	}
	add(&s.CoveredHours, r.Coverage)
	add(&s.WaterKg, r.WaterRemovedKg)
	add(&s.CoilKWh, r.CoilTotalKWh)
	add(&s.ReheatKWh, r.ReheatKWh)
	add(&s.ReheatNeededKWh, r.ReheatNeededKWh)
	add(&s.ReheatAvoidKWh, r.ReheatAvoidKWh)
	add(&s.ReheatInputKWh, r.ReheatInputKWh)
	add(&s.CoolingInputKWh, r.CoolingInputKWh)
	add(&s.CoolingAvoidKWh, r.CoolingAvoidKWh)
	add(&s.ElectricityKWh, r.ElectricityKWh)
	add(&s.FuelKWh, r.FuelKWh)
	add(&s.Cost, r.Cost)
	add(&s.CostAvoidable, r.CostAvoidable)
	add(&s.CO2Kg, r.CO2Kg)
	add(&s.CO2AvoidableKg, r.CO2AvoidableKg)
	add(&s.SHCHours, r.SHCHours)
	add(&s.SHCUnneededHours, r.SHCUnneededH)
	if v := r.WaterRemovedKgU95; !math.IsNaN(v) {
		s.WaterU95 = math.Hypot(s.WaterU95, v)
	}
	if v := r.ReheatAvoidKWhU95; !math.IsNaN(v) {
		s.ReheatAvoidU95 = math.Hypot(s.ReheatAvoidU95, v)
	}
}

// Analyzer computes hourly records and alerts for a period.
type Analyzer struct {
	Cfg    *config.Config
	Source HourSource
	// Progress, when set, is called after each hour with the hours done and
	// the hours in all (air handlers x hours of the period).
	Progress func(done, total int)
	// Alerts, when set, holds each air handler's alert states to continue
	// from; it is updated as hours are evaluated.
	Alerts map[string]map[string]metrics.Alert
}

// HourError is a computation that failed for one air handler-hour; the
// other hours and air handlers carry on.
type HourError struct {
	AHU  string
	Hour time.Time
	Err  error
}

func (e *HourError) Error() string {
	return fmt.Sprintf("%s %s: %v", e.AHU, e.Hour.UTC().Format(time.RFC3339), e.Err)
}

// Run analyses [from, to) for the named air handlers (all when ahus is
// empty; a zero bound leaves it to the source) and calls put for every hour in order per air handler. It returns
// a summary per air handler and the hours that failed; it stops early only
// when ctx ends or put fails.
func (an *Analyzer) Run(ctx context.Context, from, to time.Time, ahus []string, put ResultFunc) (map[string]*Summary, []HourError, error) {
	// A zero bound leaves the period to the source (the span of an export).
	if !from.IsZero() {
		from = from.UTC().Truncate(time.Hour)
	}
	if !from.IsZero() && !to.IsZero() && !to.After(from) {
		return nil, nil, fmt.Errorf("analyse: the period %s..%s is empty", from.Format(time.RFC3339), to.Format(time.RFC3339))
	}
	if len(ahus) == 0 {
		for _, a := range an.Cfg.AirHandlers {
			ahus = append(ahus, a.ID)
		}
	}
	units := map[string]*metrics.AirHandler{}
	for _, id := range ahus {
		a, ok := an.Cfg.AirHandler(id)
		if !ok {
			return nil, nil, fmt.Errorf("analyse: no air handler %q in the configuration", id)
		}
		units[id] = an.Cfg.Spec(a)
	}
	if an.Alerts == nil {
		an.Alerts = map[string]map[string]metrics.Alert{}
	}
	rules, params := metrics.Rules(), an.Cfg.RuleParams()
	sums := map[string]*Summary{}
	for _, id := range ahus {
		sums[id] = &Summary{AHU: id}
	}
	total := 0
	if !from.IsZero() && !to.IsZero() {
		total = len(ahus) * int(math.Ceil(to.Sub(from).Hours()))
	}

	// Hours are computed by a pool of workers, one per processor, while the
	// source reads on; results are put back in order, because alert states
	// run through each air handler's hours in sequence.
	type job struct {
		seq int
		h   *metrics.Hour
		u   *metrics.AirHandler
	}
	type result struct {
		seq   int
		ahu   string
		start time.Time
		rec   metrics.Record
		err   error
	}
	release, _ := an.Source.(HourReleaser)
	workers := max(1, runtime.GOMAXPROCS(0))
	jobs := make(chan job, 4*workers)
	results := make(chan result, 4*workers)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				rec, err := safeCompute(j.u, j.h)
				r := result{seq: j.seq, ahu: j.h.AHU, start: j.h.Start, rec: rec, err: err}
				if release != nil {
					release.Release(j.h) // the record holds nothing of the hour
				}
				results <- r
			}
		}()
	}
	var (
		failed  []HourError
		putErr  error
		stopped atomic.Bool
		done    = make(chan struct{})
	)
	go func() {
		defer close(done)
		var pending reorder[result]
		// One result for every hour in turn: its record, whose address put
		// receives, is then not allocated hour after hour.
		var r result
		n := 0
		for got := range results {
			pending.put(got.seq, got)
			for {
				var ok bool
				if r, ok = pending.take(); !ok {
					break
				}
				if putErr != nil {
					continue // drain
				}
				n++
				ahu := r.ahu
				if r.err != nil {
					failed = append(failed, HourError{AHU: ahu, Hour: r.start, Err: r.err})
					sums[ahu].Failed++
				} else {
					state, tr := metrics.Evaluate(rules, params, an.Alerts[ahu], &r.rec)
					an.Alerts[ahu] = state
					sums[ahu].add(&r.rec)
					if put != nil {
						if err := put(ctx, &r.rec, tr); err != nil {
							putErr = err
							stopped.Store(true)
						}
					}
				}
				if an.Progress != nil {
					an.Progress(n, total)
				}
			}
		}
	}()
	seq := 0
	err := an.Source.Hours(ctx, ahus, from, to, func(h *metrics.Hour) error {
		if stopped.Load() {
			return errStopped
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		u, ok := units[h.AHU]
		if !ok {
			if release != nil {
				release.Release(h)
			}
			return nil
		}
		select {
		case jobs <- job{seq: seq, h: h, u: u}:
			seq++
			return nil
		case <-ctx.Done():
			return ctx.Err()
		}
	})
	close(jobs)
	wg.Wait()
	close(results)
	<-done
	if errors.Is(err, errStopped) || err == nil && putErr != nil {
		err = putErr
	}
	for id, s := range sums {
		for _, a := range an.Alerts[id] {
			s.Alerts = append(s.Alerts, a)
		}
		sort.Slice(s.Alerts, func(i, j int) bool { return s.Alerts[i].Kind < s.Alerts[j].Kind })
	}
	return sums, failed, err
}

// reorder gives back, in the order of their sequence numbers from 0, values
// that arrive out of order: a ring of slots indexed by the sequence number,
// grown when a value arrives further ahead than it holds, so putting and
// taking allocate nothing once it has its size.
type reorder[T any] struct {
	slots []T
	full  []bool
	next  int // the sequence number take gives next
}

// put holds v, the value of sequence number seq (>= next, not yet put).
func (q *reorder[T]) put(seq int, v T) {
	if seq-q.next >= len(q.slots) {
		size := max(16, 2*len(q.slots))
		for seq-q.next >= size {
			size *= 2
		}
		slots, full := make([]T, size), make([]bool, size)
		for s := q.next; s < q.next+len(q.slots); s++ {
			if i := s % len(q.slots); q.full[i] {
				slots[s%size], full[s%size] = q.slots[i], true
			}
		}
		q.slots, q.full = slots, full
	}
	i := seq % len(q.slots)
	q.slots[i], q.full[i] = v, true
}

// take returns the value of sequence number next once it was put.
func (q *reorder[T]) take() (T, bool) {
	var zero T
	if len(q.slots) == 0 {
		return zero, false
	}
	i := q.next % len(q.slots)
	if !q.full[i] {
		return zero, false
	}
	v := q.slots[i]
	q.slots[i], q.full[i] = zero, false
	q.next++
	return v, true
}

// errStopped ends a source's reading once a result could not be put.
var errStopped = errors.New("analysis stopped")

// safeCompute runs the engine and turns a panic (a bug, or data the engine
// did not foresee) into an error for that hour alone.
func safeCompute(u *metrics.AirHandler, h *metrics.Hour) (rec metrics.Record, err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("computation failed: %v", p)
		}
	}()
	return metrics.Compute(u, h), nil
}
