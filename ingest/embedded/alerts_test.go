package embedded

import (
	"encoding/json"
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestStore_Alerts(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	open1 := AlertRow{ID: "AHU-1/overcool/2024-07-01T14", AHU: "AHU-1", Kind: "overcool", Severity: "warning",
		State: StateOpen, Start: t0, EnergyKWh: 12.5, Cost: 1.75, Reason: "coil leaving air 2 K colder than needed"}
	pending2 := AlertRow{ID: "AHU-2/reheat", AHU: "AHU-2", Kind: "reheat", Severity: "info",
		State: StatePending, Start: t0.Add(time.Hour), EnergyKWh: math.NaN(), Cost: math.NaN()}
	require.NoError(t, s.PutAlert(ctx, open1))
	require.NoError(t, s.PutAlert(ctx, pending2))

	// Closing replaces the row.
	closed1 := open1
	closed1.State, closed1.End = StateClosed, t0.Add(3*time.Hour)
	require.NoError(t, s.PutAlert(ctx, closed1))

	all, err := s.ListAlerts(ctx, AlertFilter{})
	require.NoError(t, err)
	require.Len(t, all, 2)
	want1 := closed1
	want1.Updated = fixedNow
	assert.Equal(t, want1, all[0])
	assert.Equal(t, "AHU-2/reheat", all[1].ID)
	assert.True(t, math.IsNaN(all[1].EnergyKWh) && math.IsNaN(all[1].Cost), "unknown energy and cost come back as NaN")
	assert.True(t, all[1].End.IsZero(), "ongoing: no end")

	tests := []struct {
		name   string
		filter AlertFilter
		want   []string
	}{
		{"by unit", AlertFilter{AHU: "AHU-2"}, []string{"AHU-2/reheat"}},
		{"by state", AlertFilter{State: StateClosed}, []string{"AHU-1/overcool/2024-07-01T14"}},
		{"both, no match", AlertFilter{AHU: "AHU-1", State: StatePending}, nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := s.ListAlerts(ctx, tt.filter)
			require.NoError(t, err)
			var ids []string
			for _, a := range got {
				ids = append(ids, a.ID)
			}
			assert.Equal(t, tt.want, ids)
		})
	}

	bad := AlertRow{ID: "x", State: "firing", Start: t0, End: t0.Add(-time.Hour), EnergyKWh: math.Inf(1)}
	err = s.PutAlert(ctx, bad)
	require.ErrorIs(t, err, ErrInvalid)
	for _, m := range []string{"ahu is empty", `state "firing"`, "end is before start", "energy_kwh is infinite"} {
		assert.Contains(t, err.Error(), m)
	}
}

func TestStore_AlertEvents(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	require.NoError(t, s.PutAlert(ctx, AlertRow{ID: "a1", AHU: "AHU-1", Kind: "overcool", Severity: "warning",
		State: StateOpen, Start: t0}))

	seq1, err := s.AppendAlertEvent(ctx, AlertEvent{AlertID: "a1", Transition: "opened", At: t0,
		Payload: json.RawMessage(`{"energy_kwh":12.5}`)})
	require.NoError(t, err)
	seq2, err := s.AppendAlertEvent(ctx, AlertEvent{AlertID: "a1", Transition: "closed", At: t0.Add(time.Hour)})
	require.NoError(t, err)
	assert.Greater(t, seq2, seq1)

	pending, err := s.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	assert.Equal(t, []AlertEvent{
		{Seq: seq1, AlertID: "a1", Transition: "opened", At: t0, Payload: json.RawMessage(`{"energy_kwh":12.5}`)},
		{Seq: seq2, AlertID: "a1", Transition: "closed", At: t0.Add(time.Hour), Payload: json.RawMessage(`{}`)},
	}, pending)

	limited, err := s.PendingAlertEvents(ctx, 1)
	require.NoError(t, err)
	require.Len(t, limited, 1)
	assert.Equal(t, seq1, limited[0].Seq, "oldest first")

	require.NoError(t, s.MarkDelivered(ctx, seq1, t0.Add(time.Minute)))
	require.NoError(t, s.MarkDelivered(ctx, seq1, t0.Add(time.Hour)), "retrying a delivery is fine")
	pending, err = s.PendingAlertEvents(ctx, 0)
	require.NoError(t, err)
	require.Len(t, pending, 1)
	assert.Equal(t, seq2, pending[0].Seq)

	var deliveredMs int64
	require.NoError(t, s.db.QueryRowContext(ctx, "SELECT delivered_ms FROM alert_events WHERE seq = ?", seq1).Scan(&deliveredMs))
	assert.Equal(t, t0Ms+60_000, deliveredMs, "the first delivery time is kept")

	assert.ErrorIs(t, s.MarkDelivered(ctx, 999, t0), ErrUnknownEvent)
	_, err = s.AppendAlertEvent(ctx, AlertEvent{AlertID: "nope", Transition: "opened", At: t0})
	assert.ErrorIs(t, err, ErrUnknownAlert)
	_, err = s.AppendAlertEvent(ctx, AlertEvent{AlertID: "a1", Transition: "opened", At: t0, Payload: json.RawMessage(`{`)})
	assert.ErrorIs(t, err, ErrInvalid)
}
