package agent

import (
	"context"
	"errors"
	"fmt"
	"runtime/debug"
	"sort"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// Observer receives the agent's self-metrics; *Telemetry implements it.
type Observer interface {
	RunStarted()
	RunFinished(d time.Duration, err error)
	RunSkipped()
	HoursComputed(ahu string, n int)
	AHUFailed(ahu string)
	SetLag(ahu string, hours float64)
	SetAlertsOpen(n int)
	ObserveWrite(d time.Duration, err error)
	SetStoreUp(ok bool, reason string)
}

// nopObserver discards the metrics.
type nopObserver struct{}

func (nopObserver) RunStarted()                       {}
func (nopObserver) RunFinished(time.Duration, error)  {}
func (nopObserver) RunSkipped()                       {}
func (nopObserver) HoursComputed(string, int)         {}
func (nopObserver) AHUFailed(string)                  {}
func (nopObserver) SetLag(string, float64)            {}
func (nopObserver) SetAlertsOpen(int)                 {}
func (nopObserver) ObserveWrite(time.Duration, error) {}
func (nopObserver) SetStoreUp(bool, string)           {}

// Runner computes the pending hours of every air handler it owns and
// writes them back, moving each air handler's checkpoint only once its
// hours are written.
//
// One run, for the slot S (the start of the last complete hour, never the
// current one):
//
//	for each air handler (of this shard), independently:
//	  checkpoint C  ->  hours from min(C+1h, S+1h-lookback), not before S+1h-backfill, to S
//	  per day of those hours, oldest first:
//	    source (trend store) -> aligned hours -> metrics.Compute
//	    alert rules run on hours after C only (re-computed hours never re-alert)
//	    store.Commit(records, alert states, events, checkpoint)   <- atomic
//	  a failure or panic stops that air handler, not the others
type Runner struct {
	Cfg    *config.Config
	Source HourSource
	Store  store.ResultStore
	Obs    Observer
	Clock  Clock
	Log    zerolog.Logger
	// AHUs restricts the run to these air handlers (a shard); nil means all.
	AHUs []string
	// Payload builds the JSON body of an alert event; nil stores none.
	Payload func(t metrics.Transition) ([]byte, error)
	// Delivered is called after a commit that queued alert events (to wake
	// the webhook); may be nil.
	Delivered func()
	// Chunk is how many hours are committed at once; default 24.
	Chunk int
	// StoreDown tells a store outage (unreachable, timing out, failing)
	// from an error of one air handler (a point that matches several
	// series); only an outage marks the store down. Nil takes every error
	// as an outage.
	StoreDown func(error) bool
	// Scheduler is the clock Serve's ticks and shutdown grace run on;
	// nil is the wall clock.
	Scheduler SchedulerClock
}

// storeError records err against the store's health when it is an outage.
func (r *Runner) storeError(err error) {
	if r.StoreDown == nil || r.StoreDown(err) {
		r.obs().SetStoreUp(false, err.Error())
	}
}

// AHUReport is what one run did for one air handler.
type AHUReport struct {
	AHU        string
	From, To   time.Time // hours computed: [From, To)
	Hours      int
	Checkpoint time.Time
	Opened     int
	Closed     int
	// NotQueued counts the transitions recorded but not queued for the
	// webhook: older than webhook.max_age when computed (a catch-up).
	NotQueued int
	Err       error
}

// RunReport is what one run did.
type RunReport struct {
	Slot  time.Time
	AHUs  []AHUReport
	Took  time.Duration
	Hours int
}

// Failed returns the air handlers whose run failed.
func (r *RunReport) Failed() []AHUReport {
	var out []AHUReport
	for _, a := range r.AHUs {
		if a.Err != nil {
			out = append(out, a)
		}
	}
	return out
}

// Slot returns the start of the last complete hour at now.
func Slot(now time.Time) time.Time { return now.UTC().Truncate(time.Hour).Add(-time.Hour) }

func (r *Runner) obs() Observer {
	if r.Obs == nil {
		return nopObserver{}
	}
	return r.Obs
}

func (r *Runner) ahus() []string {
	if r.AHUs != nil {
		return r.AHUs
	}
	out := make([]string, 0, len(r.Cfg.AirHandlers))
	for _, a := range r.Cfg.AirHandlers {
		out = append(out, a.ID)
	}
	return out
}

// RunOnce computes every pending hour up to the last complete one and
// returns what it did. The error is non-nil only when no air handler could
// be run; per air handler failures are in the report.
func (r *Runner) RunOnce(ctx context.Context) (*RunReport, error) {
	start := time.Now()
	clock := r.Clock
	if clock == nil {
		clock = time.Now
	}
	slot := Slot(clock())
	rep := &RunReport{Slot: slot}
	r.obs().RunStarted()
	ahus := append([]string(nil), r.ahus()...)
	sort.Strings(ahus)
	open, notQueued := 0, 0
	for _, id := range ahus {
		if err := ctx.Err(); err != nil {
			rep.AHUs = append(rep.AHUs, AHUReport{AHU: id, Err: err})
			continue
		}
		ar := r.runAHU(ctx, id, slot)
		rep.AHUs = append(rep.AHUs, ar)
		rep.Hours += ar.Hours
		notQueued += ar.NotQueued
		if ar.Err != nil {
			r.obs().AHUFailed(id)
			r.Log.Error().Str("ahu", id).Err(ar.Err).Msg("air handler run failed")
		}
		if ar.Err != nil {
			continue // its store may be down: do not ask it again
		}
		if states, err := r.Store.AlertStates(ctx, id); err == nil {
			for _, a := range states {
				if a.Status == metrics.StatusOpen {
					open++
				}
			}
		}
	}
	r.obs().SetAlertsOpen(open)
	if notQueued > 0 {
		r.Log.Info().Int("transitions", notQueued).Str("max_age", r.Cfg.Webhook.MaxAge.String()).
			Msg("alerts opened or closed longer ago than webhook.max_age are recorded but not posted to the webhook")
	}
	rep.Took = time.Since(start)
	var err error
	if failed := rep.Failed(); len(ahus) > 0 && len(failed) == len(ahus) {
		err = fmt.Errorf("run for %s: every air handler failed, first: %w", slot.Format(time.RFC3339), failed[0].Err)
	}
	r.obs().RunFinished(rep.Took, err)
	r.Log.Info().Time("slot", slot).Int("hours", rep.Hours).Int("failed", len(rep.Failed())).Dur("took_ms", rep.Took).Msg("run done")
	return rep, err
}

// now reads the runner's clock.
func (r *Runner) now() time.Time {
	if r.Clock != nil {
		return r.Clock()
	}
	return time.Now()
}

// runAHU brings one air handler up to slot. A panic in its computation is
// recovered and reported for this air handler alone.
func (r *Runner) runAHU(ctx context.Context, id string, slot time.Time) (ar AHUReport) {
	ar.AHU = id
	defer func() {
		if p := recover(); p != nil {
			ar.Err = fmt.Errorf("panic: %v\n%s", p, debug.Stack())
		}
	}()
	a, ok := r.Cfg.AirHandler(id)
	if !ok {
		ar.Err = fmt.Errorf("no air handler %q in the configuration", id)
		return ar
	}
	unit := r.Cfg.Unit(a)
	cp, has, err := r.Store.Checkpoint(ctx, id)
	if err != nil {
		r.storeError(err)
		ar.Err = fmt.Errorf("read checkpoint: %w", err)
		return ar
	}
	end := slot.Add(time.Hour) // exclusive
	earliest := end.Add(-r.Cfg.Schedule.Backfill)
	from := earliest
	newFrom := earliest // hours from here on are new: alert rules run on them
	if has {
		newFrom = cp.Add(time.Hour)
		from = newFrom
		if lb := end.Add(-r.Cfg.Schedule.Lookback); lb.Before(from) {
			from = lb
		}
		if from.Before(earliest) {
			from = earliest
		}
		if newFrom.Before(earliest) {
			// Further behind than the backfill horizon: the gap is left
			// unevaluated (and logged); alerts restart from here.
			r.Log.Warn().Str("ahu", id).Time("checkpoint", cp).Time("resume", earliest).Msg("behind the backfill horizon; older hours skipped")
			newFrom = earliest
		}
	}
	ar.From, ar.To, ar.Checkpoint = from, end, cp
	if !from.Before(end) {
		r.obs().SetLag(id, 0)
		return ar
	}
	states, err := r.Store.AlertStates(ctx, id)
	if err != nil {
		r.storeError(err)
		ar.Err = fmt.Errorf("read alert states: %w", err)
		return ar
	}
	rules, params := metrics.Rules(), r.Cfg.RuleParams()
	chunk := r.Chunk
	if chunk <= 0 {
		chunk = 24
	}
	total := int(end.Sub(from) / time.Hour)
	if total > chunk {
		r.Log.Info().Str("ahu", id).Time("from", from).Int("hours", total).Msg("catching up")
	}
	for cs := from; cs.Before(end); cs = cs.Add(time.Duration(chunk) * time.Hour) {
		ce := cs.Add(time.Duration(chunk) * time.Hour)
		if ce.After(end) {
			ce = end
		}
		var recs []metrics.Record
		var trs []metrics.Transition
		updates := map[string]metrics.Transition{} // the latest while-open update of each alert
		err := r.Source.Hours(ctx, []string{id}, cs, ce, func(h *metrics.Hour) error {
			if h.AHU != id || h.Start.Before(cs) || !h.Start.Before(ce) {
				return nil
			}
			rec := metrics.Compute(unit, h)
			recs = append(recs, rec)
			if !rec.HourStart.Before(newFrom) {
				var tr []metrics.Transition
				states, tr = metrics.Evaluate(rules, params, states, &rec)
				trs = append(trs, tr...)
				if w := r.Cfg.Webhook; w != nil {
					for _, u := range metrics.UpdatesDue(states, w.UpdateEvery) {
						updates[u.Alert.ID] = u
					}
				}
			}
			return nil
		})
		if err != nil {
			r.storeError(err)
			ar.Err = fmt.Errorf("read hours %s..%s: %w", cs.Format(time.RFC3339), ce.Format(time.RFC3339), err)
			return ar
		}
		if len(recs) == 0 {
			ar.Err = fmt.Errorf("the source gave no hours for %s..%s", cs.Format(time.RFC3339), ce.Format(time.RFC3339))
			return ar
		}
		through := recs[len(recs)-1].HourStart
		if has && through.Before(cp) {
			through = cp // re-computing old hours never moves the checkpoint back
		}
		t0 := time.Now()
		up := store.AlertUpdate{States: states, Transitions: trs, Updates: latestUpdates(updates, states)}
		if w := r.Cfg.Webhook; w != nil && w.MaxAge > 0 {
			// A catch-up computes transitions of days ago: the sender
			// would drop them, one by one, as older than max_age.
			up.QueueFrom = r.now().Add(-w.MaxAge)
			for _, t := range trs {
				if t.At.Before(up.QueueFrom) {
					ar.NotQueued++
				}
			}
		}
		err = r.Store.Commit(ctx, id, recs, up, through)
		r.obs().ObserveWrite(time.Since(t0), err)
		if err != nil {
			r.storeError(err)
			ar.Err = fmt.Errorf("write hours %s..%s: %w", cs.Format(time.RFC3339), ce.Format(time.RFC3339), err)
			return ar
		}
		r.obs().SetStoreUp(true, "")
		cp, has = through, true
		ar.Checkpoint = cp
		ar.Hours += len(recs)
		r.obs().HoursComputed(id, len(recs))
		for _, t := range trs {
			switch t.To {
			case metrics.StatusOpen:
				ar.Opened++
			case metrics.StatusClosed:
				ar.Closed++
			}
			r.Log.Info().Str("ahu", id).Str("alert", t.Alert.Kind).Str("status", string(t.To)).Str("reason", t.Alert.Told()).Msg("alert")
		}
		if len(trs) > 0 && r.Delivered != nil {
			r.Delivered()
		}
		if total > chunk {
			r.Log.Info().Str("ahu", id).Time("through", through).Int("done", int(ce.Sub(from)/time.Hour)).Int("of", total).Msg("backfill progress")
		}
	}
	r.obs().SetLag(id, slot.Sub(cp).Hours())
	return ar
}

// latestUpdates are the while-open updates to queue after a chunk: the
// latest of each alert still open at its end (a catch-up of many hours
// posts an alert's figures once, not once an hour; one that closed posts
// its close), in kind order.
func latestUpdates(updates map[string]metrics.Transition, states map[string]metrics.Alert) []metrics.Transition {
	var out []metrics.Transition
	for _, a := range states {
		if u, ok := updates[a.ID]; ok && a.Status == metrics.StatusOpen {
			out = append(out, u)
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Alert.Kind < out[j].Alert.Kind })
	return out
}

// ErrNothingOwned reports a shard that owns no air handler.
var ErrNothingOwned = errors.New("this shard owns no air handler")
