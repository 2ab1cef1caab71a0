package main

import (
	"strings"
	"testing"

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
