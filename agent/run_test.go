package agent

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"

	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/deploy/testkit"
)

// memResults is a fake result store.
type memResults struct {
	mu      sync.Mutex
	cp      map[string]time.Time
	recs    map[string]map[time.Time]metrics.Record
	states  map[string]map[string]metrics.Alert
	events  []metrics.Transition
	fail    error // every call fails with it while set
	commits int
}

func newMemResults() *memResults {
	return &memResults{cp: map[string]time.Time{}, recs: map[string]map[time.Time]metrics.Record{}, states: map[string]map[string]metrics.Alert{}}
}

func (m *memResults) Checkpoint(_ context.Context, ahu string) (time.Time, bool, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	if m.fail != nil {
		return time.Time{}, false, m.fail
	}
	t, ok := m.cp[ahu]
	return t, ok, nil
}

func (m *memResults) Commit(_ context.Context, ahu string, recs []metrics.Record, up store.AlertUpdate, through time.Time) error {
	m.mu.Lock()
	defer m.mu.Unlock()
	if m.fail != nil {
		return m.fail
	}
	if m.recs[ahu] == nil {
		m.recs[ahu] = map[time.Time]metrics.Record{}
	}
	for _, r := range recs {
		m.recs[ahu][r.HourStart] = r
	}
	m.states[ahu] = up.States
	m.events = append(m.events, up.Transitions...)
	m.cp[ahu] = through
	m.commits++
	return nil
}

func (m *memResults) AlertStates(_ context.Context, ahu string) (map[string]metrics.Alert, error) {
	m.mu.Lock()
	defer m.mu.Unlock()
	if m.fail != nil {
		return nil, m.fail
	}
	return m.states[ahu], nil
}

var _ store.ResultStore = (*memResults)(nil)

// spanSource yields every hour of [from, to) for each air handler, with
// dry entering air and reheat (so reheat_not_needed fires), or an error.
type spanSource struct {
	mu    sync.Mutex
	err   error
	panic string // an air handler whose hours make the source panic
	spans [][2]time.Time
	late  float64 // added to the supply temperature: a late correction of the data
	// failFor fails every read whose air handlers include it.
	failFor string
	calls   int // reads asked for
	widest  int // most air handlers in one read
}

func (s *spanSource) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	s.mu.Lock()
	s.spans = append(s.spans, [2]time.Time{from, to})
	err, late := s.err, s.late
	s.calls++
	s.widest = max(s.widest, len(ahus))
	for _, a := range ahus {
		if a == s.failFor && s.failFor != "" {
			err = errors.New("point \"SAT\" of " + a + " matches two series")
		}
	}
	s.mu.Unlock()
	if err != nil {
		// Named as ingest.StoreHours names its reads.
		if len(ahus) > 1 {
			return fmt.Errorf("read %d air handlers: %w", len(ahus), err)
		}
		return fmt.Errorf("read %s: %w", ahus[0], err)
	}
	for _, a := range ahus {
		if a == s.panic {
			panic("corrupt hour")
		}
		for h := from; h.Before(to); h = h.Add(time.Hour) {
			hr := &metrics.Hour{AHU: a, Start: h, Step: time.Minute, Values: map[metrics.Role][]float64{}, Quality: map[metrics.Role]metrics.RoleQuality{}}
			for r, v := range map[metrics.Role]float64{metrics.RoleEnteringTemp: 25, metrics.RoleEnteringRH: 0.35,
				metrics.RoleLeavingTemp: 12, metrics.RoleSupplyTemp: 18 + late, metrics.RoleSupplyFlow: 2} {
				vals := make([]float64, 60)
				for k := range vals {
					vals[k] = v + 0.01*float64(k%3)
				}
				hr.Values[r] = vals
			}
			if err := fn(hr); err != nil {
				return err
			}
		}
	}
	return nil
}

func runnerConfig(t *testing.T) *config.Config {
	t.Helper()
	cfg := twoAirHandlers(t)
	cfg.Schedule.Backfill = 48 * time.Hour
	cfg.Schedule.Lookback = 3 * time.Hour
	return cfg
}

func TestRunner_BackfillThenHourly(t *testing.T) {
	cfg := runnerConfig(t)
	store, src := newMemResults(), &spanSource{}
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	r := &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}

	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	slot := time.Date(2026, 7, 14, 9, 0, 0, 0, time.UTC)
	assert.Equal(t, slot, rep.Slot, "the last complete hour, never the current one")
	for _, a := range rep.AHUs {
		require.NoError(t, a.Err)
		assert.Equal(t, 48, a.Hours, "a fresh agent backfills the horizon")
		assert.Equal(t, slot, a.Checkpoint)
		assert.Equal(t, slot.Add(-47*time.Hour), a.From)
	}
	assert.Len(t, store.recs["AHU-X"], 48)
	assert.Equal(t, 2*2, store.commits, "48 hours commit as two days per air handler")
	opened := 0
	for _, tr := range store.events {
		if tr.To == metrics.StatusOpen && tr.Alert.Kind == metrics.AlertReheatNotNeeded {
			opened++
		}
	}
	assert.Equal(t, 2, opened, "reheat_not_needed opens once per air handler")

	// An hour later: the new hour plus the lookback are computed; no alert
	// is raised twice and the re-computed hours replace the old ones.
	now = now.Add(time.Hour)
	src.late = 0.5
	before := len(store.events)
	rep, err = r.RunOnce(context.Background())
	require.NoError(t, err)
	for _, a := range rep.AHUs {
		assert.Equal(t, 3, a.Hours, "lookback of 3 h ending at the new slot")
		assert.Equal(t, slot.Add(time.Hour), a.Checkpoint)
	}
	assert.Len(t, store.recs["AHU-X"], 49, "re-written hours replace, never duplicate")
	assert.Empty(t, store.events[before:], "no alert is raised twice")
	// The late correction reached the re-computed hour.
	old := store.recs["AHU-X"][slot.Add(-time.Hour)]
	assert.Greater(t, old.ReheatKWh, 0.0)

	// Nothing pending in the same hour.
	rep, err = r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Equal(t, 3, rep.AHUs[0].Hours, "only the lookback again")
}

// TestRunner_NoLookback: schedule.lookback: 0 re-computes no hour already
// done; each run computes only the hours after its checkpoint.
func TestRunner_NoLookback(t *testing.T) {
	cfg := runnerConfig(t)
	cfg.Schedule.Lookback = 0
	store, src := newMemResults(), &spanSource{}
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	r := &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	_, err := r.RunOnce(context.Background())
	require.NoError(t, err)

	now = now.Add(time.Hour)
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Equal(t, 1, rep.AHUs[0].Hours, "the new hour only")
	rep, err = r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Zero(t, rep.AHUs[0].Hours, "nothing pending in the same hour")
}

func TestRunner_StoreDownKeepsCheckpoint(t *testing.T) {
	cfg := runnerConfig(t)
	store, src := newMemResults(), &spanSource{}
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	r := &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	_, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	cp := store.cp["AHU-X"]

	// Five hours of outage: the trend store refuses reads.
	src.err = errors.New("connection refused")
	for i := 0; i < 5; i++ {
		now = now.Add(time.Hour)
		rep, err := r.RunOnce(context.Background())
		require.Error(t, err, "every air handler failed")
		assert.Len(t, rep.Failed(), 2)
		assert.Equal(t, cp, store.cp["AHU-X"], "the checkpoint never moves past an unwritten hour")
	}
	// Recovery: every missed hour is computed, oldest first, exactly once.
	src.err = nil
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Equal(t, 5, rep.AHUs[0].Hours, "the five missed hours (the 3 h lookback lies within them)")
	assert.Equal(t, cp.Add(5*time.Hour), store.cp["AHU-X"])
	hours := make([]time.Time, 0, len(store.recs["AHU-X"]))
	for h := range store.recs["AHU-X"] {
		hours = append(hours, h)
	}
	sort.Slice(hours, func(i, j int) bool { return hours[i].Before(hours[j]) })
	for i := 1; i < len(hours); i++ {
		assert.Equal(t, time.Hour, hours[i].Sub(hours[i-1]), "no hour missing")
	}
}

func TestRunner_OneBrokenAirHandler(t *testing.T) {
	cfg := runnerConfig(t)
	store, src := newMemResults(), &spanSource{panic: "AHU-Y"}
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	r := &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err, "one air handler failing does not fail the run")
	failed := rep.Failed()
	require.Len(t, failed, 1)
	assert.Equal(t, "AHU-Y", failed[0].AHU)
	assert.Contains(t, failed[0].Err.Error(), "panic: corrupt hour")
	assert.Len(t, store.recs["AHU-X"], 48)
	_, ok := store.cp["AHU-Y"]
	assert.False(t, ok)
}

// TestRunner_GroupReadFailsOneByOne: the air handlers that resume at the
// same hour are read together; when that read fails, they are read again
// one by one, so only the air handler at fault fails, even with no way to
// tell an outage from its own error (StoreDown nil). A store that is down
// is asked one by one twice, not once per air handler.
func TestRunner_GroupReadFailsOneByOne(t *testing.T) {
	cfg := runnerConfig(t)
	b := cfg.AirHandlers[0]
	for _, id := range []string{"AHU-A", "AHU-B", "AHU-C", "AHU-D"} {
		b.ID = id
		cfg.AirHandlers = append(cfg.AirHandlers, b)
	}
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	store, src := newMemResults(), &spanSource{failFor: "AHU-B"}
	r := &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Equal(t, 6, src.widest, "the six air handlers start at the same hour: one read")
	failed := rep.Failed()
	require.Len(t, failed, 1)
	assert.Equal(t, "AHU-B", failed[0].AHU)
	assert.Contains(t, failed[0].Err.Error(), "matches two series")
	for _, id := range []string{"AHU-X", "AHU-Y", "AHU-A", "AHU-C", "AHU-D"} {
		assert.Len(t, store.recs[id], 48, id)
	}

	// The store down: the group's read, then two air handlers alone.
	store, src = newMemResults(), &spanSource{err: errors.New("connection refused")}
	r = &Runner{Cfg: cfg, Source: src, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	rep, err = r.RunOnce(context.Background())
	require.Error(t, err)
	assert.Len(t, rep.Failed(), 6)
	assert.Equal(t, 3, src.calls, "one read of the group and two alone")
	// Each error is of a read of its own air handler: alone (AHU-A, AHU-B)
	// or the group's (the rest), never another air handler's read alone.
	for _, f := range rep.Failed() {
		msg := f.Err.Error()
		assert.Contains(t, msg, f.AHU, "its own read")
		for _, other := range []string{"AHU-X", "AHU-Y", "AHU-A", "AHU-B", "AHU-C", "AHU-D"} {
			if other != f.AHU {
				assert.NotContains(t, msg, other, "%s's error", f.AHU)
			}
		}
	}
	assert.Contains(t, rep.Failed()[5].Err.Error(), "in one read with 5 other air handlers: read 6 air handlers: connection refused; not read alone")
}

// timeoutError is a read that timed out, as the InfluxDB client's
// request errors and net.Error tell it.
type timeoutError struct{}

func (timeoutError) Error() string {
	return "influx query http://127.0.0.1:1: timed out after 4 attempts (timeout 5s each)"
}
func (timeoutError) Timeout() bool { return true }

// sixAirHandlers is runnerConfig with AHU-A..AHU-D added to AHU-X, AHU-Y.
func sixAirHandlers(t *testing.T) *config.Config {
	t.Helper()
	cfg := runnerConfig(t)
	b := cfg.AirHandlers[0]
	for _, id := range []string{"AHU-A", "AHU-B", "AHU-C", "AHU-D"} {
		b.ID = id
		cfg.AirHandlers = append(cfg.AirHandlers, b)
	}
	return cfg
}

// logLines are the JSON lines of a run's log with the message msg.
func logLines(t *testing.T, log *testkit.SyncBuffer, msg string) []map[string]any {
	t.Helper()
	var out []map[string]any
	for _, l := range strings.Split(strings.TrimSpace(log.String()), "\n") {
		var m map[string]any
		require.NoError(t, json.Unmarshal([]byte(l), &m), l)
		if m["message"] == msg {
			out = append(out, m)
		}
	}
	return out
}

// TestRunner_GroupReadTimesOut: a group read that times out is an outage.
// The run asks the store nothing more (neither the group's air handlers
// alone nor the other groups), says so once, and every air handler's error
// names its own read; what was written stays, and the next run resumes
// from the checkpoints.
func TestRunner_GroupReadTimesOut(t *testing.T) {
	cfg := sixAirHandlers(t)
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	mem, src := newMemResults(), &spanSource{}
	var log testkit.SyncBuffer
	r := &Runner{Cfg: cfg, Source: src, Store: mem, Clock: func() time.Time { return now }, Log: zerolog.New(&log),
		ReadBatch: 2 * 3, // after the first run, two air handlers (3 h of lookback each) a read: three groups
		StoreDown: func(err error) bool { return !strings.Contains(err.Error(), "matches two series") }}
	_, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	before := map[string]time.Time{}
	for id, cp := range mem.cp {
		before[id] = cp
	}
	require.Len(t, before, 6)

	now = now.Add(2 * time.Hour)
	src.err, src.calls = timeoutError{}, 0
	rep, err := r.RunOnce(context.Background())
	require.Error(t, err, "every air handler failed")
	assert.Equal(t, 1, src.calls, "the read that timed out is the run's last")
	failed := rep.Failed()
	require.Len(t, failed, 6)
	first := map[string]bool{"AHU-A": true, "AHU-B": true} // the first group, by id
	for _, f := range failed {
		msg := f.Err.Error()
		if first[f.AHU] {
			assert.Contains(t, msg, "of "+f.AHU+", in one read with 1 other air handlers: ", "its own read")
			assert.Contains(t, msg, "timed out after 4 attempts")
		} else {
			assert.Contains(t, msg, "not read: this run stopped its reads when the store timed out reading the hours", f.AHU)
			assert.Contains(t, msg, "of AHU-A and 1 other air handlers", f.AHU)
		}
		for other := range before {
			if other != f.AHU && !first[other] {
				assert.NotContains(t, msg, other, "%s's error names no other air handler's read", f.AHU)
			}
		}
	}
	stops := logLines(t, &log, "the store timed out: this run reads no more; what it wrote stays, and the next run resumes from the checkpoints")
	require.Len(t, stops, 1, "said once")
	assert.Equal(t, "error", stops[0]["level"])
	assert.Equal(t, []any{"AHU-A", "AHU-B"}, stops[0]["ahus"])
	assert.Equal(t, before, mem.cp, "no checkpoint moved")

	src.err = nil
	rep, err = r.RunOnce(context.Background())
	require.NoError(t, err)
	assert.Empty(t, rep.Failed())
	for id, cp := range before {
		assert.Equal(t, cp.Add(2*time.Hour), mem.cp[id], "%s resumed from its checkpoint", id)
	}
}

// TestRunner_GroupRetryIsLogged: a group read that fails for one air
// handler's reason and is read again one by one leaves a warning with the
// group's error and what was read again.
func TestRunner_GroupRetryIsLogged(t *testing.T) {
	cfg := sixAirHandlers(t)
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	mem, src := newMemResults(), &spanSource{failFor: "AHU-B"}
	var log testkit.SyncBuffer
	r := &Runner{Cfg: cfg, Source: src, Store: mem, Clock: func() time.Time { return now }, Log: zerolog.New(&log),
		StoreDown: func(err error) bool { return !strings.Contains(err.Error(), "matches two series") }}
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	require.Len(t, rep.Failed(), 1)
	assert.Equal(t, "read hours 2026-07-12T10:00:00Z..2026-07-13T10:00:00Z: read AHU-B: point \"SAT\" of AHU-B matches two series",
		rep.Failed()[0].Err.Error(), "read alone, its own error")
	warned := logLines(t, &log, "a group read failed; its air handlers were read again one by one")
	require.Len(t, warned, 1, "the first chunk's group read failed; the later chunks read without AHU-B")
	w := warned[0]
	assert.Equal(t, "warn", w["level"])
	assert.Equal(t, []any{"AHU-A", "AHU-B", "AHU-C", "AHU-D", "AHU-X", "AHU-Y"}, w["ahus"])
	assert.Equal(t, []any{"AHU-B"}, w["failed"])
	assert.Equal(t, "2026-07-12T10:00:00Z", w["from"])
	assert.Equal(t, "2026-07-13T10:00:00Z", w["to"])
	assert.Contains(t, w["error"], "matches two series")
}

func TestSlot(t *testing.T) {
	// A run at 02:30 on the night clocks go back in Chicago (2026-11-01,
	// 01:00-02:00 local happens twice) evaluates whole UTC hours.
	loc, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	first := time.Date(2026, 11, 1, 1, 30, 0, 0, loc) // CDT, 06:30Z
	second := first.Add(time.Hour)                    // CST, 07:30Z, same wall clock
	assert.Equal(t, time.Date(2026, 11, 1, 5, 0, 0, 0, time.UTC), Slot(first))
	assert.Equal(t, time.Date(2026, 11, 1, 6, 0, 0, 0, time.UTC), Slot(second))
	assert.Equal(t, first.Format("15:04"), second.Format("15:04"))
}

var _ Observer = (*telemetry.Telemetry)(nil) // the run loop reports through Observer

func TestFillCommand(t *testing.T) {
	from := time.Date(2026, 10, 22, 5, 0, 0, 0, time.UTC)
	to := time.Date(2026, 10, 27, 0, 0, 0, 0, time.FixedZone("CDT", -5*3600)) // 05:00Z
	tests := []struct{ name, path, ahu, want string }{
		{"plain", "/etc/dewline/site.yaml", "AHU-1",
			"dewline analyze --config /etc/dewline/site.yaml --ahu AHU-1 --from 2026-10-22T05:00:00Z --to 2026-10-27T05:00:00Z"},
		{"spaces and a quote", "my sites/o'hare.yaml", "RTU 5",
			`dewline analyze --config 'my sites/o'\''hare.yaml' --ahu 'RTU 5' --from 2026-10-22T05:00:00Z --to 2026-10-27T05:00:00Z`},
		{"no path", "", "AHU-1",
			"dewline analyze --config FILE --ahu AHU-1 --from 2026-10-22T05:00:00Z --to 2026-10-27T05:00:00Z"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.Equal(t, tt.want, FillCommand(tt.path, tt.ahu, from, to))
		})
	}
}

// TestAHUReport_CheckpointText: the summary names an air handler's
// checkpoint only when it is known: "unknown" when the store could not give
// it, "no checkpoint yet" before the first hour is written, never the zero
// time.
func TestAHUReport_CheckpointText(t *testing.T) {
	store := newMemResults()
	store.fail = errors.New("connection refused")
	now := time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC)
	r := &Runner{Cfg: runnerConfig(t), Source: &spanSource{}, Store: store, Clock: func() time.Time { return now }, Log: zerolog.Nop()}
	rep, _ := r.RunOnce(context.Background())
	require.NotNil(t, rep)
	require.NotEmpty(t, rep.AHUs)
	for _, a := range rep.AHUs {
		require.Error(t, a.Err)
		assert.Equal(t, "checkpoint unknown", a.CheckpointText())
	}

	store.fail = nil
	rep, err := r.RunOnce(context.Background())
	require.NoError(t, err)
	for _, a := range rep.AHUs {
		assert.Equal(t, "checkpoint 2026-07-14T09:00:00Z", a.CheckpointText())
	}
	assert.Equal(t, "no checkpoint yet", AHUReport{CheckpointKnown: true}.CheckpointText())
}
