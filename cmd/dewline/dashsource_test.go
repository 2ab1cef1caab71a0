package main

import (
	"context"
	"math"
	"reflect"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/metrics"
)

// hoursOnly hides the store's daily sums: the overview reads every hour.
type hoursOnly struct{ r dashboards.Results }

func (h hoursOnly) Hours(ctx context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	return h.r.Hours(ctx, ahu, from, to, fn)
}
func (h hoursOnly) Alerts(ctx context.Context, q dashboards.AlertQuery) ([]dashboards.Alert, error) {
	return h.r.Alerts(ctx, q)
}
func (h hoursOnly) Span(ctx context.Context) (time.Time, time.Time, bool, error) {
	return h.r.Span(ctx)
}

// The overview from the store's daily sums equals the overview from its
// hours: the daily sums are derived data and must never change a figure.
func TestOverview_DaysAgreeWithHours(t *testing.T) {
	dir := t.TempDir()
	cfgPath, data := writeScenario(t, dir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfgPath, "--input", data)
	require.Equal(t, 0, code, errOut)

	cfg, err := loadConfig(cfgPath)
	require.NoError(t, err)
	st, err := openStore(t.Context(), cfg, true, zerolog.Nop())
	require.NoError(t, err)
	defer st.Close()
	res := st.results(time.Now)
	_, ok := res.(dashboards.DayReader)
	require.True(t, ok, "the embedded store offers daily sums")

	site := siteFor(cfg)
	for _, kind := range []string{"day", "week", "month"} {
		_, last, _, err := res.Span(t.Context())
		require.NoError(t, err)
		p, err := dashboards.ResolvePeriod(kind, "", "", cfg.Location, last)
		require.NoError(t, err)
		complete, err := res.(dashboards.DayReader).Days(t.Context(), p.From, p.To, func(dashboards.DaySums) error { return nil })
		require.NoError(t, err)
		require.True(t, complete, "%s: the analysis kept the daily sums", kind)

		fromDays, err := dashboards.BuildOverview(t.Context(), site, res, p)
		require.NoError(t, err)
		fromHours, err := dashboards.BuildOverview(t.Context(), site, hoursOnly{res}, p)
		require.NoError(t, err)
		require.Len(t, fromDays.AirHandlers, len(fromHours.AirHandlers))
		for i := range fromDays.AirHandlers {
			a, b := fromDays.AirHandlers[i], fromHours.AirHandlers[i]
			assert.Equal(t, b.ID, a.ID)
			assert.Equal(t, b.Totals.Hours, a.Totals.Hours)
			assert.Equal(t, b.Totals.FlaggedHours, a.Totals.FlaggedHours)
			assert.Positive(t, b.Totals.Hours, kind)
			assertSameTotals(t, b.Totals, a.Totals, kind+" "+a.ID)
			for d := range a.Daily {
				assert.InDelta(t, float64(b.Daily[d]), float64(a.Daily[d]), 1e-9, "%s day %d", kind, d)
			}
		}
	}
}

// assertSameTotals compares every figure of two Totals: unknown (NaN) must
// stay unknown, and sums taken in another order may differ in the last
// bits only.
func assertSameTotals(t *testing.T, want, got dashboards.Totals, what string) {
	t.Helper()
	vw, vg := reflect.ValueOf(want), reflect.ValueOf(got)
	for f := 0; f < vw.NumField(); f++ {
		if vw.Field(f).Type() != reflect.TypeOf(dashboards.Num(0)) {
			continue
		}
		x, y := vw.Field(f).Float(), vg.Field(f).Float()
		name := vw.Type().Field(f).Name
		if math.IsNaN(x) {
			assert.True(t, math.IsNaN(y), "%s %s: %v, want unknown", what, name, y)
			continue
		}
		assert.InDelta(t, x, y, 1e-9*math.Max(1, math.Abs(x)), "%s %s", what, name)
	}
}
