package main

import (
	"fmt"
	"io"
	"math"
	"net/http"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
)

// TestPortfolio_Browser: "dewline serve" given the two sites' configurations
// (one shared InfluxDB database) serves the portfolio, and a real headless
// Chromium finds on it both sites with the totals of each site's own hours
// (summed here from what each site, analysed alone, stored), every air
// handler of both ranked by avoidable cost, each site's own pages under
// its path, and the alerts filtered by site.
func TestPortfolio_Browser(t *testing.T) {
	pf := setUpPortfolio(t)
	b := startBrowser(t)
	base := serveDash(t, pf.cfgs[0], pf.cfgs[1])
	const query = "period=custom&from=2026-07-14&to=2026-07-15&units=si"
	zone := mustZone("America/Chicago")
	from, to := time.Date(2026, 7, 14, 0, 0, 0, 0, zone), time.Date(2026, 7, 16, 0, 0, 0, 0, zone)
	want := map[string]float64{}
	for id, r := range pf.alone {
		sum := 0.0
		for _, h := range r.hours {
			if !h.HourStart.Before(from) && h.HourStart.Before(to) && !math.IsNaN(h.CostAvoidable) {
				sum += h.CostAvoidable
			}
		}
		want[id] = sum
	}
	require.NotEqual(t, want["north"], want["south"], "the sites differ, so a mix-up would show")

	checkPage(t, b, base, "/?"+query, true)
	type siteRow struct {
		Site, Cost, Units string
	}
	rows := eval[[]siteRow](t, b, `[...document.querySelectorAll('#site-table tbody tr')].map(tr => ({
		Site: tr.dataset.site, Cost: tr.querySelector('[data-field=cost_avoidable]').textContent.trim(),
		Units: tr.querySelector('[data-field=air_handlers]').textContent.trim()}))`)
	require.Len(t, rows, 2)
	for _, r := range rows {
		assert.NoError(t, sameShown(r.Cost, want[r.Site]), "site %s total", r.Site)
		assert.Equal(t, "1", r.Units, r.Site)
	}
	type unitRow struct {
		Site, Unit, Rank, Cost string
	}
	units := eval[[]unitRow](t, b, `[...document.querySelectorAll('#portfolio-table tbody tr')].map(tr => ({
		Site: tr.dataset.site, Unit: tr.dataset.unit, Rank: tr.querySelector('td').textContent.trim(),
		Cost: tr.querySelector('[data-field=cost_avoidable]').textContent.trim()}))`)
	require.Len(t, units, 2, "AHU-7 of each site")
	first, second := "north", "south"
	if want["south"] > want["north"] {
		first, second = second, first
	}
	assert.Equal(t, unitRow{Site: first, Unit: "AHU-7", Rank: "1"}, unitRow{Site: units[0].Site, Unit: units[0].Unit, Rank: units[0].Rank})
	assert.Equal(t, second, units[1].Site)
	for _, u := range units {
		assert.NoError(t, sameShown(u.Cost, want[u.Site]), "%s AHU-7", u.Site)
	}

	// The API says the same, with the site of each row.
	var api dashboards.PortfolioOverview
	getJSON(t, base, "/api/v1/portfolio?"+query, &api)
	require.Len(t, api.AirHandlers, 2)
	assert.Equal(t, first, api.AirHandlers[0].SiteID)
	for _, s := range api.Sites {
		assert.InEpsilon(t, want[s.ID], float64(s.Total.CostAvoidable), 1e-5, "%s: the API rounds to 6 significant digits", s.ID)
	}

	// A site's own pages, under its path, with its own figures.
	for _, id := range []string{"north", "south"} {
		checkPage(t, b, base, "/sites/"+id+"/?"+query, id == "north")
		shownCost := eval[string](t, b, `document.getElementById('total-cost-avoidable').textContent.trim()`)
		assert.NoError(t, sameShown(shownCost, want[id]), "%s's own overview", id)
		resp, err := http.Get(base + "/sites/" + id + "/units/AHU-7?" + query)
		require.NoError(t, err)
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		require.Equal(t, http.StatusOK, resp.StatusCode, "%s", body)
		checkPage(t, b, base, "/sites/"+id+"/units/AHU-7?"+query, false)
		s := b.click(t, "portfolio-link", "")
		assert.EqualValues(t, http.StatusOK, s.status)
		assert.Equal(t, 2, eval[int](t, b, `document.querySelectorAll('#site-table tbody tr').length`), "back on the portfolio")
	}

	// Alerts: every site's, and one site's when filtered.
	total := 0
	for _, id := range []string{"north", "south"} {
		var list struct {
			Alerts []struct {
				SiteID string `json:"site_id"`
			} `json:"alerts"`
		}
		getJSON(t, base, "/api/v1/alerts?site="+id+"&"+query, &list)
		for _, a := range list.Alerts {
			assert.Equal(t, id, a.SiteID)
		}
		total += len(list.Alerts)
		checkPage(t, b, base, "/alerts?site="+id+"&"+query, id == "north")
		sites := eval[[]string](t, b, `[...document.querySelectorAll('#alerts-table tbody tr')].map(tr => tr.dataset.site)`)
		require.Len(t, sites, len(list.Alerts), id)
		for _, s := range sites {
			assert.Equal(t, id, s)
		}
	}
	require.Positive(t, total, "the humid days raise alerts")
	checkPage(t, b, base, "/alerts?"+query, false)
	assert.Equal(t, total, eval[int](t, b, `document.querySelectorAll('#alerts-table tbody tr').length`), "all sites")
	resp, err := http.Get(base + "/api/v1/alerts?site=east")
	require.NoError(t, err)
	resp.Body.Close()
	assert.Equal(t, http.StatusBadRequest, resp.StatusCode, fmt.Sprintf("an unknown site: %d", resp.StatusCode))
}

// TestPortfolio_BrowserSiteIDs: site ids as site names make them (site.id
// defaults to site.name), with a space, "/", "*", "%" and a letter beyond
// ASCII, and an air-handler id with a space and a "/", each on its own
// embedded store. Chromium follows every site and air-handler link of the
// portfolio to the page of that site and air handler, and from there the
// chart, the other display units and the way back.
func TestPortfolio_BrowserSiteIDs(t *testing.T) {
	sites := []struct{ id, name, unit string }{
		{id: "Saltmarsh Point/North*", name: "Saltmarsh North", unit: "AHU 7/East"},
		{id: "Süd 100%", name: "Süd", unit: "AHU-7"},
	}
	var cfgs []string
	for i, s := range sites {
		cfg, data := writePortfolioSite(t, portfolioSites[i], "", "")
		text, err := os.ReadFile(cfg)
		require.NoError(t, err)
		named := strings.Replace(string(text), "id: "+portfolioSites[i].id+", name: "+portfolioSites[i].id,
			"id: "+yamlQuote(s.id)+", name: "+yamlQuote(s.name), 1)
		named = strings.Replace(named, "  - id: AHU-7\n", "  - id: "+yamlQuote(s.unit)+"\n", 1)
		require.NotEqual(t, string(text), named)
		require.NoError(t, os.WriteFile(cfg, []byte(named), 0o600))
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data)
		require.Equal(t, 0, code, errOut)
		cfgs = append(cfgs, cfg)
	}
	b := startBrowser(t)
	base := serveDash(t, cfgs[0], cfgs[1])
	const query = "?period=custom&from=2026-07-14&to=2026-07-15&units=si"
	type link struct{ Site, Unit, Href string }
	checkPage(t, b, base, "/"+query, true)
	siteLinks := eval[[]link](t, b, `[...document.querySelectorAll('#site-table tbody tr')].map(tr => ({
		Site: tr.dataset.site, Href: tr.querySelector('a').href}))`)
	unitLinks := eval[[]link](t, b, `[...document.querySelectorAll('#portfolio-table tbody tr')].map(tr => ({
		Site: tr.dataset.site, Unit: tr.dataset.unit, Href: tr.querySelector('th a').href}))`)
	require.Len(t, siteLinks, len(sites))
	require.Len(t, unitLinks, len(sites))
	for _, s := range sites {
		var site, unit link
		for _, l := range siteLinks {
			if l.Site == s.id {
				site = l
			}
		}
		for _, l := range unitLinks {
			if l.Site == s.id {
				unit = l
			}
		}
		require.NotEmpty(t, site.Href, "no row of site %q: %v", s.id, siteLinks)
		require.Equal(t, s.unit, unit.Unit, "site %q", s.id)

		checkPage(t, b, base, strings.TrimPrefix(site.Href, base), s.id == sites[0].id)
		assert.Equal(t, s.name, eval[string](t, b, `document.querySelector('header .site').textContent`), "site link of %q", s.id)

		checkPage(t, b, base, strings.TrimPrefix(unit.Href, base), false)
		assert.Equal(t, s.name, eval[string](t, b, `document.querySelector('header .site').textContent`), "unit link of %q", s.id)
		assert.Equal(t, s.unit, eval[string](t, b, `document.querySelector('h1 .id').textContent`), "unit link of %q", s.id)
		for _, id := range []string{"units-ip", "chart-link", "lines-wetbulb"} {
			st := b.click(t, id, "")
			assert.EqualValues(t, http.StatusOK, st.status, "%s: #%s to %s", s.id, id, st.url)
			assert.Contains(t, eval[string](t, b, `document.querySelector('h1 .id').textContent`), s.unit, "%s: #%s", s.id, id)
		}
		st := b.click(t, "portfolio-link", "")
		assert.EqualValues(t, http.StatusOK, st.status)
		assert.Equal(t, len(sites), eval[int](t, b, `document.querySelectorAll('#site-table tbody tr').length`), "back on the portfolio")
	}
}
