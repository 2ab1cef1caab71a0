package main

import (
	"fmt"
	"net/http"
	"os"
	"path/filepath"
	"strings"
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

// TestInflux_AnalyzeManyAirHandlers: "dewline analyze" reads InfluxDB
// all the air handlers at a time (a day of them, or fewer hours for many),
// and writes the same file, byte for
// byte and in the same order, as analysing the export they were imported
// from. A point that matches nothing in the store is named in the log, for
// each air handler that maps it.
func TestInflux_AnalyzeManyAirHandlers(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_many")
	dir := t.TempDir()
	// 13 air handlers: a read holds 23 hours of them (agent.DefaultReadBatch),
	// so the reads do not fall on days.
	var ahus []string
	for i := 1; i <= 13; i++ {
		ahus = append(ahus, fmt.Sprintf("AHU-%d", i))
	}
	s := site{store: influxStore(url, db, "10s"), meas: "annex_trend", ahus: ahus}
	cfg := s.write(t, dir, "site.yaml")
	from := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, ahus, from, 32*time.Hour)
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	period := []string{"--from", "2026-07-14T00:00:00Z", "--to", "2026-07-15T06:00:00Z"}
	direct, fromStore := filepath.Join(dir, "direct.csv"), filepath.Join(dir, "influx.csv")
	code, _, errOut = runCLI(t, append([]string{"--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--out", direct, "--no-store"}, period...)...)
	require.Equal(t, 0, code, errOut)
	code, _, errOut = runCLI(t, append([]string{"--log-level", "warn", "analyze", "--config", cfg, "--out", fromStore, "--no-store"}, period...)...)
	require.Equal(t, 0, code, errOut)
	want, err := os.ReadFile(direct)
	require.NoError(t, err)
	got, err := os.ReadFile(fromStore)
	require.NoError(t, err)
	require.Equal(t, 1+13*30, strings.Count(string(want), "\n"), "a header and 30 hours of 13 air handlers")
	assert.Equal(t, string(want), string(got))

	// The entering RH under a measurement the store does not have.
	s.points = map[string]string{}
	for _, id := range ahus {
		s.points[id+"/entering_rh"] = fmt.Sprintf(`{column: %s_MARH, unit: "%%", measurement: annex_trnd, field: marh, tags: {ahu: %s}}`, colPrefix(id), id)
	}
	code, _, errOut = runCLI(t, append([]string{"--log-level", "warn", "analyze", "--config", s.write(t, dir, "typo.yaml"), "--no-store", "--out", filepath.Join(dir, "typo.csv")}, period...)...)
	require.Equal(t, 0, code, errOut)
	for _, id := range ahus {
		assert.Contains(t, errOut, fmt.Sprintf("%s entering_rh", id), "the missing point is named for %s", id)
	}
	assert.Contains(t, errOut, "run dewline import")
}

// TestInflux_ImportRefusedPartWay: the real server refuses the last
// series of a file's only batch (its field already holds strings: a field
// type conflict) after the four before it in name order are stored. The
// import says which series of which lines are stored, not "nothing", and
// counts the rows it read; the server holds those four series whole.
func TestInflux_ImportRefusedPartWay(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_part")
	dir := t.TempDir()
	_, data := writeScenario(t, dir)
	const meas = "ahu7"
	cfg := influxConfig(t, dir, inMeasurement(analyzeConfig, meas), url, db, "")
	// A string in field sat on every day of the export (site time
	// 2026-07-14..15, Chicago), so every shard it falls in holds one.
	var seed strings.Builder
	for d := 13; d <= 16; d++ {
		fmt.Fprintf(&seed, "%s sat=\"text\" %d\n", meas, time.Date(2026, 7, d, 12, 0, 0, 0, time.UTC).UnixNano())
	}
	resp, err := http.Post(url+"/write?db="+db, "text/plain", strings.NewReader(seed.String()))
	require.NoError(t, err)
	require.NoError(t, resp.Body.Close())
	require.Equal(t, http.StatusNoContent, resp.StatusCode)

	code, out, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, "field type conflict")
	assert.NotContains(t, errOut, "nothing of")
	assert.Contains(t, errOut, fmt.Sprintf(`(no line of %s is stored whole; of lines 2 to 2881, these series are stored whole: "CFM" (2880 values), "LAT" (2880 values), "MARH" (2880 values), "MAT" (2880 values), the others only as far as the error says`, data))
	assert.Contains(t, out, "2880 rows read, 14400 values accepted, 11520 written to the store")

	for _, field := range []string{"cfm", "lat", "marh", "mat"} {
		rows := influxQL(t, url, db, fmt.Sprintf(`SELECT count(%q) FROM %q`, field, meas))
		require.Len(t, rows, 1, field)
		assert.Equal(t, "2880", fmt.Sprint(rows[0].Values[0][1]), field)
	}
	rows := influxQL(t, url, db, fmt.Sprintf(`SELECT count("sat") FROM %q`, meas))
	require.Len(t, rows, 1)
	assert.Equal(t, "4", fmt.Sprint(rows[0].Values[0][1]), "the seeded strings only")
}
