package main

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// A DX air handler whose cooling input is metered and which has no rated
// EER to fall back on; its meter logs nothing in one hour of twelve.
const meterDropoutConfig = `version: 1
site: {name: Min, timezone: UTC, altitude: 0m, units: si}
store: {kind: embedded, path: m.db}
prices: {currency: USD, electricity_per_kwh: 0.1}
air_handlers:
  - id: AHU-1
    cooling: {kind: dx}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_supply_dewpoint: 12C}
    points:
      entering_temp: {point: MAT, unit: C}
      entering_rh:   {point: MARH, unit: "%"}
      leaving_temp:  {point: LAT, unit: C}
      supply_temp:   {point: SAT, unit: C}
      supply_flow:   {point: CFM, unit: m3/s}
      cooling_kw:    {point: KW, unit: kW}
`

// meterDropoutExport is twelve steady hours from 2026-07-01 00:00 UTC,
// logged every 5 minutes as a long export, the meter (KW, 20 kW) silent
// in the hour gapHour.
func meterDropoutExport(gapHour int) string {
	var b strings.Builder
	b.WriteString("time,point,value\n")
	for m := 0; m < 720; m += 5 {
		for _, p := range []struct {
			name string
			v    float64
		}{{"MAT", 26}, {"MARH", 60}, {"LAT", 10}, {"SAT", 16}, {"CFM", 2}, {"KW", 20}} {
			if p.name == "KW" && m/60 == gapHour {
				continue
			}
			fmt.Fprintf(&b, "2026-07-01 %02d:%02d:00,%s,%g\n", m/60, m%60, p.name, p.v)
		}
	}
	return b.String()
}

// TestAnalyze_CoolingMeterDropout: the summary of an analysis sums the
// hours that have a value and says how many hours had no cooling input;
// it never prints NaN or Inf. The hourly file is the reference: the
// summary's cost is the sum of its non-empty costs.
func TestAnalyze_CoolingMeterDropout(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeCase(t, dir, meterDropoutConfig, meterDropoutExport(3))
	out := filepath.Join(dir, "hourly.csv")
	r := runDewline(t, time.Minute, "analyze", "--config", cfg, "--input", data, "--no-store", "--out", out)
	require.Equal(t, 0, r.code, r.stderr)
	for _, bad := range []string{"NaN", "Inf"} {
		assert.NotContains(t, r.stdout, bad)
	}

	header, rows := readHourly(t, out)
	col := func(name string) int {
		i := slices.Index(header, name)
		require.GreaterOrEqual(t, i, 0, name)
		return i
	}
	require.Len(t, rows, 12)
	var cost, avoid float64
	withInput := 0
	for _, row := range rows {
		if row[col("cooling_input_kwh")] == "" {
			assert.True(t, strings.HasPrefix(row[col("hour_start")], "2026-07-01T03:"), "only hour 03 lacks the meter")
			for _, f := range []string{"coil_eer", "effective_eer", "cost", "cost_avoidable"} {
				assert.Empty(t, row[col(f)], "%s of an hour without a cooling input", f)
			}
			assert.Contains(t, row[col("flags")], metrics.FlagCoolingMissing)
			assert.NotContains(t, row[col("flags")], metrics.FlagModelledCooling)
			continue
		}
		withInput++
		c, err := strconv.ParseFloat(row[col("cost")], 64)
		require.NoError(t, err)
		a, err := strconv.ParseFloat(row[col("cost_avoidable")], 64)
		require.NoError(t, err)
		cost, avoid = cost+c, avoid+a
	}
	require.Equal(t, 11, withInput)

	var line []string
	for _, l := range strings.Split(r.stdout, "\n") {
		if f := strings.Fields(l); len(f) > 0 && f[0] == "AHU-1" {
			line = f
			break
		}
	}
	require.Len(t, line, 10, r.stdout)
	assert.Equal(t, fmt.Sprintf("%.2f", avoid), line[6], "avoidable cost")
	assert.Equal(t, fmt.Sprintf("%.2f", cost), line[7], "cost")
	assert.Contains(t, r.stdout, fmt.Sprintf("(%.2f USD of %.2f USD)", avoid, cost))
	assert.Contains(t, r.stdout, "AHU-1: 1 hour flagged cooling_input_missing")
	// Every hour is the same but for the meter, so the period's EER is
	// any full hour's.
	eer, err := strconv.ParseFloat(rows[0][col("effective_eer")], 64)
	require.NoError(t, err)
	assert.Equal(t, fmt.Sprintf("%.1f", eer), line[8], "effective EER over the hours with a cooling input")
}

// TestCheck_CoolingMeterWithoutFallback: check warns about a metered
// cooling input with no rated EER to stand in for the meter, and not once
// the rated EER is set.
func TestCheck_CoolingMeterWithoutFallback(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeCase(t, dir, meterDropoutConfig, "")
	r := runDewline(t, time.Minute, "check", "--config", cfg)
	require.Equal(t, 0, r.code, r.stderr)
	assert.Contains(t, r.stdout, "AHU-1 warning: cooling_kw has no fallback")
	assert.Contains(t, r.stdout, "add cooling.rated_eer")

	cfg, _ = writeCase(t, dir, strings.Replace(meterDropoutConfig, "{kind: dx}", "{kind: dx, rated_eer: 11}", 1), "")
	r = runDewline(t, time.Minute, "check", "--config", cfg)
	require.Equal(t, 0, r.code, r.stderr)
	assert.NotContains(t, r.stdout, "warning")
}

// TestReport_CoolingMeterDropout: the stored hours of the same analysis
// sum the same way in the report (from the store's daily sums) as in the
// summary, and the report says how many hours had no cooling input.
func TestReport_CoolingMeterDropout(t *testing.T) {
	dir := t.TempDir()
	cfg, data := writeCase(t, dir, meterDropoutConfig, meterDropoutExport(3))
	out := filepath.Join(dir, "hourly.csv")
	r := runDewline(t, time.Minute, "analyze", "--config", cfg, "--input", data, "--out", out)
	require.Equal(t, 0, r.code, r.stderr)
	header, rows := readHourly(t, out)
	cost := 0.0
	for _, row := range rows {
		if v := row[slices.Index(header, "cost")]; v != "" {
			c, err := strconv.ParseFloat(v, 64)
			require.NoError(t, err)
			cost += c
		}
	}
	html := filepath.Join(dir, "report.html")
	r = runDewline(t, time.Minute, "report", "--config", cfg, "--from", "2026-07-01", "--to", "2026-07-01", "-o", html)
	require.Equal(t, 0, r.code, r.stderr)
	b, err := os.ReadFile(html)
	require.NoError(t, err)
	page := string(b)
	assert.Contains(t, page, "1 hour without a cooling input")
	assert.Contains(t, page, fmt.Sprintf("%.2f USD", cost))
	// Every hour is the same but for the meter: the EER of the sums over
	// the hours with a cooling input is any such hour's (the coil of the
	// hour without one, counted over the others' input, read 5.8).
	eer, err := strconv.ParseFloat(rows[0][slices.Index(header, "effective_eer")], 64)
	require.NoError(t, err)
	assert.Contains(t, page, fmt.Sprintf(`data-field="effective_eer" data-value="%.10g"`, eer)[:len(`data-field="effective_eer" data-value="`)+5])
	for _, bad := range []string{"NaN", "Inf"} {
		assert.NotContains(t, page, bad)
	}
}
