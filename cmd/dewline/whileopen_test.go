package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// TestRun_WhileOpenUpdates: the agent, run hour by hour, queues a
// while-open update for each open alert every webhook.update_every
// (here 1 h): an event named "update/<hour>" whose payload carries the
// running totals, each checked against the hourly records stored for the
// same hours (the reheat_not_needed rule as the README states it), and the
// reason told with both hours labelled. A second run at the same hour
// queues nothing new, and the first run's catch-up queues no update older
// than webhook.max_age and one per alert at most.
func TestRun_WhileOpenUpdates(t *testing.T) {
	dir := t.TempDir()
	ahus := []string{"AHU-1"}
	cfg := site{
		schedule: "{backfill: 48h}",
		extra:    "webhook: {url: \"http://127.0.0.1:9/hook\", max_age: 6h, update_every: 1h}\n",
		ahus:     ahus,
	}.write(t, dir, "site.yaml")
	// Nights (20:00-08:00 in Chicago, 01:00-13:00 UTC in July) are dry
	// with reheat on: an alert opens each night and closes each morning.
	asOf := time.Date(2026, 7, 20, 2, 30, 0, 0, time.UTC)
	from := asOf.Truncate(time.Hour).Add(-48 * time.Hour)
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, ahus, from, 64*time.Hour)
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	dbPath := filepath.Join(dir, "dewline.db")

	type body struct {
		ID, Transition, Start, At, Reason string
		Label                             string
		End                               *string
		Hours, EnergyKWh, Money           float64
		OpenedReason                      string `json:"opened_reason"`
		LatestReason                      string `json:"latest_reason"`
	}
	updates := func() map[string]body {
		out := map[string]body{}
		for _, e := range storedEvents(t, dbPath) {
			if !strings.HasPrefix(e.Transition, "update/") {
				continue
			}
			var b body
			require.NoError(t, json.Unmarshal([]byte(e.Payload), &b), e.Payload)
			b.EnergyKWh = gjson(t, e.Payload, "energy_kwh")
			out[e.AlertID+"/"+e.Transition] = b
		}
		return out
	}

	code, _, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", asOf.Format(time.RFC3339))
	require.Equal(t, 0, code, errOut)
	for key, u := range updates() {
		at, err := time.Parse(time.RFC3339, u.At)
		require.NoError(t, err)
		assert.False(t, at.Before(asOf.Add(-6*time.Hour)), "catch-up queued %s, older than max_age", key)
	}
	catchUp := len(updates())

	cfgLoaded, err := loadConfig(cfg)
	require.NoError(t, err)
	checked := 0
	for step := 1; step <= 8; step++ {
		now := asOf.Add(time.Duration(step) * time.Hour)
		code, _, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", now.Format(time.RFC3339))
		require.Equal(t, 0, code, errOut)
		before := storedEvents(t, dbPath)
		// The same hour again: nothing new is queued.
		code, _, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", now.Format(time.RFC3339))
		require.Equal(t, 0, code, errOut)
		require.Len(t, storedEvents(t, dbPath), len(before), "a second run at %s queued more events", now)

		st, err := openStore(t.Context(), cfgLoaded, true, zerolog.Nop())
		require.NoError(t, err)
		res := st.results(time.Now)
		var recs []metrics.Record
		require.NoError(t, res.Hours(t.Context(), "AHU-1", from, now, func(r *metrics.Record) error {
			recs = append(recs, *r)
			return nil
		}))
		st.Close()
		slotEnd := now.Truncate(time.Hour)
		for key, u := range updates() {
			if !strings.Contains(key, metrics.AlertReheatNotNeeded) || u.At != slotEnd.Format(time.RFC3339) {
				continue
			}
			start, err := time.Parse(time.RFC3339, u.Start)
			require.NoError(t, err)
			var kwh, money float64
			for _, r := range recs {
				if r.HourStart.Before(start) || !r.HourStart.Before(slotEnd) {
					continue
				}
				if r.Coverage > 0 && r.ReheatAvoidKWh >= 1 && r.HumidityNeedHours <= 0.1*r.Coverage {
					kwh += r.ReheatAvoidKWh
					money += r.CostAvoidable
				}
			}
			assert.Equal(t, "update", u.Transition, key)
			assert.Nil(t, u.End, "open: no end")
			assert.Equal(t, "Reheat not needed", u.Label)
			assert.InDelta(t, slotEnd.Sub(start).Hours(), u.Hours, 1e-9, key)
			assert.InDelta(t, kwh, u.EnergyKWh, 1e-6*math.Max(1, kwh), "%s: energy vs stored hours", key)
			assert.InDelta(t, money, u.Money, 1e-6*math.Max(1, money), "%s: money vs stored hours", key)
			assert.Equal(t, "opened: "+u.OpenedReason+"; latest hour: "+u.LatestReason, u.Reason)
			checked++
		}
	}
	assert.GreaterOrEqual(t, checked, 6, "hourly updates checked against the stored hours")
	assert.LessOrEqual(t, catchUp, 2, "the catch-up queues one update per open alert at most")
}

// gjson reads one number of a JSON object.
func gjson(t *testing.T, doc, key string) float64 {
	t.Helper()
	var m map[string]any
	require.NoError(t, json.Unmarshal([]byte(doc), &m))
	v, ok := m[key].(float64)
	require.True(t, ok, "%s in %s", key, doc)
	return v
}
