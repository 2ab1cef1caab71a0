package agent

import (
	"context"
	"fmt"
	"hash/fnv"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/dewline/dewline/agent/config"
)

// SchedulerClock is the time the schedule runs on: Serve asks it for now,
// for a channel that fires at the next tick and for one that ends the
// grace of a shutdown. Tests pass their own, so that ticks and grace pass
// without waiting.
type SchedulerClock interface {
	Now() time.Time
	After(d time.Duration) <-chan time.Time
}

// realClock is the wall clock.
type realClock struct{}

func (realClock) Now() time.Time                         { return time.Now() }
func (realClock) After(d time.Duration) <-chan time.Time { return time.After(d) }

// parseCron reads schedule.cron; tests replace it with a schedule that
// ends, which config.ParseCron never returns.
var parseCron = config.ParseCron

// NothingOwned and NothingOwnedFix are what a shard that owns no air
// handler says: the split by hash can leave a replica without any even
// with fewer replicas than air handlers, and it is not an error.
const (
	NothingOwned    = "this shard owns no air handler"
	NothingOwnedFix = "it runs nothing and takes air handlers as the configuration grows; to use it now, run fewer replicas (spec.replicas and the n of --shard together)"
)

// MarkIdle tells the observer, when the runner owns no air handler (AHUs
// empty, not nil: a shard left empty), that it runs nothing and why, and
// reports whether it does. Serve calls it; a caller that serves readiness
// before Serve starts calls it first, so that no probe sees the idle agent
// without its note.
func (r *Runner) MarkIdle() bool {
	if r.AHUs == nil || len(r.AHUs) > 0 {
		return false
	}
	r.obs().SetIdle(NothingOwned + "; " + NothingOwnedFix)
	return true
}

// Serve runs the runner on the configured cron schedule (in the site's time
// zone) until ctx ends: once at start to catch up, then at every tick. Runs
// never overlap: a tick that finds the previous run still going is skipped
// and counted. Each run gets the configured timeout. When ctx ends, no new
// run starts; the one in flight has grace to finish, then its context is
// cancelled: its commits are atomic, so an abandoned run never moves a
// checkpoint past an unwritten hour. Time is Runner.Scheduler's, the wall
// clock by default. A runner whose AHUs are empty (not nil: a shard that
// owns nothing) runs nothing, reports itself idle and waits for ctx. A
// schedule with no next run stops scheduling: Serve
// then waits for the run in flight (within grace) and returns a
// *config.CronError.
func (r *Runner) Serve(ctx context.Context, grace time.Duration) error {
	sched, err := parseCron(r.Cfg.Schedule.Cron)
	if err != nil {
		return err
	}
	if r.MarkIdle() {
		// A shard that owns nothing stays up and ready, and runs nothing:
		// exiting would make a StatefulSet restart it again and again.
		<-ctx.Done()
		r.Log.Info().Msg("agent stopped")
		return nil
	}
	clk := r.Scheduler
	if clk == nil {
		clk = realClock{}
	}
	// Runs use their own context so that a shutdown can give the one in
	// flight its grace before cancelling it.
	runCtx, cancelRuns := context.WithCancel(context.WithoutCancel(ctx))
	defer cancelRuns()
	var running atomic.Bool
	var wg sync.WaitGroup
	job := func() {
		if !running.CompareAndSwap(false, true) {
			r.obs().RunSkipped()
			r.Log.Warn().Msg("run skipped: the previous run is still going")
			return
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer running.Store(false)
			c, cancel := context.WithTimeout(runCtx, r.Cfg.Schedule.Timeout)
			defer cancel()
			if _, err := r.RunOnce(c); err != nil {
				r.Log.Error().Err(err).Msg("run failed")
			}
		}()
	}
	// The schedule's ticks are in the site's zone (a daily "0 6 * * *" is
	// 06:00 there, across daylight saving).
	next := func() time.Time { return sched.Next(clk.Now().In(r.Cfg.Location)) }
	// A schedule that ends (the parser gives up after five years without
	// a match) stops scheduling: its zero time is long past, and waiting
	// for it would start run after run at once.
	ended := func() error {
		return &config.CronError{Spec: r.Cfg.Schedule.Cron, Msg: fmt.Sprintf("the schedule has no run after %s", clk.Now().In(r.Cfg.Location).Format(time.RFC3339)),
			Fix: "choose one that fires at least once a year, e.g. \"7 * * * *\" for every hour, and restart"}
	}
	if next().IsZero() {
		return ended()
	}
	job() // catch up at start
	r.Log.Info().Str("schedule", r.Cfg.Schedule.Cron).Str("zone", r.Cfg.Location.String()).Time("next", next()).Msg("agent started")
	var stopErr error
	for stop := false; !stop; {
		at := next()
		if at.IsZero() {
			stopErr = ended()
			break
		}
		select {
		case <-ctx.Done():
			stop = true
		case <-clk.After(at.Sub(clk.Now())):
			if !clk.Now().Before(at) { // not woken early by a wall clock set back
				job()
			}
		}
	}
	done := make(chan struct{})
	go func() { wg.Wait(); close(done) }()
	select {
	case <-done:
	case <-clk.After(grace):
		r.Log.Warn().Dur("grace_ms", grace).Msg("abandoning the run in flight")
		cancelRuns()
		<-done
	}
	r.Log.Info().Msg("agent stopped")
	return stopErr
}

// Shard is one of N replicas sharing a portfolio; the zero value owns all.
type Shard struct {
	Index, Count int
}

// shardForms is the fix named by every ParseShard error.
const shardForms = "write it as i/n with 0 <= i < n (e.g. 0/3), or as a StatefulSet pod name and n (e.g. dewline-0/3, from $(POD_NAME)/3)"

// ParseShard reads "i/n" (0 <= i < n), or "NAME-i/n" where NAME-i is the
// name of a StatefulSet's pod (Kubernetes names them after the set with
// the ordinal last), so that a manifest can pass "$(POD_NAME)/n" and every
// replica finds its index without a script. Only the ordinal after the
// last '-' counts; it must be below n. Errors start with "shard" and the
// value, and name the forms that work.
func ParseShard(s string) (Shard, error) {
	left, right, ok := strings.Cut(s, "/")
	n, err := strconv.Atoi(right)
	if !ok || err != nil || n < 1 || strings.ContainsAny(right, "+-") {
		return Shard{}, fmt.Errorf("shard %q: n after the '/' must be a whole number of replicas, at least 1; %s", s, shardForms)
	}
	if strings.Contains(left, "$(") {
		return Shard{}, fmt.Errorf("shard %q: the pod name was not filled in; give the container the env variable POD_NAME from metadata.name (the downward API), or %s", s, shardForms)
	}
	ordinal, what := left, "index"
	if k := strings.LastIndex(left, "-"); k >= 0 && !isDigits(left) {
		name := left[:k]
		if name == "" || strings.HasSuffix(name, "-") {
			return Shard{}, fmt.Errorf("shard %q: %q is not a pod name; %s", s, left, shardForms)
		}
		ordinal, what = left[k+1:], "pod ordinal"
	}
	if !isDigits(ordinal) {
		return Shard{}, fmt.Errorf("shard %q: no replica index before the '/'; %s", s, shardForms)
	}
	i, err := strconv.Atoi(ordinal)
	if err != nil || i >= n {
		fix := shardForms
		if what == "pod ordinal" {
			fix = "n must be the StatefulSet's spec.replicas; " + fix
		}
		return Shard{}, fmt.Errorf("shard %q: %s %s is not below n = %d; %s", s, what, ordinal, n, fix)
	}
	return Shard{Index: i, Count: n}, nil
}

// isDigits reports whether s is one or more ASCII digits.
func isDigits(s string) bool {
	if s == "" {
		return false
	}
	for _, c := range s {
		if c < '0' || c > '9' {
			return false
		}
	}
	return true
}

// Owns reports whether this shard takes the air handler ahu of site by
// rendezvous (highest random weight) hashing: every replica computes the
// same owner without coordination, and changing n moves only the air
// handlers whose winning replica changed (about 1/n of them).
func (sh Shard) Owns(site, ahu string) bool {
	if sh.Count <= 1 {
		return true
	}
	best, bestScore := -1, uint64(0)
	for i := 0; i < sh.Count; i++ {
		h := fnv.New64a()
		fmt.Fprintf(h, "%s\x00%s\x00%d", site, ahu, i)
		// fnv alone mixes the low bits poorly for short keys; finish with
		// the SplitMix64 finaliser.
		x := h.Sum64()
		x ^= x >> 30
		x *= 0xbf58476d1ce4e5b9
		x ^= x >> 27
		x *= 0x94d049bb133111eb
		x ^= x >> 31
		if best < 0 || x > bestScore {
			best, bestScore = i, x
		}
	}
	return best == sh.Index
}

// Owned returns the configuration's air handlers this shard takes, sorted;
// never nil, so that a Runner given none runs none (its nil AHUs is all).
func (sh Shard) Owned(cfg *config.Config) []string {
	out := []string{}
	for _, a := range cfg.AirHandlers {
		if sh.Owns(cfg.Site.ID, a.ID) {
			out = append(out, a.ID)
		}
	}
	sort.Strings(out)
	return out
}
