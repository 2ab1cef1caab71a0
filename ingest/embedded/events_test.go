package embedded

import (
	"context"
	"encoding/json"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestStore_EventsOnce: a transition is recorded once, whoever writes it
// and however often: appended again, committed again, or by two stores on
// one file at the same time; and once delivered it is never pending again.
func TestStore_EventsOnce(t *testing.T) {
	ctx := testCtx(t)
	path := filepath.Join(t.TempDir(), "dewline.db")
	open := func() *Store {
		s, err := Open(ctx, path, Options{Now: func() time.Time { return fixedNow }})
		require.NoError(t, err)
		t.Cleanup(func() { _ = s.Close() })
		return s
	}
	a, b := open(), open()
	alert := AlertRow{ID: "AHU-1/overcool/20240701T14Z", AHU: "AHU-1", Kind: "overcool", Severity: "warning",
		State: StateOpen, Start: t0}
	ev := AlertEvent{AlertID: alert.ID, Transition: "open", At: t0, Payload: json.RawMessage(`{"n":1}`)}
	commit := Commit{AHU: "AHU-1", Alerts: []AlertRow{alert}, Events: []AlertEvent{ev}}

	// Two writers at once, each committing the same transition ten times.
	var wg sync.WaitGroup
	errs := make(chan error, 40)
	for _, s := range []*Store{a, b} {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range 10 {
				errs <- s.Commit(ctx, commit)
				_, err := s.AppendAlertEvent(ctx, ev)
				errs <- err
			}
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		require.NoError(t, err)
	}
	pending, err := a.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	require.Len(t, pending, 1, "one event for one transition")
	seq := pending[0].Seq

	// Re-recorded before delivery: the latest payload, the same seq.
	ev2 := ev
	ev2.Payload = json.RawMessage(`{"n":2}`)
	got, err := b.AppendAlertEvent(ctx, ev2)
	require.NoError(t, err)
	assert.Equal(t, seq, got)
	pending, err = a.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	require.Len(t, pending, 1)
	assert.JSONEq(t, `{"n":2}`, string(pending[0].Payload))

	// Delivered, then recorded again: still delivered, nothing pending.
	require.NoError(t, a.MarkDelivered(ctx, seq, fixedNow))
	require.NoError(t, b.Commit(ctx, commit))
	got, err = a.AppendAlertEvent(ctx, ev)
	require.NoError(t, err)
	assert.Equal(t, seq, got)
	pending, err = b.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	assert.Empty(t, pending, "a delivered event is never queued again")

	// The closing is another transition.
	closed := Commit{AHU: "AHU-1", Events: []AlertEvent{{AlertID: alert.ID, Transition: "closed", At: t0.Add(3 * time.Hour)}}}
	require.NoError(t, a.Commit(ctx, closed))
	pending, err = b.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	require.Len(t, pending, 1)
	assert.Equal(t, "closed", pending[0].Transition)
}

// TestStore_MigrateRepeatedEvents: a file from before schema v4 holding
// repeats of one transition keeps one event, delivered when any repeat was.
func TestStore_MigrateRepeatedEvents(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "dewline.db")
	old, err := open(ctx, path, Options{}, migrations[:3])
	require.NoError(t, err)
	_, err = old.db.ExecContext(ctx, `INSERT INTO alerts (id, ahu, kind, severity, state, start_ms, updated_ms)
		VALUES ('A/k/1', 'A', 'k', 'info', 'open', 0, 0), ('A/k/2', 'A', 'k', 'info', 'open', 0, 0)`)
	require.NoError(t, err)
	_, err = old.db.ExecContext(ctx, `INSERT INTO alert_events (alert_id, transition, at_ms, delivered_ms) VALUES
		('A/k/1', 'open', 0, NULL), ('A/k/1', 'open', 0, 5), ('A/k/1', 'open', 0, NULL),
		('A/k/2', 'open', 0, NULL), ('A/k/2', 'open', 0, NULL)`)
	require.NoError(t, err)
	require.NoError(t, old.Close())

	s, err := Open(ctx, path, Options{})
	require.NoError(t, err)
	defer s.Close()
	var n int
	require.NoError(t, s.db.QueryRowContext(ctx, "SELECT count(*) FROM alert_events").Scan(&n))
	assert.Equal(t, 2, n)
	pending, err := s.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	require.Len(t, pending, 1)
	assert.Equal(t, "A/k/2", pending[0].AlertID)
}
