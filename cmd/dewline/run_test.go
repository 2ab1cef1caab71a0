package main

import (
	"database/sql"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestRun_OnceAndDryRun: the agent catches up on imported data, a second
// run only re-computes the lookback, and a dry run prints line protocol
// without moving anything.
func TestRun_OnceAndDryRun(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	// 2026-07-15 12:07 CDT is 17:07Z: the last complete hour is 16:00Z.
	// The export starts 2026-07-14 00:00 CDT (05:00Z): 36 hours to catch up.
	code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-15T12:07")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7: 168 hours, checkpoint 2026-07-15T16:00:00Z", "the default backfill is a week")

	code, out, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-15T13:07")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7: 3 hours, checkpoint 2026-07-15T17:00:00Z", "the new hour and the 3 h lookback")

	code, out, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--dry-run", "--as-of", "2026-07-15T15:07")
	require.Equal(t, 0, code, errOut)
	lines := strings.Split(strings.TrimSpace(out), "\n")
	require.GreaterOrEqual(t, len(lines), 2)
	assert.True(t, strings.HasPrefix(lines[0], "dewline_hourly,ahu=AHU-7,site=default "), lines[0])
	assert.Contains(t, lines[0], "water_removed_kg=")
	assert.Contains(t, out, "checkpoint would move to 2026-07-15T19:00:00Z (dry run: nothing written)")
	// Nothing moved: a real run at that time still has the two hours to do.
	code, out, errOut = runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-15T15:07")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7: 3 hours, checkpoint 2026-07-15T19:00:00Z", "17-19Z: two new hours and one re-computed")
	code, _, errOut = runCLI(t, "run", "--config", cfg, "--shard", "3/2")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "i/n")
	code, _, errOut = runCLI(t, "run", "--config", cfg, "--as-of", "2026-07-15")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "--as-of goes with --once")
}

// TestRun_BehindTheBackfillHorizon: an agent stopped for longer than
// schedule.backfill skips the hours beyond it (a run's work stays
// bounded), and its warning names them and the command that fills them;
// that command, run as logged, leaves every hour stored once.
func TestRun_BehindTheBackfillHorizon(t *testing.T) {
	dir := t.TempDir()
	ahus := []string{"AHU-1"}
	cfg := site{schedule: "{backfill: 24h}", ahus: ahus}.write(t, dir, "site.yaml")
	from := time.Date(2026, 7, 1, 5, 0, 0, 0, time.UTC) // 2026-07-01 00:00 CDT
	importTrends(t, dir, cfg, ahus, from, 7*24*time.Hour)

	r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-02T00:30")
	require.Equal(t, 0, r.code, r.stderr)
	// Five days later (00:30 CDT is 05:30Z): the slot is 04:00Z on the
	// 7th, the horizon 24 hours back; the checkpoint is at 04:00Z on the 2nd.
	r = runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", "2026-07-07T00:30")
	require.Equal(t, 0, r.code, r.stderr)
	var warn map[string]any
	for _, l := range strings.Split(r.stderr, "\n") {
		if strings.Contains(l, "behind the backfill horizon") {
			require.NoError(t, json.Unmarshal([]byte(l), &warn), l)
		}
	}
	require.NotNil(t, warn, r.stderr)
	assert.Equal(t, "warn", warn["level"])
	assert.Equal(t, "AHU-1", warn["ahu"])
	assert.Equal(t, "2026-07-02T05:00:00Z", warn["from"], "the first hour skipped: the checkpoint's next")
	assert.Equal(t, "2026-07-06T05:00:00Z", warn["to"], "the horizon, excluded")
	assert.EqualValues(t, 96, warn["hours"])
	want := "dewline analyze --config " + cfg + " --ahu AHU-1 --from 2026-07-02T05:00:00Z --to 2026-07-06T05:00:00Z"
	require.Equal(t, want, warn["fill"])

	args := strings.Fields(warn["fill"].(string))
	r = runDewline(t, runBound, append([]string{"--log-level", "warn"}, args[1:]...)...)
	require.Equal(t, 0, r.code, r.stderr)
	seen := map[int64]int{}
	for _, h := range storedHours(t, filepath.Join(dir, "dewline.db")) {
		seen[h.HourMs]++
	}
	last := time.Date(2026, 7, 7, 4, 0, 0, 0, time.UTC)
	for h := from; !h.After(last); h = h.Add(time.Hour) {
		assert.Equal(t, 1, seen[h.UnixMilli()], "hour %s", h.Format(time.RFC3339))
	}
	assert.Len(t, seen, 6*24, "no hour outside the runs and the fill")
}

// TestRun_CheckpointUnknown: when the store cannot give an air handler's
// checkpoint (its table gone stands in for a store that is down), the
// summary says the checkpoint is unknown, not the zero time.
func TestRun_CheckpointUnknown(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	mustCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	db, err := sql.Open("sqlite", "file:"+filepath.Join(dir, "test.db")+"?_busy_timeout=5000")
	require.NoError(t, err)
	_, err = db.Exec(`ALTER TABLE checkpoints RENAME TO checkpoints_gone`)
	require.NoError(t, err)
	require.NoError(t, db.Close())

	code, out, _ := runCLI(t, "--log-level", "error", "run", "--config", cfg, "--once", "--as-of", "2026-07-15T12:07")
	assert.Equal(t, 1, code)
	assert.Contains(t, out, "AHU-7: 0 hours, checkpoint unknown, 0 alerts opened, 0 closed")
	assert.Contains(t, out, "failed: read checkpoint")
	assert.NotContains(t, out, "0001-01-01")
}
