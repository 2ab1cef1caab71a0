package embedded

import (
	"encoding/json"
	"errors"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestStore_Commit(t *testing.T) {
	ctx := testCtx(t)
	s, err := Open(ctx, filepath.Join(t.TempDir(), "dewline.db"), Options{})
	require.NoError(t, err)
	defer s.Close()
	h0 := time.Date(2026, 7, 14, 12, 0, 0, 0, time.UTC)
	rows := []HourRow{
		{AHU: "AHU-1", Hour: h0, Schema: 1, Fields: map[string]float64{"reheat_kwh": 3}},
		{AHU: "AHU-1", Hour: h0.Add(time.Hour), Schema: 1, Fields: map[string]float64{"reheat_kwh": 4}},
	}
	alert := AlertRow{ID: "AHU-1/reheat_not_needed/20260714T12Z", AHU: "AHU-1", Kind: "reheat_not_needed", Severity: "warning",
		State: StateOpen, Start: h0, EnergyKWh: 7, Cost: 1.05, Reason: "because"}
	states := map[string]json.RawMessage{"reheat_not_needed": json.RawMessage(`{"hits":2}`)}

	t.Run("a checkpoint past the rows is refused and nothing lands", func(t *testing.T) {
		err := s.Commit(ctx, Commit{AHU: "AHU-1", Rows: rows, Alerts: []AlertRow{alert},
			Events: []AlertEvent{{AlertID: alert.ID, Transition: "open", At: h0.Add(2 * time.Hour)}},
			States: states, Through: h0.Add(5 * time.Hour)})
		require.Error(t, err)
		assert.True(t, errors.Is(err, ErrCheckpointAhead))
		_, ok, err := s.Checkpoint(ctx, "AHU-1")
		require.NoError(t, err)
		assert.False(t, ok)
		got, err := s.AlertStates(ctx, "AHU-1")
		require.NoError(t, err)
		assert.Empty(t, got)
		ev, err := s.PendingAlertEvents(ctx, 0)
		require.NoError(t, err)
		assert.Empty(t, ev)
		n := 0
		require.NoError(t, s.ReadHourly(ctx, "AHU-1", h0, h0.Add(24*time.Hour), func(HourRow) error { n++; return nil }))
		assert.Equal(t, 0, n)
	})
	t.Run("everything lands together", func(t *testing.T) {
		require.NoError(t, s.Commit(ctx, Commit{AHU: "AHU-1", Rows: rows, Alerts: []AlertRow{alert},
			Events: []AlertEvent{{AlertID: alert.ID, Transition: "open", At: h0.Add(2 * time.Hour), Payload: json.RawMessage(`{"id":"x"}`)}},
			States: states, Through: h0.Add(time.Hour)}))
		cp, ok, err := s.Checkpoint(ctx, "AHU-1")
		require.NoError(t, err)
		require.True(t, ok)
		assert.Equal(t, h0.Add(time.Hour), cp)
		got, err := s.AlertStates(ctx, "AHU-1")
		require.NoError(t, err)
		assert.JSONEq(t, `{"hits":2}`, string(got["reheat_not_needed"]))
		ev, err := s.PendingAlertEvents(ctx, 0)
		require.NoError(t, err)
		require.Len(t, ev, 1)
		assert.JSONEq(t, `{"id":"x"}`, string(ev[0].Payload))
		// States are replaced as a whole: an empty map clears them.
		require.NoError(t, s.Commit(ctx, Commit{AHU: "AHU-1", States: map[string]json.RawMessage{}}))
		got, err = s.AlertStates(ctx, "AHU-1")
		require.NoError(t, err)
		assert.Empty(t, got)
		cp2, _, _ := s.Checkpoint(ctx, "AHU-1")
		assert.Equal(t, cp, cp2, "a zero Through leaves the checkpoint")
	})
}
