package agent

import (
	"context"
	"errors"
	"fmt"
	"runtime/debug"
	"sort"
	"strings"
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
	// SetIdle marks an agent that runs nothing by design, with why.
	SetIdle(note string)
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
func (nopObserver) SetIdle(string)                    {}

// Runner computes the pending hours of every air handler it owns and
// writes them back, moving each air handler's checkpoint only once its
// hours are written.
//
// One run, for the slot S (the start of the last complete hour, never the
// current one):
//
//	checkpoints and alert states of every air handler (of this shard), at once
//	for each air handler:
//	  checkpoint C  ->  hours from min(C+1h, S+1h-lookback), not before S+1h-backfill, to S
//	for each group of air handlers that start at the same hour:
//	  per day of those hours, oldest first:
//	    source (trend store, one read for the group) -> aligned hours -> metrics.Compute
//	    alert rules run on hours after C only (re-computed hours never re-alert)
//	    store.Commit(records, alert states, events, checkpoint) per air handler
//	      <- atomic per air handler, one batch for the group
//	  a failure or panic stops that air handler, not the others;
//	  a read that times out stops the run's reads
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
	// ReadBatch is how many air-handler hours one read of the source may
	// cover (air handlers that resume at the same hour are read together,
	// a chunk at a time); default DefaultReadBatch.
	ReadBatch int
	// StoreDown tells a store outage (unreachable, timing out, failing)
	// from an error of one air handler (a point that matches several
	// series); only an outage marks the store down. Nil takes every error
	// as an outage.
	StoreDown func(error) bool
	// Scheduler is the clock Serve's ticks and shutdown grace run on;
	// nil is the wall clock.
	Scheduler SchedulerClock
	// ConfigPath is the configuration file as the command was given it,
	// for the command that fills hours skipped behind the backfill horizon
	// (FillCommand); empty names it FILE.
	ConfigPath string

	// halted is set, during a run, once a read of the store has timed
	// out: the run reads no more (see halt).
	halted *stall
}

// stall is the read that timed out and stopped a run's reads.
type stall struct {
	cs, ce time.Time
	ahus   []string
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
	Checkpoint time.Time // the air handler's last hour written; see CheckpointKnown
	// CheckpointKnown is false when the checkpoint could not be read (the
	// store down): Checkpoint is then zero and says nothing.
	CheckpointKnown bool
	Opened          int
	Closed          int
	// NotQueued counts the transitions recorded but not queued for the
	// webhook: older than webhook.max_age when computed (a catch-up).
	NotQueued int
	Err       error
}

// CheckpointText says where the air handler stands: "checkpoint" and the
// hour (RFC 3339, UTC), "checkpoint unknown" when it could not be read, or
// "no checkpoint yet" before its first hour is written.
func (a AHUReport) CheckpointText() string {
	switch {
	case !a.CheckpointKnown:
		return "checkpoint unknown"
	case a.Checkpoint.IsZero():
		return "no checkpoint yet"
	}
	return "checkpoint " + a.Checkpoint.UTC().Format(time.RFC3339)
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
//
// Air handlers that resume from the same hour run together: their
// checkpoints and alert states are read at once (store.StateLoader), each
// chunk of their hours is one call of the source for all of them (up to
// ReadBatch air-handler hours), and its results are one commit
// (store.BatchCommitter). Should a group's read fail, its air handlers are
// run one by one again (until two in a row find the store down), so that
// only the one at fault fails, unless the read timed out: then the run
// reads no more (readFailed). A commit that fails for a reason of its own
// rather than an outage is written again air handler by air handler.
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
	runs := r.plan(ctx, ahus, slot)
	r.halted = nil
	for _, g := range r.groups(runs, slot) {
		if err := ctx.Err(); err != nil {
			for _, a := range g {
				a.fail(err)
			}
			continue
		}
		if r.halted != nil {
			for _, a := range g {
				a.fail(r.halted.notRead(a.from, slot.Add(time.Hour)))
			}
			continue
		}
		r.runGroup(ctx, g, slot)
	}
	open, notQueued := 0, 0
	for _, a := range runs {
		ar := a.rep
		rep.AHUs = append(rep.AHUs, ar)
		rep.Hours += ar.Hours
		notQueued += ar.NotQueued
		if ar.Err != nil {
			r.obs().AHUFailed(a.id)
			r.Log.Error().Str("ahu", a.id).Err(ar.Err).Msg("air handler run failed")
			continue // its store may be down: do not ask it again
		}
		if !a.loaded {
			states, err := r.Store.AlertStates(ctx, a.id)
			if err != nil {
				continue
			}
			a.states = states
		}
		for _, st := range a.states {
			if st.Status == metrics.StatusOpen {
				open++
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

// ahuRun is one air handler's part in a run.
type ahuRun struct {
	id      string
	spec    *metrics.AirHandler
	cp      time.Time
	has     bool
	from    time.Time // first hour to compute
	newFrom time.Time // hours from here on are new: alert rules run on them
	total   int       // hours to compute
	states  map[string]metrics.Alert
	loaded  bool // states read from the store
	rep     AHUReport
}

func (a *ahuRun) fail(err error) {
	if a.rep.Err == nil {
		a.rep.Err = err
	}
}

// chunkHours is how many hours are committed at once.
func (r *Runner) chunkHours() int {
	if r.Chunk <= 0 {
		return 24
	}
	return r.Chunk
}

// plan reads every air handler's checkpoint and alert states (at once when
// the store can) and works out the hours it needs. An air handler whose
// state cannot be read fails; one with nothing to do is done.
func (r *Runner) plan(ctx context.Context, ahus []string, slot time.Time) []*ahuRun {
	runs := make([]*ahuRun, len(ahus))
	var pre map[string]store.AHUState
	var preErr error
	if sl, ok := r.Store.(store.StateLoader); ok && len(ahus) > 0 {
		if pre, preErr = sl.LoadStates(ctx, ahus); preErr != nil {
			r.storeError(preErr)
		}
	}
	end := slot.Add(time.Hour) // exclusive
	earliest := end.Add(-r.Cfg.Schedule.Backfill)
	for i, id := range ahus {
		a := &ahuRun{id: id}
		a.rep.AHU = id
		runs[i] = a
		if err := ctx.Err(); err != nil {
			a.fail(err)
			continue
		}
		ac, ok := r.Cfg.AirHandler(id)
		if !ok {
			a.fail(fmt.Errorf("no air handler %q in the configuration", id))
			continue
		}
		a.spec = r.Cfg.Spec(ac)
		if preErr != nil {
			a.fail(fmt.Errorf("read checkpoint: %w", preErr))
			continue
		}
		if pre != nil {
			st := pre[id]
			a.cp, a.has, a.states, a.loaded = st.Checkpoint, st.HasCheckpoint, st.Alerts, true
			if a.states == nil {
				a.states = map[string]metrics.Alert{}
			}
		} else {
			cp, has, err := r.Store.Checkpoint(ctx, id)
			if err != nil {
				r.storeError(err)
				a.fail(fmt.Errorf("read checkpoint: %w", err))
				continue
			}
			a.cp, a.has = cp, has
		}
		a.from, a.newFrom = earliest, earliest
		if a.has {
			a.newFrom = a.cp.Add(time.Hour)
			a.from = a.newFrom
			if lb := end.Add(-r.Cfg.Schedule.Lookback); lb.Before(a.from) {
				a.from = lb
			}
			if a.from.Before(earliest) {
				a.from = earliest
			}
			if a.newFrom.Before(earliest) {
				// Further behind than the backfill horizon, which bounds a
				// run's work: the gap is left to the command logged, and
				// alerts restart from here.
				r.Log.Warn().Str("ahu", id).Time("checkpoint", a.cp).Time("from", a.newFrom).Time("to", earliest).
					Int("hours", int(earliest.Sub(a.newFrom)/time.Hour)).Time("resume", earliest).
					Str("fill", FillCommand(r.ConfigPath, id, a.newFrom, earliest)).
					Msg("behind the backfill horizon (schedule.backfill): the hours from..to are skipped; the command in fill computes and stores them")
				a.newFrom = earliest
			}
		}
		a.rep.From, a.rep.To, a.rep.Checkpoint, a.rep.CheckpointKnown = a.from, end, a.cp, true
		if !a.from.Before(end) {
			r.obs().SetLag(id, 0)
			continue
		}
		a.total = int(end.Sub(a.from) / time.Hour)
		if !a.loaded {
			states, err := r.Store.AlertStates(ctx, id)
			if err != nil {
				r.storeError(err)
				a.fail(fmt.Errorf("read alert states: %w", err))
				continue
			}
			a.states, a.loaded = states, true
		}
		if a.total > r.chunkHours() {
			r.Log.Info().Str("ahu", id).Time("from", a.from).Int("hours", a.total).Msg("catching up")
		}
	}
	return runs
}

// FillCommand is the command line that computes the hours [from, to) of
// air handler ahu and writes them to the configured store: "dewline
// analyze", whose --to excludes a time, with the bounds in UTC.
func FillCommand(configPath, ahu string, from, to time.Time) string {
	if configPath == "" {
		configPath = "FILE"
	}
	return strings.Join([]string{"dewline analyze --config", shellWord(configPath), "--ahu", shellWord(ahu),
		"--from", from.UTC().Format(time.RFC3339), "--to", to.UTC().Format(time.RFC3339)}, " ")
}

// shellWord quotes s for a POSIX shell when it holds more than letters,
// digits and -_./:=@+,.
func shellWord(s string) string {
	plain := s != "" && strings.IndexFunc(s, func(c rune) bool {
		return !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || strings.ContainsRune("-_./:=@+,", c))
	}) < 0
	if plain {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// DefaultReadBatch is Runner.ReadBatch's default: air-handler hours per
// read of the source.
const DefaultReadBatch = 300

// groups gathers the air handlers with work to do that start at the same
// hour, in their order, into groups of at most ReadBatch air-handler hours
// per chunk.
func (r *Runner) groups(runs []*ahuRun, slot time.Time) [][]*ahuRun {
	limit := r.ReadBatch
	if limit <= 0 {
		limit = DefaultReadBatch
	}
	per := map[time.Time]int{} // open group of each start hour
	var out [][]*ahuRun
	for _, a := range runs {
		if a.rep.Err != nil || a.total == 0 {
			continue
		}
		hours := min(a.total, r.chunkHours())
		if g, ok := per[a.from]; ok && (len(out[g])+1)*hours <= limit {
			out[g] = append(out[g], a)
			continue
		}
		per[a.from] = len(out)
		out = append(out, []*ahuRun{a})
	}
	return out
}

// runGroup brings the air handlers of g, which start at the same hour, up
// to slot, a chunk at a time.
func (r *Runner) runGroup(ctx context.Context, g []*ahuRun, slot time.Time) {
	end := slot.Add(time.Hour)
	chunk := time.Duration(r.chunkHours()) * time.Hour
	for cs := g[0].from; cs.Before(end); cs = cs.Add(chunk) {
		ce := cs.Add(chunk)
		if ce.After(end) {
			ce = end
		}
		live := g[:0:0]
		for _, a := range g {
			if a.rep.Err == nil {
				live = append(live, a)
			}
		}
		if len(live) == 0 {
			break
		}
		if err := ctx.Err(); err != nil {
			for _, a := range live {
				a.fail(err)
			}
			break
		}
		if r.halted != nil {
			for _, a := range live {
				a.fail(r.halted.notRead(cs, end))
			}
			break
		}
		r.runChunk(ctx, live, cs, ce)
		for _, a := range live {
			if a.rep.Err == nil && a.total > r.chunkHours() {
				r.Log.Info().Str("ahu", a.id).Time("through", a.cp).Int("done", int(ce.Sub(a.from)/time.Hour)).Int("of", a.total).Msg("backfill progress")
			}
		}
	}
	for _, a := range g {
		if a.rep.Err == nil {
			r.obs().SetLag(a.id, slot.Sub(a.cp).Hours())
		}
	}
}

// chunkResult is what one chunk computed for one air handler.
type chunkResult struct {
	recs    []metrics.Record
	trs     []metrics.Transition
	states  map[string]metrics.Alert
	updates map[string]metrics.Transition // the latest while-open update of each alert
}

// runChunk computes and commits the hours [cs, ce) of the air handlers g.
// A failed read (or a panic) is charged by readFailed.
func (r *Runner) runChunk(ctx context.Context, g []*ahuRun, cs, ce time.Time) {
	res, own, err := r.compute(ctx, g, cs, ce)
	if err != nil {
		r.readFailed(ctx, g, cs, ce, own, err)
		return
	}
	var items []store.CommitItem
	var ok []*ahuRun
	var oks []chunkResult
	for i, a := range g {
		c := res[i]
		if len(c.recs) == 0 {
			a.fail(fmt.Errorf("the source gave no hours for %s..%s", cs.Format(time.RFC3339), ce.Format(time.RFC3339)))
			continue
		}
		through := c.recs[len(c.recs)-1].HourStart
		if a.has && through.Before(a.cp) {
			through = a.cp // re-computing old hours never moves the checkpoint back
		}
		up := store.AlertUpdate{States: c.states, Transitions: c.trs, Updates: latestUpdates(c.updates, c.states)}
		if w := r.Cfg.Webhook; w != nil && w.MaxAge > 0 {
			// A catch-up computes transitions of days ago: the sender
			// would drop them, one by one, as older than max_age.
			up.QueueFrom = r.now().Add(-w.MaxAge)
		}
		items = append(items, store.CommitItem{AHU: a.id, Records: c.recs, Alerts: up, Through: through})
		ok = append(ok, a)
		oks = append(oks, c)
	}
	if len(items) == 0 {
		return
	}
	errs := r.commit(ctx, items, cs, ce)
	delivered := false
	for i, a := range ok {
		if errs[i] != nil {
			a.fail(errs[i])
			continue
		}
		c, it := oks[i], items[i]
		a.cp, a.has, a.states = it.Through, true, c.states
		a.rep.Checkpoint = a.cp
		a.rep.Hours += len(c.recs)
		r.obs().HoursComputed(a.id, len(c.recs))
		for _, t := range c.trs {
			if !it.Alerts.QueueFrom.IsZero() && t.At.Before(it.Alerts.QueueFrom) {
				a.rep.NotQueued++
			}
			switch t.To {
			case metrics.StatusOpen:
				a.rep.Opened++
			case metrics.StatusClosed:
				a.rep.Closed++
			}
			r.Log.Info().Str("ahu", a.id).Str("alert", t.Alert.Kind).Str("status", string(t.To)).Str("reason", t.Alert.Told()).Msg("alert")
		}
		delivered = delivered || len(c.trs) > 0
	}
	if delivered && r.Delivered != nil {
		r.Delivered()
	}
}

// readFailed charges the failed read of the hours [cs, ce) of g (or a
// panic computing them, own) to its air handlers, each with an error that
// names the read it was part of.
//
// A read that timed out (an error with a Timeout method that says so, as
// net.Error has) is an outage of the store: asking it again, air handler
// by air handler, would only wait out the same timeout once per read. The
// run stops its reads there (halt); what it committed stays, and the next
// run resumes from the checkpoints.
//
// Any other failure of a group's read runs its air handlers again one by
// one, so that only the one at fault fails (a store whose every error
// counts as an outage, such as the embedded file, too); two outages in a
// row mean the store is down, and the rest fail without asking it again.
// The retry is logged with the group's error and what came of it.
func (r *Runner) readFailed(ctx context.Context, g []*ahuRun, cs, ce time.Time, own bool, err error) {
	mine := func(a *ahuRun) error {
		if own {
			return err
		}
		return readError(a.id, len(g), cs, ce, err)
	}
	stalled := !own && ctx.Err() == nil && isTimeout(err) && r.isOutage(err)
	if len(g) == 1 || stalled || ctx.Err() != nil {
		if !own {
			r.storeError(err)
		}
		for _, a := range g {
			a.fail(mine(a))
		}
		if stalled {
			r.halt(g, cs, ce, err)
		}
		return
	}
	down := 0
	var failed []string
	for k, a := range g {
		if r.halted != nil || down >= 2 {
			why := "not read alone: the two before it failed alone too"
			if r.halted != nil {
				why = "not read alone: this run stopped its reads when the store timed out"
			}
			for _, b := range g[k:] {
				b.fail(fmt.Errorf("%w; %s", mine(b), why))
				failed = append(failed, b.id)
			}
			break
		}
		r.runChunk(ctx, []*ahuRun{a}, cs, ce)
		if a.rep.Err == nil {
			down = 0
			continue
		}
		failed = append(failed, a.id)
		if r.isOutage(a.rep.Err) {
			down++
		} else {
			down = 0
		}
	}
	r.Log.Warn().Err(err).Time("from", cs).Time("to", ce).Strs("ahus", ids(g)).Strs("failed", failed).
		Msg("a group read failed; its air handlers were read again one by one")
}

// readError is the error of air handler ahu when the read of the hours
// [cs, ce) of it and n-1 others failed with err.
func readError(ahu string, n int, cs, ce time.Time, err error) error {
	span := cs.Format(time.RFC3339) + ".." + ce.Format(time.RFC3339)
	if n == 1 {
		return fmt.Errorf("read hours %s: %w", span, err)
	}
	return fmt.Errorf("read hours %s of %s, in one read with %d other air handlers: %w", span, ahu, n-1, err)
}

// isTimeout reports whether err says it is a timeout (net.Error's
// Timeout method, which the stores' request errors also have).
func isTimeout(err error) bool {
	var t interface{ Timeout() bool }
	return errors.As(err, &t) && t.Timeout()
}

// halt stops the run's reads after the read of the hours [cs, ce) of g
// timed out with err, and says so once.
func (r *Runner) halt(g []*ahuRun, cs, ce time.Time, err error) {
	r.halted = &stall{cs: cs, ce: ce, ahus: ids(g)}
	r.Log.Error().Err(err).Time("from", cs).Time("to", ce).Strs("ahus", r.halted.ahus).
		Msg("the store timed out: this run reads no more; what it wrote stays, and the next run resumes from the checkpoints")
}

// notRead is the error of an air handler whose hours [from, to) a halted
// run did not read.
func (s *stall) notRead(from, to time.Time) error {
	who := s.ahus[0]
	if len(s.ahus) > 1 {
		who = fmt.Sprintf("%s and %d other air handlers", who, len(s.ahus)-1)
	}
	return fmt.Errorf("hours %s..%s not read: this run stopped its reads when the store timed out reading the hours %s..%s of %s",
		from.Format(time.RFC3339), to.Format(time.RFC3339), s.cs.Format(time.RFC3339), s.ce.Format(time.RFC3339), who)
}

// ids are the air handlers of g.
func ids(g []*ahuRun) []string {
	out := make([]string, len(g))
	for i, a := range g {
		out[i] = a.id
	}
	return out
}

// isOutage reports whether err is the store's rather than one air handler's.
func (r *Runner) isOutage(err error) bool { return r.StoreDown == nil || r.StoreDown(err) }

// compute reads the hours [cs, ce) of g in one call of the source and
// computes them, evaluating the alert rules on the new ones. own reports
// an error of the computation (a panic) rather than of the source, whose
// error comes back as it was.
func (r *Runner) compute(ctx context.Context, g []*ahuRun, cs, ce time.Time) (res []chunkResult, own bool, err error) {
	defer func() {
		if p := recover(); p != nil {
			err, own = fmt.Errorf("panic: %v\n%s", p, debug.Stack()), true
		}
	}()
	rules, params := metrics.Rules(), r.Cfg.RuleParams()
	res = make([]chunkResult, len(g))
	idx := make(map[string]int, len(g))
	ids := make([]string, len(g))
	for i, a := range g {
		idx[a.id], ids[i] = i, a.id
		res[i].states = a.states
	}
	err = r.Source.Hours(ctx, ids, cs, ce, func(h *metrics.Hour) error {
		i, ok := idx[h.AHU]
		if !ok || h.Start.Before(cs) || !h.Start.Before(ce) {
			return nil
		}
		a, c := g[i], &res[i]
		rec := metrics.Compute(a.spec, h)
		c.recs = append(c.recs, rec)
		if !rec.HourStart.Before(a.newFrom) {
			var tr []metrics.Transition
			c.states, tr = metrics.Evaluate(rules, params, c.states, &rec)
			c.trs = append(c.trs, tr...)
			if w := r.Cfg.Webhook; w != nil {
				for _, u := range metrics.UpdatesDue(c.states, w.UpdateEvery) {
					if c.updates == nil {
						c.updates = map[string]metrics.Transition{}
					}
					c.updates[u.Alert.ID] = u
				}
			}
		}
		return nil
	})
	if err != nil {
		return nil, false, err
	}
	return res, false, nil
}

// commit writes items, in one batch when the store can, and returns each
// item's error. A batch that fails for a reason of its own (not an outage)
// is written again item by item.
func (r *Runner) commit(ctx context.Context, items []store.CommitItem, cs, ce time.Time) []error {
	errs := make([]error, len(items))
	wrap := func(err error) error {
		return fmt.Errorf("write hours %s..%s: %w", cs.Format(time.RFC3339), ce.Format(time.RFC3339), err)
	}
	if bc, ok := r.Store.(store.BatchCommitter); ok && len(items) > 1 {
		t0 := time.Now()
		err := bc.CommitBatch(ctx, items)
		r.obs().ObserveWrite(time.Since(t0), err)
		if err == nil {
			r.obs().SetStoreUp(true, "")
			return errs
		}
		if r.isOutage(err) || ctx.Err() != nil {
			r.storeError(err)
			for i := range errs {
				errs[i] = wrap(err)
			}
			return errs
		}
	}
	for i, it := range items {
		t0 := time.Now()
		err := r.Store.Commit(ctx, it.AHU, it.Records, it.Alerts, it.Through)
		r.obs().ObserveWrite(time.Since(t0), err)
		if err != nil {
			r.storeError(err)
			errs[i] = wrap(err)
			continue
		}
		r.obs().SetStoreUp(true, "")
	}
	return errs
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
