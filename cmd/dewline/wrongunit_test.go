package main

import (
	"encoding/csv"
	"fmt"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/metrics"
)

// TestRun_SupplyLoggedInCelsiusConfiguredAsF is the unit mistake that
// "check --store" catches: the supply temperature logged in °C while the
// configuration says °F (so about 16.7 °C is read as 16.7 °F, -8.5 °C).
// "run --once" flags every hour wrong_unit:supply_temp, the rule check
// applies, opens sensor_implausible naming the point and its unit, and the
// dashboard's page of the air handler shows the alert rather than none.
//
// Both stores: the embedded file reads point by point, InfluxDB (the
// real test server) in batches, and both paths judge the units.
func TestRun_SupplyLoggedInCelsiusConfiguredAsF(t *testing.T) {
	t.Run("embedded", func(t *testing.T) {
		dir := t.TempDir()
		cfg := site{ahus: []string{"AHU-1"}, schedule: "{backfill: 24h}"}.write(t, dir, "site.yaml")
		testWrongUnitRun(t, dir, cfg, func() []string {
			var flags []string
			for _, h := range storedHours(t, filepath.Join(dir, "dewline.db")) {
				flags = append(flags, h.Flags)
			}
			return flags
		})
	})
	t.Run("influxdb", func(t *testing.T) {
		url, _ := testkit.InfluxDB(t)
		db := freshDB(t, url, "dewline_unit")
		dir := t.TempDir()
		cfg := site{store: influxStore(url, db, "5s"), meas: "annex_trend", ahus: []string{"AHU-1"}, schedule: "{backfill: 24h}"}.write(t, dir, "site.yaml")
		testWrongUnitRun(t, dir, cfg, func() []string {
			var flags []string
			for _, h := range influxHourly(t, url, db, "AHU-1") {
				f, _ := h["flags"].(string)
				flags = append(flags, f)
			}
			return flags
		})
	})
}

// testWrongUnitRun imports a day with the supply logged in °C into the
// store of cfg and runs the agent over it; flags returns the flags of each
// stored hour.
func testWrongUnitRun(t *testing.T, dir, cfg string, flags func() []string) {
	asOf := time.Date(2026, 7, 20, 12, 30, 0, 0, time.UTC)
	from := asOf.Truncate(time.Hour).Add(-24 * time.Hour)
	data := filepath.Join(dir, "trends.csv")
	writeTrends(t, data, []string{"AHU-1"}, from, asOf.Sub(from))
	// The supply column as the controller logged it: in °C.
	celsiusColumn(t, data, "AHU1_SAT")

	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	code, out, _ := runCLI(t, "check", "--config", cfg, "--store", "--from", from.Format(time.RFC3339), "--to", asOf.Format(time.RFC3339))
	require.Equal(t, 3, code, "check --store: points need a look")
	assert.Regexp(t, `AHU-1\s+supply_temp\s+AHU1_SAT\s+F\s.*values look like °C, not F`, out)

	code, stdout, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", asOf.Format(time.RFC3339))
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, stdout, "AHU-1: 24 hours")
	hours := flags()
	require.Len(t, hours, 24)
	for i, f := range hours {
		assert.Contains(t, f, metrics.FlagWrongUnit+"supply_temp", "hour %d", i)
	}

	loaded, err := loadConfig(cfg)
	require.NoError(t, err)
	st, err := openStore(t.Context(), loaded, true, zerolog.Nop())
	require.NoError(t, err)
	defer st.Close()
	alerts, err := st.results(time.Now).Alerts(t.Context(), dashboards.AlertQuery{AHU: "AHU-1", Kind: metrics.AlertSensorImplausible})
	require.NoError(t, err)
	require.Len(t, alerts, 1)
	assert.Equal(t, string(metrics.StatusOpen), alerts[0].State)
	assert.Contains(t, alerts[0].Reason, "supply_temp's values look logged in another unit than configured")

	h, err := dashboardFor(loaded, st, &env{log: zerolog.Nop()})
	require.NoError(t, err)
	day := asOf.Add(-12 * time.Hour).In(loaded.Location).Format("2006-01-02")
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/units/AHU-1?period=custom&from="+day+"&to="+day, nil))
	require.Equal(t, http.StatusOK, rec.Code)
	page := rec.Body.String()
	assert.NotContains(t, page, "No alerts in this period")
	assert.Contains(t, page, "Sensor implausible")
}

// celsiusColumn rewrites an export's °F column in °C, as a controller
// configured in SI would log it.
func celsiusColumn(t *testing.T, path, col string) {
	t.Helper()
	f, err := os.Open(path)
	require.NoError(t, err)
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	require.NoError(t, err)
	c := -1
	for i, h := range rows[0] {
		if h == col {
			c = i
		}
	}
	require.GreaterOrEqual(t, c, 0, "column %s", col)
	for _, r := range rows[1:] {
		v, err := strconv.ParseFloat(r[c], 64)
		require.NoError(t, err)
		r[c] = fmt.Sprintf("%.2f", (v-32)/1.8)
	}
	var b strings.Builder
	w := csv.NewWriter(&b)
	require.NoError(t, w.WriteAll(rows))
	require.NoError(t, os.WriteFile(path, []byte(b.String()), 0o600))
}
