package main

import (
	"fmt"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
)

// TestInflux_ImportAnalyzeMatchesExport: the two-day scenario imported into
// the real InfluxDB server and analysed from it gives the same hours as
// analysing the export directly.
func TestInflux_ImportAnalyzeMatchesExport(t *testing.T) {
	url, db := testkit.InfluxDB(t)
	dir := t.TempDir()
	_, data := writeScenario(t, dir)
	meas := fmt.Sprintf("ahu7_%d", time.Now().UnixNano())
	// The same point map, with an InfluxDB location for every point (in its
	// own unit) beside the CSV column.
	cfg := influxConfig(t, dir, inMeasurement(analyzeConfig, meas), url, db, "")

	code, out, errOut := runCLI(t, "--log-level", "warn", "check", "--config", cfg)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "store influxdb")

	code, out, errOut = runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "14400 written to the store")

	code, out, errOut = runCLI(t, "--log-level", "warn", "check", "--config", cfg, "--store", "--from", "2026-07-14", "--to", "2026-07-15")
	require.Equal(t, 0, code, errOut)
	assert.Regexp(t, `AHU-7\s+supply_temp\s+SAT\s+F\s+2880`, out)

	direct, fromStore := filepath.Join(dir, "direct.csv"), filepath.Join(dir, "influx.csv")
	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--out", direct, "--no-store")
	require.Equal(t, 0, code, errOut)
	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "--out", fromStore)
	require.Equal(t, 0, code, errOut)
	h1, r1 := readHourly(t, direct)
	h2, r2 := readHourly(t, fromStore)
	assert.Equal(t, h1, h2)
	require.Len(t, r2, 48)
	require.Equal(t, len(r1), len(r2))
	for i := range r1 {
		assert.Equal(t, r1[i], r2[i], "hour %d", i)
	}
}
