package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// A two-day scenario of our own: one DX air handler, IP units, a humid
// day and a dry night, written as a wide export in local time.
const analyzeConfig = `version: 1
site: {timezone: America/Chicago, altitude: 15ft, units: ip}
store: {kind: embedded, path: test.db}
prices: {currency: USD, electricity_per_kwh: 0.12}
air_handlers:
  - id: AHU-7
` + scenarioPlant + scenarioPoints

func writeScenario(t *testing.T, dir string) (cfg, data string) {
	t.Helper()
	return writeCase(t, dir, analyzeConfig, scenarioExport(60, 55))
}

// scenarioExport is the two-day scenario's export (columns of
// scenarioPoints) from 2026-07-14 00:00 site time: the entering air at
// dayRHPct by day (08-20) and 38 % at night, the coil leaving at 52 °F by
// day and at nightLeavingF at night.
func scenarioExport(dayRHPct, nightLeavingF float64) string {
	start := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	return minuteExport("Time,MAT,MARH,LAT,SAT,CFM", start, start.Add(48*time.Hour), func(ts time.Time) string {
		m := int(ts.Sub(start) / time.Minute)
		day := ts.Hour() >= 8 && ts.Hour() < 20
		mat, rh, lat := 76.0+math.Sin(float64(m)/90), dayRHPct, 52.0
		if !day {
			rh, lat = 38, nightLeavingF
		}
		return fmt.Sprintf(",%.2f,%.1f,%.2f,%.2f,%d", mat, rh, lat, 62.0, 8000)
	})
}

// minuteExport is a wide export of one-minute readings over [from, to):
// the header, then one line a minute, its time written without a zone
// (site time) followed by row(ts), the values each after a comma.
func minuteExport(header string, from, to time.Time, row func(ts time.Time) string) string {
	var b strings.Builder
	b.WriteString(header + "\n")
	for ts := from; ts.Before(to); ts = ts.Add(time.Minute) {
		b.WriteString(ts.Format("2006-01-02 15:04:05") + row(ts) + "\n")
	}
	return b.String()
}

// writeCase writes a configuration and an export into dir as site.yaml
// and export.csv and returns their paths.
func writeCase(t *testing.T, dir, cfgText, export string) (cfg, data string) {
	t.Helper()
	cfg, data = filepath.Join(dir, "site.yaml"), filepath.Join(dir, "export.csv")
	require.NoError(t, os.WriteFile(cfg, []byte(cfgText), 0o600))
	require.NoError(t, os.WriteFile(data, []byte(export), 0o600))
	return cfg, data
}

// readHourly reads a CSV file with a header line: the header and the rows.
func readHourly(t *testing.T, path string) (header []string, rows [][]string) {
	t.Helper()
	f, err := os.Open(path)
	require.NoError(t, err)
	defer f.Close()
	all, err := csv.NewReader(f).ReadAll()
	require.NoError(t, err)
	require.NotEmpty(t, all, "%s has no header line", path)
	return all[0], all[1:]
}

// TestAnalyze_ExportAndStoreAgree: analysing an export directly and
// analysing the store after importing it give the same hours, and the
// hourly file has every documented column.
func TestAnalyze_ExportAndStoreAgree(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	direct, fromStore := filepath.Join(dir, "direct.csv"), filepath.Join(dir, "store.csv")

	code, out, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--out", direct, "--no-store")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7")
	assert.Contains(t, out, "engineer of record", "the caution is printed with the figures")

	code, out, errOut = runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "2880 rows read")
	// Importing again replaces, never duplicates.
	code, _, errOut = runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)

	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-15", "--out", fromStore)
	require.Equal(t, 0, code, errOut)

	// Without --from/--to the store's span is the period: the hours from
	// the first stored sample through the last, as the export gives them.
	spanned := filepath.Join(dir, "span.csv")
	code, _, errOut = runCLI(t, "--log-level", "info", "analyze", "--config", cfg, "--out", spanned)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, errOut, "stored span")

	h1, r1 := readHourly(t, direct)
	h2, r2 := readHourly(t, fromStore)
	h3, r3 := readHourly(t, spanned)
	assert.Equal(t, h1, h2)
	assert.Equal(t, h1, h3)
	assert.Equal(t, r1, r3, "the stored span gives the export's hours, 2026-07-14 00:00Z to 2026-07-15 23:00Z")
	for _, name := range metrics.FieldNames() {
		assert.Contains(t, h1, name)
	}
	require.Len(t, r1, 48, "two days from the first to the last export hour")
	require.Len(t, r2, 48, "14 and 15 July, the last day included, in Chicago is 48 hours")
	for i := range r1 {
		assert.Equal(t, r1[i], r2[i], "hour %d", i)
	}

	// The hour 2026-07-14 14:00 CDT (19:00Z) is a humid day hour: the coil
	// at 52 °F (11.1 °C) leaves air at 95 % RH, a dew point of about
	// 10.4 °C, below the 52 °F target, and reheat to 62 °F is needed. By the
	// sensible rule of thumb (common practice, no source) the reheat is
	// about 1.08 x 8000 CFM x 10 °F = 86,400 Btu/h = 25.3 kWh in the hour.
	col := map[string]int{}
	for i, h := range h1 {
		col[h] = i
	}
	var day []string
	for _, r := range r1 {
		if r[col["hour_start"]] == "2026-07-14T19:00:00Z" {
			day = r
		}
	}
	require.NotNil(t, day)
	reheat, _ := strconv.ParseFloat(day[col["reheat_kwh"]], 64)
	assert.InEpsilon(t, 25.3, reheat, 0.03)
	cov, _ := strconv.ParseFloat(day[col["coverage"]], 64)
	assert.Equal(t, 1.0, cov)
}

func TestAnalyze_BadInput(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no config", []string{"analyze", "--input", data}, 2, "--config is required"},
		{"empty store", []string{"analyze", "--config", cfg}, 1, "holds no samples of the points configured for AHU-7"},
		{"bad time", []string{"analyze", "--config", cfg, "--from", "July", "--to", "2026-07-15"}, 2, "is not a time"},
		{"bad out", []string{"analyze", "--config", cfg, "--input", data, "--out", "x.xlsx"}, 2, ".csv or .json"},
		{"unknown unit", []string{"analyze", "--config", cfg, "--input", data, "--ahu", "AHU-9"}, 2, `"AHU-9": no such air handler`},
		{"missing file", []string{"analyze", "--config", cfg, "--input", filepath.Join(dir, "nope.csv")}, 1, "nope.csv"},
		{"broken config", []string{"analyze", "--config", data, "--input", data}, 1, "export.csv"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, _, errOut := runCLI(t, append([]string{"--log-level", "error"}, tt.args...)...)
			assert.Equal(t, tt.code, code, errOut)
			assert.Contains(t, errOut, tt.want)
		})
	}
}

func TestCheck_Inputs(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeScenario(t, dir)
	code, out, errOut := runCLI(t, "check", "--config", cfg, "--input", data)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "valid; 1 air handler(s), 5 point(s)")
	assert.Contains(t, out, "wide layout, 2880 rows")
	assert.Regexp(t, `AHU-7\s+supply_flow\s+CFM\s+CFM\s+2880\s+2026-07-14 00:00\s+2026-07-15 23:59\s+1m0s\s+0.0%`, out)
	// Declaring the °F column as °C is caught.
	wrong := filepath.Join(dir, "wrong.yaml")
	require.NoError(t, os.WriteFile(wrong, bytes.ReplaceAll([]byte(analyzeConfig), []byte("{column: SAT, unit: F}"), []byte("{column: SAT, unit: C}")), 0o600))
	code, out, _ = runCLI(t, "check", "--config", wrong, "--input", data)
	require.Equal(t, 3, code, "points need a look: a distinct exit status")
	assert.Contains(t, out, "values look like °F, not C")
}

// TestPeriodRule: every command reads a period's bounds by one rule (a
// date is a whole local day, the --to day included; a time is an instant,
// excluded), and says so in its help. One day of the scenario in Chicago
// (CDT, UTC-5) is the 24 hours from 05:00Z; the report of the same day
// covers the same hours.
func TestPeriodRule(t *testing.T) {
	dir, cfg, _ := reportStore(t)
	tests := []struct {
		name     string
		from, to string
		first    string
		hours    int
	}{
		{"one day", "2026-07-14", "2026-07-14", "2026-07-14T05:00:00Z", 24},
		{"two days", "2026-07-14", "2026-07-15", "2026-07-14T05:00:00Z", 48},
		{"a time is excluded", "2026-07-14T06:00", "2026-07-14T09:00", "2026-07-14T11:00:00Z", 3},
		{"RFC 3339 is excluded", "2026-07-14T05:00:00Z", "2026-07-14T07:00:00Z", "2026-07-14T05:00:00Z", 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			out := filepath.Join(dir, "h.csv")
			code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--no-store", "--from", tt.from, "--to", tt.to, "--out", out)
			require.Equal(t, 0, code, errOut)
			header, rows := readHourly(t, out)
			require.Len(t, rows, tt.hours)
			col := -1
			for i, h := range header {
				if h == "hour_start" {
					col = i
				}
			}
			assert.Equal(t, tt.first, rows[0][col])
		})
	}
	rep := filepath.Join(dir, "r.html")
	code, _, errOut := runCLI(t, "--log-level", "warn", "report", "--config", cfg, "--from", "2026-07-14", "--to", "2026-07-14", "-o", rep)
	require.Equal(t, 0, code, errOut)
	body, err := os.ReadFile(rep)
	require.NoError(t, err)
	assert.True(t, strings.Contains(string(body), `data-field="hours" data-value="24"`), "the report of the same day holds the same 24 hours")

	for _, cmd := range []string{"analyze", "report", "check"} {
		code, stdout, _ := runCLI(t, cmd, "-h")
		assert.Equal(t, 0, code)
		assert.Contains(t, stdout, "--to DAY includes that day", "%s -h states the rule", cmd)
	}
}
