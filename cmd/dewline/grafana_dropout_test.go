package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/deploy/grafana"
	"github.com/dewline/dewline/deploy/testkit"
)

// TestGrafana_CoolingMeterDropout: the overview's table of air handlers
// takes the effective EER of the sums over the hours with a cooling input,
// as dewline's API does, in both flavours. The data: twelve equal hours of
// a metered unit without a fallback, its meter silent in hour 3 (the EER
// over every hour, its coil over the others' input, reads 5.8 for hours
// of 5.5). Two sites in one database: "default" analysed once; "stale"
// first with a rated EER (every hour has an input) and then without, so
// InfluxDB keeps hour 3's old cooling_input_kwh beside the new "missing"
// that names it. The API's figures come from the same analysis into the
// embedded store.
func TestGrafana_CoolingMeterDropout(t *testing.T) {
	base, _ := testkit.InfluxDB(t)
	db := freshDB(t, base, "grafana_dropout")
	dir := t.TempDir()
	embeddedCfg, data := writeCase(t, dir, meterDropoutConfig, meterDropoutExport(3))
	store := fmt.Sprintf("store: {kind: influxdb, influxdb: {url: %q, bucket: %q, timeout: 60s}}", base, db+"/autogen")
	influxCfg := func(name, site, cooling string) string {
		text := strings.Replace(meterDropoutConfig, "store: {kind: embedded, path: m.db}", store, 1)
		text = strings.Replace(text, "site: {", "site: {id: "+site+", ", 1)
		text = strings.Replace(text, "cooling: {kind: dx}", "cooling: "+cooling, 1)
		require.NotEqual(t, meterDropoutConfig, text)
		p := filepath.Join(dir, name)
		require.NoError(t, os.WriteFile(p, []byte(text), 0o600))
		return p
	}
	for _, cfg := range []string{
		embeddedCfg,
		influxCfg("default.yaml", "default", "{kind: dx}"),
		influxCfg("stale-rated.yaml", "stale", "{kind: dx, rated_eer: 11}"),
		influxCfg("stale.yaml", "stale", "{kind: dx}"),
	} {
		code, _, errOut := runCLI(t, "--log-level", "error", "analyze", "--config", cfg, "--input", data)
		require.Equal(t, 0, code, "%s: %s", cfg, errOut)
	}

	// The re-written hour keeps its old input in InfluxDB, listed missing.
	stale := influxQL(t, base, db, `SELECT "cooling_input_kwh", "missing", "flags" FROM "dewline_hourly" WHERE "site" = 'stale' AND time = '2026-07-01T03:00:00Z'`)
	require.Len(t, stale, 1)
	require.Len(t, stale[0].Values, 1)
	assert.NotNil(t, stale[0].Values[0][1], "InfluxDB keeps the old cooling_input_kwh")
	assert.Contains(t, stale[0].Values[0][2], "cooling_input_kwh")
	assert.Contains(t, stale[0].Values[0][3], "cooling_input_missing")

	cfg, st := openTestStore(t, embeddedCfg)
	h, err := dashboardFor(cfg, st, &env{stdout: io.Discard, stderr: io.Discard, log: zerolog.Nop()})
	require.NoError(t, err)
	rr := httptest.NewRecorder()
	h.ServeHTTP(rr, httptest.NewRequest(http.MethodGet, "/api/v1/overview?period=custom&from=2026-07-01&to=2026-07-01&units=si", nil))
	require.Equal(t, http.StatusOK, rr.Code, rr.Body.String())
	var ov dashboards.Overview
	require.NoError(t, json.Unmarshal(rr.Body.Bytes(), &ov))
	require.Len(t, ov.AirHandlers, 1)
	tt := ov.AirHandlers[0].Totals
	require.Equal(t, 1, tt.NoCoolingInputHours, "hour 3 has no cooling input")
	require.Equal(t, 12, tt.Hours)

	for _, f := range grafana.Flavours {
		raw, err := os.ReadFile(filepath.Join("../../deploy/grafana/dashboards", string(f), "dewline-"+grafana.Overview+".json"))
		require.NoError(t, err)
		d, err := grafana.Load(raw)
		require.NoError(t, err)
		qs, err := grafana.Queries(d)
		require.NoError(t, err)
		query := ""
		for _, pq := range qs {
			if pq.Panel == "Air handlers by money at stake" {
				query = pq.Query.Query
			}
		}
		require.NotEmpty(t, query, "%s: the panel", f)

		g := &grafanaRun{t: t, base: base, db: db, site: "default", from: ov.Period.From, to: ov.Period.To.Add(-time.Millisecond)}
		c := &panelCheck{t: t, label: string(f) + " default", rows: g.run(f, query, "")}
		c.byAHU(ov, f == grafana.Flux)

		// The other sums read what InfluxDB holds (README, "Grafana
		// dashboards"); the EER and the cooling input leave the stale
		// input out.
		g.site = "stale"
		c = &panelCheck{t: t, label: string(f) + " stale", rows: g.run(f, query, "")}
		require.Len(t, c.rows, 1, c.label)
		c.perAHU("AHU-1", "effective_eer", float64(tt.EffectiveEER))
		c.perAHU("AHU-1", "cooling_input_kwh", float64(tt.CoolingInput))
	}
}
