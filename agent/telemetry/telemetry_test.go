package telemetry

import (
	"errors"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/telemetry/telemetrytest"
)

func TestTelemetry_Metrics(t *testing.T) {
	tel := New()
	tel.RunStarted()
	tel.RunFinished(2*time.Second, nil)
	tel.RunStarted()
	tel.RunFinished(3*time.Second, errors.New("store unreachable"))
	tel.RunSkipped()
	tel.HoursComputed("ahu-1", 24)
	tel.HoursComputed("ahu-1", 3)
	tel.HoursComputed("ahu-2", 5)
	tel.HoursComputed("ahu-2", -1) // ignored
	tel.AHUFailed("ahu-2")
	tel.PointsRead(1440)
	tel.PointsRead(-5) // ignored
	tel.ObserveWrite(20*time.Millisecond, nil)
	tel.ObserveWrite(40*time.Millisecond, errors.New("timeout"))
	tel.SetLag("ahu-1", 2.5)
	tel.SetAlertsOpen(3)
	tel.WebhookDelivered()
	tel.WebhookFailed()
	tel.WebhookFailed()
	tel.WebhookDropped()
	tel.SetStoreUp(true, "")
	tel.SetConfigProblem("ahu-3", "no supply_flow point")

	fams := telemetrytest.Scrape(t, tel.Handler())
	tests := []struct {
		name   string
		metric string
		labels []string
		want   float64
	}{
		{"runs", "dewline_runs_total", nil, 2},
		{"run failures", "dewline_run_failures_total", nil, 1},
		{"skipped", "dewline_runs_skipped_total", nil, 1},
		{"run durations", "dewline_run_duration_seconds", nil, 2},
		{"not running", "dewline_run_in_progress", nil, 0},
		{"hours ahu-1", "dewline_hours_computed_total", []string{"ahu", "ahu-1"}, 27},
		{"hours ahu-2", "dewline_hours_computed_total", []string{"ahu", "ahu-2"}, 5},
		{"ahu failures", "dewline_ahu_failures_total", []string{"ahu", "ahu-2"}, 1},
		{"points", "dewline_points_read_total", nil, 1440},
		{"writes", "dewline_store_write_seconds", nil, 2},
		{"write failures", "dewline_store_write_failures_total", nil, 1},
		{"lag", "dewline_lag_hours", []string{"ahu", "ahu-1"}, 2.5},
		{"alerts open", "dewline_alerts_open", nil, 3},
		{"delivered", "dewline_webhook_deliveries_total", nil, 1},
		{"failed", "dewline_webhook_failures_total", nil, 2},
		{"dropped", "dewline_webhook_dropped_total", nil, 1},
		{"store up", "dewline_store_up", nil, 1},
		{"ahu problem", "dewline_ahu_problem", []string{"ahu", "ahu-3"}, 1},
		{"build info", "dewline_build_info", nil, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, ok := telemetrytest.Sample(fams, tt.metric, tt.labels...)
			require.True(t, ok, "no series %s%v", tt.metric, tt.labels)
			assert.InDelta(t, tt.want, got, 1e-9) // exact counts; delta only for float storage
		})
	}

	// The sum of run durations is 5 s (2 s + 3 s observed above).
	assert.InDelta(t, 5.0, fams["dewline_run_duration_seconds"].GetMetric()[0].GetHistogram().GetSampleSum(), 1e-9)
	ts, ok := telemetrytest.Sample(fams, "dewline_last_run_success_timestamp_seconds")
	require.True(t, ok)
	assert.Greater(t, ts, float64(time.Date(2020, 1, 1, 0, 0, 0, 0, time.UTC).Unix()))
	_, ok = telemetrytest.Sample(fams, "go_goroutines")
	assert.True(t, ok, "go collector registered")
}

func TestTelemetry_OwnRegistry(t *testing.T) {
	// Two agents in one process (tests, or a future multi-site binary) must
	// not share or collide on a global registry.
	a, b := New(), New()
	a.RunSkipped()
	got, ok := telemetrytest.Sample(telemetrytest.Scrape(t, b.Handler()), "dewline_runs_skipped_total")
	require.True(t, ok)
	assert.Zero(t, got)
	got, _ = telemetrytest.Sample(telemetrytest.Scrape(t, a.Handler()), "dewline_runs_skipped_total")
	assert.Equal(t, 1.0, got)
}

func TestTelemetry_Ready(t *testing.T) {
	tests := []struct {
		name    string
		do      func(*Telemetry)
		ready   bool
		status  string
		reasons []string // substrings, in order
		ahus    []string
	}{
		{
			name:    "fresh",
			do:      func(*Telemetry) {},
			status:  ReadinessUnready,
			reasons: []string{"store not checked yet"},
		},
		{
			name:   "store up",
			do:     func(t *Telemetry) { t.SetStoreUp(true, "") },
			ready:  true,
			status: ReadinessReady,
		},
		{
			name:    "store down",
			do:      func(t *Telemetry) { t.SetStoreUp(true, ""); t.SetStoreUp(false, "connection refused") },
			status:  ReadinessUnready,
			reasons: []string{"store down: connection refused"},
		},
		{
			name: "run failed",
			do: func(t *Telemetry) {
				t.SetStoreUp(true, "")
				t.RunStarted()
				t.RunFinished(time.Second, errors.New("read checkpoints: timeout"))
			},
			status:  ReadinessUnready,
			reasons: []string{"last run failed: read checkpoints: timeout"},
		},
		{
			name: "run recovered",
			do: func(t *Telemetry) {
				t.SetStoreUp(true, "")
				t.RunStarted()
				t.RunFinished(time.Second, errors.New("boom"))
				t.RunStarted()
				t.RunFinished(time.Second, nil)
			},
			ready:  true,
			status: ReadinessReady,
		},
		{
			name: "one ahu broken",
			do: func(t *Telemetry) {
				t.SetStoreUp(true, "")
				t.SetConfigProblem("ahu-2", "leaving_temp unit unknown")
				t.SetConfigProblem("ahu-1", "no supply_flow point")
			},
			ready:   true,
			status:  ReadinessDegraded,
			reasons: []string{"ahu-1 skipped: no supply_flow point", "ahu-2 skipped: leaving_temp unit unknown"},
			ahus:    []string{"ahu-1", "ahu-2"},
		},
		{
			name: "ahu fixed",
			do: func(t *Telemetry) {
				t.SetStoreUp(true, "")
				t.SetConfigProblem("ahu-2", "x")
				t.ClearConfigProblem("ahu-2")
				t.ClearConfigProblem("ahu-9") // never set: no-op
			},
			ready:  true,
			status: ReadinessReady,
		},
		{
			name: "store down and ahu broken",
			do: func(t *Telemetry) {
				t.SetStoreUp(false, "disk full")
				t.SetConfigProblem("ahu-2", "x")
			},
			status:  ReadinessUnready,
			reasons: []string{"store down: disk full", "ahu-2 skipped: x"},
			ahus:    []string{"ahu-2"},
		},
		{
			// A shard that owns nothing needs neither store nor runs:
			// restarting it would not give it work.
			name: "idle",
			do: func(t *Telemetry) {
				t.SetIdle("this shard owns no air handler")
				t.SetStoreUp(false, "connection refused")
			},
			ready:  true,
			status: ReadinessReady,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tel := New()
			tt.do(tel)
			ok, reasons := tel.Ready()
			assert.Equal(t, tt.ready, ok)
			require.Len(t, reasons, len(tt.reasons), "reasons: %q", reasons)
			for i, want := range tt.reasons {
				assert.Contains(t, reasons[i], want)
			}
			r := tel.Readiness()
			assert.Equal(t, tt.status, r.Status)
			var ahus []string
			for _, a := range r.AHUs {
				ahus = append(ahus, a.AHU)
			}
			assert.Equal(t, tt.ahus, ahus)
			if tt.name == "idle" {
				assert.Equal(t, "this shard owns no air handler", r.Note)
			} else {
				assert.Empty(t, r.Note)
			}
		})
	}
}

func TestTelemetry_ProblemGauge(t *testing.T) {
	tel := New()
	tel.SetConfigProblem("ahu-2", "x")
	v, ok := telemetrytest.Sample(telemetrytest.Scrape(t, tel.Handler()), "dewline_ahu_problem", "ahu", "ahu-2")
	require.True(t, ok)
	assert.Equal(t, 1.0, v)
	tel.ClearConfigProblem("ahu-2")
	v, ok = telemetrytest.Sample(telemetrytest.Scrape(t, tel.Handler()), "dewline_ahu_problem", "ahu", "ahu-2")
	require.True(t, ok)
	assert.Equal(t, 0.0, v)
}

func TestTelemetry_RunInProgress(t *testing.T) {
	tel := New()
	tel.RunStarted()
	v, _ := telemetrytest.Sample(telemetrytest.Scrape(t, tel.Handler()), "dewline_run_in_progress")
	assert.Equal(t, 1.0, v)
	assert.True(t, tel.Readiness().LastRun.Running)
	tel.RunFinished(time.Second, nil)
	v, _ = telemetrytest.Sample(telemetrytest.Scrape(t, tel.Handler()), "dewline_run_in_progress")
	assert.Equal(t, 0.0, v)
}

func TestTelemetry_Nil(t *testing.T) {
	// Components run without telemetry; every method must be a no-op.
	var tel *Telemetry
	assert.NotPanics(t, func() {
		tel.RunStarted()
		tel.RunFinished(time.Second, errors.New("x"))
		tel.RunSkipped()
		tel.HoursComputed("a", 1)
		tel.AHUFailed("a")
		tel.PointsRead(1)
		tel.ObserveWrite(time.Second, nil)
		tel.SetLag("a", 1)
		tel.SetAlertsOpen(1)
		tel.WebhookDelivered()
		tel.WebhookFailed()
		tel.WebhookDropped()
		tel.SetStoreUp(true, "")
		tel.SetConfigProblem("a", "b")
		tel.ClearConfigProblem("a")
		tel.SetIdle("a")
	})
	ok, _ := tel.Ready()
	assert.False(t, ok)
}
