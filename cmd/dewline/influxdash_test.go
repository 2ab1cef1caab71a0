package main

import (
	"io"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
)

// The dashboard reads the same figures back from InfluxDB as from the
// embedded store: the two-day scenario is analysed once into each (on the
// real InfluxDB test server), and the overview, one unit's hours and the
// alerts are compared.
func TestInflux_DashboardMatchesEmbedded(t *testing.T) {
	embCfg, fluxCfg, data := scenarioInBothStores(t, "dash")
	for _, cfg := range []string{embCfg, fluxCfg} {
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data)
		require.Equal(t, 0, code, errOut)
	}

	open := func(path string) (*dashboards.Site, dashboards.Results, *stores) {
		cfg, st := openTestStore(t, path)
		return siteFor(cfg), st.results(time.Now), st
	}
	site, emb, _ := open(embCfg)
	_, flux, fluxStores := open(fluxCfg)

	e1, e2, ok, err := emb.Span(t.Context())
	require.NoError(t, err)
	require.True(t, ok)
	f1, f2, ok, err := flux.Span(t.Context())
	require.NoError(t, err)
	require.True(t, ok)
	assert.True(t, e1.Equal(f1) && e2.Equal(f2), "span: embedded %s..%s, InfluxDB %s..%s", e1, e2, f1, f2)

	p, err := dashboards.ResolvePeriod("custom", "2026-07-13", "2026-07-16", site.Zone, e2)
	require.NoError(t, err)
	ovE, err := dashboards.BuildOverview(t.Context(), site, emb, p)
	require.NoError(t, err)
	ovF, err := dashboards.BuildOverview(t.Context(), site, flux, p)
	require.NoError(t, err)
	require.Len(t, ovF.AirHandlers, len(ovE.AirHandlers))
	for i := range ovE.AirHandlers {
		a, b := ovE.AirHandlers[i].Totals, ovF.AirHandlers[i].Totals
		require.Equal(t, 48, a.Hours)
		assert.Equal(t, a.Hours, b.Hours)
		assert.Equal(t, a.FlaggedHours, b.FlaggedHours)
		assert.Equal(t, ovE.AirHandlers[i].OpenAlerts, ovF.AirHandlers[i].OpenAlerts)
		assertSameTotals(t, a, b, ovE.AirHandlers[i].ID)
	}

	u := site.AirHandlers[0]
	hE, err := dashboards.BuildAirHandlerHours(t.Context(), u, emb, p, dashboards.Display{IP: true})
	require.NoError(t, err)
	hF, err := dashboards.BuildAirHandlerHours(t.Context(), u, flux, p, dashboards.Display{IP: true})
	require.NoError(t, err)
	require.Equal(t, hE.Hours, hF.Hours)
	assert.Equal(t, hE.Flags, hF.Flags)
	for i := range hE.Hours {
		assert.InDelta(t, float64(hE.ReheatAvoid[i]), float64(hF.ReheatAvoid[i]), 1e-9, "hour %d", i)
		assert.InDelta(t, float64(hE.Leaving[i]), float64(hF.Leaving[i]), 1e-9, "hour %d", i)
	}

	aE, err := emb.Alerts(t.Context(), dashboards.AlertQuery{From: p.From, To: p.To})
	require.NoError(t, err)
	aF, err := flux.Alerts(t.Context(), dashboards.AlertQuery{From: p.From, To: p.To})
	require.NoError(t, err)
	require.NotEmpty(t, aE, "the scenario raises alerts")
	require.Len(t, aF, len(aE))
	for i := range aE {
		assert.Equal(t, aE[i].ID, aF[i].ID)
		assert.Equal(t, aE[i].State, aF[i].State, aE[i].ID)
		assert.True(t, aE[i].Start.Equal(aF[i].Start), aE[i].ID)
		assert.True(t, aE[i].End.Equal(aF[i].End), "%s: end %s vs %s", aE[i].ID, aE[i].End, aF[i].End)
		assert.InDelta(t, aE[i].Money, aF[i].Money, 1e-9, aE[i].ID)
		assert.Equal(t, aE[i].Reason, aF[i].Reason)
	}

	// And the page itself, served over InfluxDB.
	cfg, err := loadConfig(fluxCfg)
	require.NoError(t, err)
	h, err := dashboardFor(cfg, fluxStores, &env{stdout: io.Discard, stderr: io.Discard, log: zerolog.Nop()})
	require.NoError(t, err)
	rr := httptest.NewRecorder()
	h.ServeHTTP(rr, httptest.NewRequest(http.MethodGet, "/?period=custom&from=2026-07-13&to=2026-07-16", nil))
	assert.Equal(t, http.StatusOK, rr.Code)
	assert.Contains(t, rr.Body.String(), `data-unit="AHU-7"`)
}
