package agent

import (
	"context"
	"fmt"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/metrics"
	"github.com/robfig/cron/v3"
	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestShard_CoversEachOnce(t *testing.T) {
	var ahus []string
	for i := 0; i < 600; i++ {
		ahus = append(ahus, fmt.Sprintf("AHU-%03d", i))
	}
	owner := func(n int) map[string]int {
		m := map[string]int{}
		for _, a := range ahus {
			owners := 0
			for i := 0; i < n; i++ {
				if (Shard{i, n}).Owns("campus-north", a) {
					m[a] = i
					owners++
				}
			}
			require.Equal(t, 1, owners, "%s has exactly one owner among %d", a, n)
		}
		return m
	}
	four, five := owner(4), owner(5)
	// Balance: each of 4 replicas takes about a quarter (binomial spread,
	// 600 units: 150 ± 3σ ≈ 150 ± 32).
	counts := map[int]int{}
	for _, i := range four {
		counts[i]++
	}
	for i := 0; i < 4; i++ {
		assert.InDelta(t, 150, counts[i], 32, "replica %d", i)
	}
	// Going from 4 to 5 replicas moves only the units the new replica wins
	// (about a fifth), never a unit between two old replicas.
	moved := 0
	for _, a := range ahus {
		if four[a] != five[a] {
			moved++
			assert.Equal(t, 4, five[a], "%s moved between old replicas", a)
		}
	}
	assert.InDelta(t, 120, moved, 35)
}

func TestParseShard(t *testing.T) {
	sh, err := ParseShard("2/3")
	require.NoError(t, err)
	assert.Equal(t, Shard{2, 3}, sh)
	for _, bad := range []string{"3/3", "-1/2", "1", "a/b", "0/0", "0/3x", "+1/3", "1/ 3"} {
		_, err := ParseShard(bad)
		assert.ErrorContains(t, err, "i/n", bad)
	}
	assert.True(t, Shard{}.Owns("x", "y"), "the zero shard owns everything")
}

// TestServe_CatchUpAndShutdown: the agent runs at once on start, and stops
// promptly when its context ends.
func TestServe_CatchUpAndShutdown(t *testing.T) {
	cfg := runnerConfig(t)
	store, src := newMemResults(), &spanSource{}
	r := &Runner{Cfg: cfg, Source: src, Store: store, Log: zerolog.Nop(),
		Clock: func() time.Time { return time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC) }}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error)
	go func() { done <- r.Serve(ctx, 5*time.Second) }()
	require.Eventually(t, func() bool {
		store.mu.Lock()
		defer store.mu.Unlock()
		return len(store.cp) == 2
	}, 5*time.Second, 10*time.Millisecond)
	cancel()
	select {
	case err := <-done:
		require.NoError(t, err)
	case <-time.After(5 * time.Second):
		t.Fatal("Serve did not stop")
	}
}

// fakeClock is a SchedulerClock that moves only when the test says so.
// Every After signals waiting, so the test knows Serve is parked on it.
type fakeClock struct {
	mu      sync.Mutex
	now     time.Time
	timers  []fakeTimer
	waiting chan time.Duration
}

type fakeTimer struct {
	at time.Time
	ch chan time.Time
}

func newFakeClock(now time.Time) *fakeClock {
	return &fakeClock{now: now, waiting: make(chan time.Duration, 16)}
}

func (f *fakeClock) Now() time.Time {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.now
}

func (f *fakeClock) After(d time.Duration) <-chan time.Time {
	f.mu.Lock()
	ch := make(chan time.Time, 1)
	f.timers = append(f.timers, fakeTimer{at: f.now.Add(d), ch: ch})
	f.mu.Unlock()
	f.waiting <- d
	return ch
}

// Advance moves the clock by d and fires the timers due by then.
func (f *fakeClock) Advance(d time.Duration) {
	f.mu.Lock()
	defer f.mu.Unlock()
	f.now = f.now.Add(d)
	kept := f.timers[:0]
	for _, t := range f.timers {
		if t.at.After(f.now) {
			kept = append(kept, t)
			continue
		}
		t.ch <- f.now
	}
	f.timers = kept
}

// blockingSource holds every read until released or cancelled, and says
// when a read started and how it ended.
type blockingSource struct {
	started chan struct{}
	release chan struct{}
	ended   chan error
}

func newBlockingSource() *blockingSource {
	return &blockingSource{started: make(chan struct{}, 8), release: make(chan struct{}), ended: make(chan error, 8)}
}

func (s *blockingSource) Hours(ctx context.Context, _ []string, _, _ time.Time, _ func(*metrics.Hour) error) error {
	s.started <- struct{}{}
	select {
	case <-s.release:
		s.ended <- nil
		return nil
	case <-ctx.Done():
		s.ended <- ctx.Err()
		return ctx.Err()
	}
}

// skipCounter counts the skipped ticks.
type skipCounter struct {
	nopObserver
	skipped atomic.Int32
}

func (c *skipCounter) RunSkipped() { c.skipped.Add(1) }

// within fails the test when ch yields nothing in a generous real time; it
// guards against a hang, it does not time the code.
func within[T any](t *testing.T, ch <-chan T, what string) T {
	t.Helper()
	select {
	case v := <-ch:
		return v
	case <-time.After(10 * time.Second):
		t.Fatalf("%s did not happen", what)
		panic("unreachable")
	}
}

// serveWithClock starts Serve (hourly at minute 5, the configuration's
// schedule) on a fake clock with a source that blocks; it waits for the
// catch-up run to start and for Serve to park on its next tick.
func serveWithClock(t *testing.T, grace time.Duration) (clk *fakeClock, src *blockingSource, obs *skipCounter, cancel func(), done chan error) {
	t.Helper()
	cfg := runnerConfig(t)
	cfg.Schedule.Cron = "5 * * * *"
	clk = newFakeClock(time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC))
	src, obs = newBlockingSource(), &skipCounter{}
	r := &Runner{Cfg: cfg, Source: src, Store: newMemResults(), Log: zerolog.Nop(), Obs: obs, Scheduler: clk,
		Clock: func() time.Time { return time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC) }}
	ctx, stop := context.WithCancel(context.Background())
	done = make(chan error, 1)
	go func() { done <- r.Serve(ctx, grace) }()
	within(t, src.started, "the catch-up run")
	// 10:07 -> the next tick at 11:05.
	assert.Equal(t, 58*time.Minute, within(t, clk.waiting, "waiting for the next tick"))
	return clk, src, obs, stop, done
}

// TestServe_SkipsOverlappingTick: a tick that comes while the previous run
// is still going starts nothing and is counted.
func TestServe_SkipsOverlappingTick(t *testing.T) {
	clk, src, obs, cancel, done := serveWithClock(t, time.Minute)
	clk.Advance(58 * time.Minute) // 11:05, the catch-up run still going
	assert.Equal(t, time.Hour, within(t, clk.waiting, "waiting for the tick after"))
	assert.Equal(t, int32(1), obs.skipped.Load(), "the overlapping tick is skipped and counted")
	select {
	case <-src.started:
		t.Fatal("a second run started while the first was going")
	default:
	}

	cancel()
	close(src.release) // the catch-up run ends within the grace
	require.NoError(t, within(t, done, "Serve's return"))
	assert.Equal(t, int32(1), obs.skipped.Load())
}

// TestServe_GraceThenCancel: on shutdown the run in flight gets the grace;
// when the grace has passed its context is cancelled and Serve returns.
func TestServe_GraceThenCancel(t *testing.T) {
	clk, src, _, cancel, done := serveWithClock(t, 30*time.Second)
	cancel()
	assert.Equal(t, 30*time.Second, within(t, clk.waiting, "the grace timer"))
	select {
	case err := <-done:
		t.Fatalf("Serve returned %v before the grace passed", err)
	case err := <-src.ended:
		t.Fatalf("the run in flight ended (%v) before the grace passed", err)
	default:
	}
	clk.Advance(30 * time.Second)
	assert.ErrorIs(t, within(t, src.ended, "the end of the run in flight"), context.Canceled, "the abandoned run is cancelled")
	require.NoError(t, within(t, done, "Serve's return"))
}

// TestServe_RunEndsWithinGrace: a run that ends within the grace finishes
// undisturbed.
func TestServe_RunEndsWithinGrace(t *testing.T) {
	clk, src, _, cancel, done := serveWithClock(t, 30*time.Second)
	cancel()
	within(t, clk.waiting, "the grace timer")
	close(src.release)
	require.NoError(t, within(t, src.ended, "the end of the run"), "not cancelled")
	require.NoError(t, within(t, done, "Serve's return"))
}

// endingSchedule fires on every hour before end and never after.
type endingSchedule struct{ end time.Time }

func (s endingSchedule) Next(t time.Time) time.Time {
	if !t.Before(s.end) {
		return time.Time{}
	}
	return t.Truncate(time.Hour).Add(time.Hour)
}

// runCounter counts the runs started.
type runCounter struct {
	nopObserver
	started atomic.Int32
}

func (c *runCounter) RunStarted() { c.started.Add(1) }

// TestServe_ScheduleEnds: a schedule with no next run stops scheduling
// with an error naming schedule.cron, at start before any run and later
// after the last tick, instead of waiting for its zero time (long past)
// and so starting run after run at once.
func TestServe_ScheduleEnds(t *testing.T) {
	start := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	serve := func(end time.Time) (*fakeClock, *runCounter, chan error) {
		parseCron = func(string) (cron.Schedule, error) { return endingSchedule{end: end}, nil }
		t.Cleanup(func() { parseCron = config.ParseCron })
		clk, obs := newFakeClock(start), &runCounter{}
		r := &Runner{Cfg: runnerConfig(t), Source: &spanSource{}, Store: newMemResults(), Log: zerolog.Nop(), Obs: obs, Scheduler: clk,
			Clock: func() time.Time { return start }}
		done := make(chan error, 1)
		go func() { done <- r.Serve(context.Background(), time.Minute) }()
		return clk, obs, done
	}
	t.Run("at start", func(t *testing.T) {
		_, obs, done := serve(start)
		err := within(t, done, "Serve's return")
		var ce *config.CronError
		require.ErrorAs(t, err, &ce)
		assert.ErrorContains(t, err, "schedule.cron")
		assert.ErrorContains(t, err, "no run after 2026-07-14T10:07:00Z")
		assert.Zero(t, obs.started.Load(), "no run starts")
	})
	t.Run("later", func(t *testing.T) {
		clk, obs, done := serve(time.Date(2026, 7, 14, 12, 0, 0, 0, time.UTC)) // ticks at 11:00 and 12:00, then none
		assert.Equal(t, 53*time.Minute, within(t, clk.waiting, "waiting for 11:00"))
		clk.Advance(53 * time.Minute)
		assert.Equal(t, time.Hour, within(t, clk.waiting, "waiting for 12:00"))
		clk.Advance(time.Hour)
		err := within(t, done, "Serve's return")
		var ce *config.CronError
		require.ErrorAs(t, err, &ce)
		assert.ErrorContains(t, err, "no run after 2026-07-14T12:00:00Z")
		assert.LessOrEqual(t, obs.started.Load(), int32(3), "the catch-up and two ticks at most")
	})
}

// idleRecorder records the idle note and counts the runs started.
type idleRecorder struct {
	runCounter
	mu   sync.Mutex
	note string
}

func (c *idleRecorder) SetIdle(note string) { c.mu.Lock(); c.note = note; c.mu.Unlock() }

// TestServe_NothingOwned: a runner given an empty share (a replica the
// split left without air handlers) stays up, reports itself idle with the
// fix, runs nothing (an empty share is not nil, which is all of them) and
// stops cleanly.
func TestServe_NothingOwned(t *testing.T) {
	cfg := runnerConfig(t)
	// Two air handlers among eight replicas: six own nothing.
	var owned []string
	for i := 0; i < 8 && (owned == nil || len(owned) > 0); i++ {
		owned = Shard{Index: i, Count: 8}.Owned(cfg)
	}
	require.NotNil(t, owned, "an empty share is not nil")
	require.Empty(t, owned)
	store, obs := newMemResults(), &idleRecorder{}
	r := &Runner{Cfg: cfg, Source: &spanSource{}, Store: store, Log: zerolog.Nop(), Obs: obs, AHUs: owned,
		Clock: func() time.Time { return time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC) }}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- r.Serve(ctx, time.Minute) }()
	require.Eventually(t, func() bool {
		obs.mu.Lock()
		defer obs.mu.Unlock()
		return obs.note != ""
	}, 5*time.Second, 10*time.Millisecond)
	select {
	case err := <-done:
		t.Fatalf("Serve returned %v with its context still going", err)
	default:
	}
	cancel()
	require.NoError(t, within(t, done, "Serve's return"))
	assert.Contains(t, obs.note, "owns no air handler")
	assert.Contains(t, obs.note, "fewer replicas")
	assert.Zero(t, obs.started.Load(), "no run")
	assert.Zero(t, store.commits)
}
