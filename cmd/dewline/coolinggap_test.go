package main

import (
	"encoding/json"
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
	return leavingExport(gapHour, func(int) float64 { return 10 })
}

// leavingExport is meterDropoutExport with the coil leaving air at
// leavingC(hour) °C.
func leavingExport(gapHour int, leavingC func(hour int) float64) string {
	var b strings.Builder
	b.WriteString("time,point,value\n")
	for m := 0; m < 720; m += 5 {
		for _, p := range []struct {
			name string
			v    float64
		}{{"MAT", 26}, {"MARH", 60}, {"LAT", leavingC(m / 60)}, {"SAT", 16}, {"CFM", 2}, {"KW", 20}} {
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

// TestAnalyze_CoolingMeterDropoutAlerts: the coil runs colder than needed
// from hour 1 to 9 and the meter is silent in hour 3, so the alert opens
// in the hour without a cooling input. Its totals are the sums of the
// hourly file's figures over the other hours, it says that one hour could
// not be computed, and nothing (summary, hourly files, store, queued
// webhook bodies, report) says NaN; the store's write no longer fails on
// the alert's NaN.
func TestAnalyze_CoolingMeterDropoutAlerts(t *testing.T) {
	dir := t.TempDir()
	export := leavingExport(3, func(h int) float64 {
		if h >= 1 && h <= 9 {
			return 8 // 4.5 K below the 12.5 °C the 12 °C dew point needs
		}
		return 12
	})
	cfg, data := writeCase(t, dir, meterDropoutConfig, export)
	const told = "the energy or cost at stake could not be computed for 1 hour and is left out of the totals"

	for _, name := range []string{"hourly.json", "hourly.csv"} {
		out := filepath.Join(dir, "nostore-"+name)
		r := runDewline(t, time.Minute, "analyze", "--config", cfg, "--input", data, "--no-store", "--out", out)
		require.Equal(t, 0, r.code, r.stderr)
		b, err := os.ReadFile(out)
		require.NoError(t, err)
		for _, bad := range []string{"NaN", "Inf"} {
			assert.NotContains(t, r.stdout, bad)
			assert.NotContains(t, string(b), bad, name)
		}
	}

	out := filepath.Join(dir, "hourly.csv")
	r := runDewline(t, time.Minute, "analyze", "--config", cfg, "--input", data, "--out", out)
	require.Equal(t, 0, r.code, r.stderr)
	header, rows := readHourly(t, out)
	val := func(row []string, name string) string {
		i := slices.Index(header, name)
		require.GreaterOrEqual(t, i, 0, name)
		return row[i]
	}
	num := func(row []string, name string) float64 {
		v, err := strconv.ParseFloat(val(row, name), 64)
		require.NoError(t, err, name)
		return v
	}
	var kwh, money float64
	held, without := 0, 0
	for _, row := range rows {
		if num(row, "overcooling_k") < 1.5 {
			continue
		}
		held++
		if val(row, "cooling_avoidable_input_kwh") == "" {
			without++
			continue
		}
		kwh += num(row, "cooling_avoidable_input_kwh") + num(row, "reheat_avoidable_kwh")
		money += num(row, "cost_avoidable")
	}
	require.Equal(t, 9, held, "hours 1 to 9 over-cool")
	require.Equal(t, 1, without, "hour 3 has no cooling input")

	type alertRow struct {
		ID, State, Reason string
		Energy, Cost      *float64
	}
	alerts := sqliteRows(t, filepath.Join(dir, "m.db"), "SELECT id, state, reason, energy_kwh, cost FROM alerts WHERE kind = 'coil_colder_than_needed'",
		func(a *alertRow) []any { return []any{&a.ID, &a.State, &a.Reason, &a.Energy, &a.Cost} })
	require.Len(t, alerts, 1)
	a := alerts[0]
	assert.Equal(t, "closed", a.State)
	require.NotNil(t, a.Energy, "energy_kwh stored as NULL")
	require.NotNil(t, a.Cost, "cost stored as NULL")
	assert.InDelta(t, kwh, *a.Energy, 1e-6, "the hours with a cooling input")
	assert.InDelta(t, money, *a.Cost, 1e-6)
	assert.Contains(t, a.Reason, "opened: the coil left air at 8.0 °C")
	assert.Contains(t, a.Reason, "could not be computed: the hour has no cooling input")
	assert.True(t, strings.HasSuffix(a.Reason, told), a.Reason)

	var closed map[string]any
	for _, e := range storedEvents(t, filepath.Join(dir, "m.db")) {
		assert.NotContains(t, e.Payload, "NaN")
		if e.AlertID == a.ID && e.Transition == "closed" {
			require.NoError(t, json.Unmarshal([]byte(e.Payload), &closed))
		}
	}
	require.NotNil(t, closed, "the closed event is queued")
	assert.InDelta(t, kwh, closed["energy_kwh"], 1e-6)
	assert.InDelta(t, money, closed["money"], 1e-6)
	assert.Contains(t, closed["reason"], told)

	html := filepath.Join(dir, "report.html")
	r = runDewline(t, time.Minute, "report", "--config", cfg, "--from", "2026-07-01", "--to", "2026-07-01", "-o", html)
	require.Equal(t, 0, r.code, r.stderr)
	b, err := os.ReadFile(html)
	require.NoError(t, err)
	page := string(b)
	assert.Contains(t, page, told)
	for _, bad := range []string{"NaN", "Inf"} {
		assert.NotContains(t, page, bad)
	}
}
