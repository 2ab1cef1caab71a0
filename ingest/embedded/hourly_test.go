package embedded

import (
	"context"
	"errors"
	"math"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// readHours reads a window of hourly rows into a slice.
func readHours(t *testing.T, s *Store, ahu string, from, to time.Time) []HourRow {
	t.Helper()
	var out []HourRow
	require.NoError(t, s.ReadHourly(testCtx(t), ahu, from, to, func(r HourRow) error {
		out = append(out, r)
		return nil
	}))
	return out
}

func TestStore_PutHourly(t *testing.T) {
	ctx := testCtx(t)
	s, path := newStore(t)
	in := HourRow{
		AHU: "AHU-1", Hour: t0, Schema: 3,
		Fields: map[string]float64{
			"reheat_kwh":       12.25,
			"coverage":         math.NaN(),
			"effective_eer":    math.Inf(1),
			"water_removed_kg": math.Copysign(0, -1), // the constant -0.0 is +0 in Go
			"big":              1e21,
			"tiny":             5e-324,
			`odd "name" ΔT`:    0.1,
			"coil_total_kwh":   -3,
		},
		Flags: []string{"gap", "stale:AHU-1 RAT"},
	}
	require.NoError(t, s.PutHourly(ctx, []HourRow{in}))

	// The stored text, written out by hand: sorted keys, null for NaN/Inf.
	var fields, flags string
	require.NoError(t, plainDB(t, path).QueryRow("SELECT fields, flags FROM hourly").Scan(&fields, &flags))
	assert.Equal(t, `{"big":1e+21,"coil_total_kwh":-3,"coverage":null,"effective_eer":null,`+
		`"odd \"name\" ΔT":0.1,"reheat_kwh":12.25,"tiny":5e-324,"water_removed_kg":-0}`, fields)
	assert.Equal(t, `["gap","stale:AHU-1 RAT"]`, flags)

	got := readHours(t, s, "AHU-1", t0, t0.Add(time.Hour))
	require.Len(t, got, 1)
	r := got[0]
	assert.Equal(t, "AHU-1", r.AHU)
	assert.Equal(t, t0, r.Hour)
	assert.Equal(t, 3, r.Schema)
	assert.Equal(t, in.Flags, r.Flags)
	assert.Equal(t, fixedNow, r.Written)
	require.Len(t, r.Fields, len(in.Fields))
	assert.True(t, math.IsNaN(r.Fields["coverage"]), "NaN comes back as NaN")
	assert.True(t, math.IsNaN(r.Fields["effective_eer"]), "Inf is stored as null and comes back as NaN")
	for _, k := range []string{"reheat_kwh", "big", "tiny", `odd "name" ΔT`, "coil_total_kwh"} {
		assert.Equal(t, in.Fields[k], r.Fields[k], k) // exact: shortest round-trip digits
	}
	assert.True(t, math.Signbit(r.Fields["water_removed_kg"]), "-0 keeps its sign")
}

func TestStore_PutHourly_Replace(t *testing.T) {
	ctx := testCtx(t)
	path := filepath.Join(t.TempDir(), "dewline.db")
	clock := t0.Add(2 * time.Hour)
	s, err := Open(ctx, path, Options{Now: func() time.Time { return clock }})
	require.NoError(t, err)
	defer s.Close()

	require.NoError(t, s.PutHourly(ctx, []HourRow{{AHU: "AHU-1", Hour: t0, Schema: 1,
		Fields: map[string]float64{"reheat_kwh": 1, "coverage": 0.5}, Flags: []string{"gap"}}}))
	clock = clock.Add(time.Hour)
	require.NoError(t, s.PutHourly(ctx, []HourRow{{AHU: "AHU-1", Hour: t0, Schema: 2,
		Fields: map[string]float64{"reheat_kwh": 4}}}))

	got := readHours(t, s, "", t0.Add(-24*time.Hour), t0.Add(24*time.Hour))
	require.Len(t, got, 1, "writing the same hour twice keeps one row")
	assert.Equal(t, HourRow{AHU: "AHU-1", Hour: t0, Schema: 2, Fields: map[string]float64{"reheat_kwh": 4},
		Written: t0.Add(3 * time.Hour)}, got[0], "the whole row is replaced: old fields and flags are gone")
}

func TestStore_ReadHourly(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	h := func(i int) time.Time { return t0.Add(time.Duration(i) * time.Hour) }
	var rows []HourRow
	// Written in scrambled order.
	for _, i := range []int{2, 0, 1} {
		for _, ahu := range []string{"AHU-2", "AHU-10", "AHU-1"} {
			rows = append(rows, HourRow{AHU: ahu, Hour: h(i), Fields: map[string]float64{"hour": float64(i)}})
		}
	}
	require.NoError(t, s.PutHourly(ctx, rows))

	type key struct {
		ahu  string
		hour int
	}
	keys := func(rs []HourRow) []key {
		var out []key
		for _, r := range rs {
			out = append(out, key{r.AHU, int(r.Hour.Sub(t0) / time.Hour)})
		}
		return out
	}
	tests := []struct {
		name     string
		ahu      string
		from, to time.Time
		want     []key
	}{
		{"all units in (hour, ahu) order", "", h(0), h(3), []key{
			{"AHU-1", 0}, {"AHU-10", 0}, {"AHU-2", 0},
			{"AHU-1", 1}, {"AHU-10", 1}, {"AHU-2", 1},
			{"AHU-1", 2}, {"AHU-10", 2}, {"AHU-2", 2},
		}},
		{"one unit", "AHU-2", h(0), h(3), []key{{"AHU-2", 0}, {"AHU-2", 1}, {"AHU-2", 2}}},
		{"window", "AHU-1", h(1), h(2), []key{{"AHU-1", 1}}},
		{"mid-hour bounds", "AHU-1", h(0).Add(time.Millisecond), h(2).Add(time.Minute), []key{{"AHU-1", 1}, {"AHU-1", 2}}},
		{"unknown unit", "AHU-9", h(0), h(3), nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.Equal(t, tt.want, keys(readHours(t, s, tt.ahu, tt.from, tt.to)))
		})
	}

	t.Run("callback error stops the read", func(t *testing.T) {
		stop := errors.New("stop")
		calls := 0
		err := s.ReadHourly(ctx, "", h(0), h(3), func(HourRow) error { calls++; return stop })
		assert.ErrorIs(t, err, stop)
		assert.Equal(t, 1, calls)
	})
}

func TestStore_PutHourly_Invalid(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	err := s.PutHourly(ctx, []HourRow{
		{AHU: "AHU-1", Hour: t0},
		{AHU: "", Hour: t0.Add(30 * time.Minute), Fields: map[string]float64{"": 1}, Flags: []string{""}},
	})
	require.ErrorIs(t, err, ErrInvalid)
	for _, m := range []string{"row 1", "ahu is empty", "not on a whole hour", "field name is empty", "flag is empty"} {
		assert.Contains(t, err.Error(), m)
	}
	assert.Empty(t, readHours(t, s, "", t0.Add(-time.Hour), t0.Add(time.Hour)), "the valid row is not written either")
}

func TestStore_Checkpoint(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	_, ok, err := s.Checkpoint(ctx, "AHU-1")
	require.NoError(t, err)
	assert.False(t, ok)

	require.NoError(t, s.SetCheckpoint(ctx, "AHU-1", t0.Add(5*time.Hour)))
	require.NoError(t, s.SetCheckpoint(ctx, "AHU-1", t0), "an operator may rewind")
	got, ok, err := s.Checkpoint(ctx, "AHU-1")
	require.NoError(t, err)
	assert.True(t, ok)
	assert.Equal(t, t0, got)

	err = s.SetCheckpoint(ctx, "AHU-1", t0.Add(time.Second))
	assert.ErrorIs(t, err, ErrInvalid)
	err = s.SetCheckpoint(ctx, "", t0)
	assert.ErrorIs(t, err, ErrInvalid)
}

// TestStore_PutHourlyAndCheckpoint makes the transaction fail at different
// points and checks that neither the checkpoint nor any row moved.
func TestStore_PutHourlyAndCheckpoint(t *testing.T) {
	h := func(i int) time.Time { return t0.Add(time.Duration(i) * time.Hour) }
	row := func(ahu string, i int, v float64) HourRow {
		return HourRow{AHU: ahu, Hour: h(i), Schema: 1, Fields: map[string]float64{"reheat_kwh": v}}
	}
	// The next batch: hour 1 is new, hour 0 is rewritten with a new value.
	next := []HourRow{row("AHU-1", 0, 99), row("AHU-1", 1, 2), row("AHU-2", 1, 3)}

	tests := []struct {
		name string
		// trigger is SQL run on a plain connection before the call, to make
		// SQLite fail a statement inside the transaction.
		trigger string
		rows    []HourRow
		ckpt    time.Time
		cancel  bool
		wantErr error
		wantMsg string
	}{
		{
			name: "a row fails after others were written",
			trigger: `CREATE TRIGGER inject BEFORE INSERT ON hourly WHEN NEW.ahu = 'AHU-2'
				BEGIN SELECT RAISE(ABORT, 'injected row failure'); END`,
			rows: next, ckpt: h(1), wantMsg: "injected row failure",
		},
		{
			name: "the checkpoint write fails after the rows",
			trigger: `CREATE TRIGGER inject BEFORE UPDATE ON checkpoints
				BEGIN SELECT RAISE(ABORT, 'injected checkpoint failure'); END`,
			rows: next, ckpt: h(1), wantMsg: "injected checkpoint failure",
		},
		{
			name: "checkpoint past the written hours",
			rows: next, ckpt: h(2), wantErr: ErrCheckpointAhead,
		},
		{
			name: "checkpoint for a unit with no row at that hour",
			rows: []HourRow{row("AHU-2", 1, 3)}, ckpt: h(1), wantErr: ErrCheckpointAhead,
		},
		{
			name: "cancelled context",
			rows: next, ckpt: h(1), cancel: true, wantErr: context.Canceled,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			ctx := testCtx(t)
			s, path := newStore(t)
			require.NoError(t, s.PutHourlyAndCheckpoint(ctx, []HourRow{row("AHU-1", 0, 1)}, "AHU-1", h(0)))
			before := readHours(t, s, "", h(-1), h(5))
			if tt.trigger != "" {
				_, err := plainDB(t, path).Exec(tt.trigger)
				require.NoError(t, err)
			}
			callCtx := ctx
			if tt.cancel {
				c, cancel := context.WithCancel(ctx)
				cancel()
				callCtx = c
			}

			err := s.PutHourlyAndCheckpoint(callCtx, tt.rows, "AHU-1", tt.ckpt)
			require.Error(t, err)
			if tt.wantErr != nil {
				assert.ErrorIs(t, err, tt.wantErr)
			}
			if tt.wantMsg != "" {
				assert.Contains(t, err.Error(), tt.wantMsg)
			}

			got, ok, err := s.Checkpoint(ctx, "AHU-1")
			require.NoError(t, err)
			assert.True(t, ok)
			assert.Equal(t, h(0), got, "the checkpoint did not move")
			assert.Equal(t, before, readHours(t, s, "", h(-1), h(5)), "no row of the failed batch remains")
		})
	}

	t.Run("success moves both", func(t *testing.T) {
		ctx := testCtx(t)
		s, _ := newStore(t)
		require.NoError(t, s.PutHourlyAndCheckpoint(ctx, next, "AHU-1", h(1)))
		got, _, err := s.Checkpoint(ctx, "AHU-1")
		require.NoError(t, err)
		assert.Equal(t, h(1), got)
		assert.Len(t, readHours(t, s, "", h(0), h(2)), 3)
		// A checkpoint may also land on an hour written by an earlier call.
		require.NoError(t, s.PutHourlyAndCheckpoint(ctx, nil, "AHU-2", h(1)))
	})
}
