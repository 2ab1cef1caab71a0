package dashboards

import (
	"encoding/json"
	"html"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// siteIDs are site ids a configuration accepts, most of them with a
// character a path must carry percent-encoded: site names with spaces
// (site.id defaults to site.name), pattern and query characters, a "/",
// a "%" before hex digits, and letters outside ASCII.
var siteIDs = []string{
	"Saltmarsh Point Clinic and Laboratory", "Saltmarsh Point Clinic", "Saltmarsh.*",
	"a b", "a*b", "a{b}", "a%b", "a%2Fb", "a/b", "/a", "a//b", "a/../b", "a?b", "a#b", "ÄBC", "plain", "north-2.x",
}

// slashUnit is an air-handler id with a space and a "/", which the unit
// pages' paths must carry as one segment.
const slashUnit = "AHU 1/North"

// portfolioFixture is a portfolio of the fixture's site under every id of
// siteIDs, with AHU-1 named slashUnit.
func portfolioFixture(t *testing.T) *Portfolio {
	t.Helper()
	var sites []PortfolioSite
	for _, id := range siteIDs {
		site, m := fixture()
		site.ID = id
		site.AirHandlers[0].ID = slashUnit
		for i := range m.recs {
			if m.recs[i].AHU == "AHU-1" {
				m.recs[i].AHU = slashUnit
			}
		}
		for i := range m.alerts {
			if m.alerts[i].AHU == "AHU-1" {
				m.alerts[i].AHU = slashUnit
			}
		}
		sites = append(sites, PortfolioSite{Site: site, Results: m})
	}
	p, err := NewPortfolio(PortfolioOptions{Sites: sites, Log: zerolog.New(zerolog.NewTestWriter(t)),
		Now: func() time.Time { return time.Date(2026, 7, 8, 12, 0, 0, 0, chicago) }})
	require.NoError(t, err)
	return p
}

var linkAttr = regexp.MustCompile(`(?:href|action)="([^"]*)"`)

// TestPortfolio_EveryLinkResolves serves the portfolio over HTTP and
// follows every link and form of its pages, and of the pages they lead
// to, three clicks deep: each answers 200. A site's API answers with the
// site's own id, and a unit's with its own.
func TestPortfolio_EveryLinkResolves(t *testing.T) {
	srv := httptest.NewServer(portfolioFixture(t))
	defer srv.Close()
	base, err := url.Parse(srv.URL)
	require.NoError(t, err)

	fetch := func(u string) (int, string) {
		resp, err := http.Get(u)
		require.NoError(t, err)
		defer resp.Body.Close()
		body, err := io.ReadAll(resp.Body)
		require.NoError(t, err)
		return resp.StatusCode, string(body)
	}
	const query = "?period=custom&from=2026-07-06&to=2026-07-07"
	seen := map[string]bool{}
	sitesReached := map[string]bool{}
	level := []string{srv.URL + "/" + query, srv.URL + "/alerts" + query}
	for depth := 0; depth < 3 && len(level) > 0; depth++ {
		var next []string
		for _, u := range level {
			if seen[u] {
				continue
			}
			seen[u] = true
			code, body := fetch(u)
			require.Equal(t, http.StatusOK, code, "GET %s: %s", u, body)
			for _, m := range linkAttr.FindAllStringSubmatch(body, -1) {
				ref, err := url.Parse(html.UnescapeString(m[1]))
				require.NoError(t, err, m[1])
				abs := base.ResolveReference(ref)
				if abs.Host != base.Host {
					continue
				}
				if rest, ok := strings.CutPrefix(abs.EscapedPath(), "/sites/"); ok {
					seg, _, _ := strings.Cut(rest, "/")
					id, err := url.PathUnescape(seg)
					require.NoError(t, err)
					sitesReached[id] = true
				}
				next = append(next, abs.String())
			}
		}
		level = next
	}
	for _, id := range siteIDs {
		assert.True(t, sitesReached[id], "no link reaches site %q", id)
	}

	// The API's paths, and each site's own API under its path.
	code, body := fetch(srv.URL + "/api/v1/portfolio" + query)
	require.Equal(t, http.StatusOK, code, body)
	var ov PortfolioOverview
	require.NoError(t, json.Unmarshal([]byte(body), &ov))
	require.Len(t, ov.Sites, len(siteIDs))
	for _, s := range ov.Sites {
		code, body := fetch(srv.URL + s.Path + "api/v1/site")
		require.Equal(t, http.StatusOK, code, "%s: %s", s.Path, body)
		var got struct {
			ID string `json:"id"`
		}
		require.NoError(t, json.Unmarshal([]byte(body), &got))
		assert.Equal(t, s.ID, got.ID, s.Path)
	}
	for _, u := range ov.AirHandlers {
		code, body := fetch(srv.URL + u.Path + query)
		require.Equal(t, http.StatusOK, code, "%s: %s", u.Path, body)
		name := html.EscapeString(u.Name)
		assert.Contains(t, body, name, u.Path)
	}
	// The site's path without its slash leads to its overview.
	code, body = fetch(srv.URL + "/sites/a%2Fb")
	require.Equal(t, http.StatusOK, code, body)
	assert.Contains(t, body, `href="/sites/a%2Fb/alerts"`)
	code, _ = fetch(srv.URL + "/sites/elsewhere/")
	assert.Equal(t, http.StatusNotFound, code)
}

// TestNewPortfolio_DotIDs: "." and ".." cannot be a path segment (every
// client and server resolves them), so they are refused as site ids.
func TestNewPortfolio_DotIDs(t *testing.T) {
	for _, id := range []string{".", ".."} {
		site, m := fixture()
		site.ID = id
		_, err := NewPortfolio(PortfolioOptions{Sites: []PortfolioSite{{Site: site, Results: m}}})
		assert.ErrorContains(t, err, "path segment", id)
	}
}

// TestHandler_UnitIDWithSlash: served alone at /, a unit whose id holds a
// space and a "/" has its page, and the page's own links (the other
// display units, its chart, the period form) keep the id in one segment.
func TestHandler_UnitIDWithSlash(t *testing.T) {
	site, m := fixture()
	site.AirHandlers[0].ID = slashUnit
	for i := range m.recs {
		if m.recs[i].AHU == "AHU-1" {
			m.recs[i].AHU = slashUnit
		}
	}
	h := newTestHandler(t, site, m)
	code, body := get(t, h, "/units/AHU%201%2FNorth")
	require.Equal(t, http.StatusOK, code, body)
	for _, want := range []string{`href="/units/AHU%201%2FNorth?units=si"`, `href="/units/AHU%201%2FNorth/chart"`, `action="/units/AHU%201%2FNorth"`} {
		assert.Contains(t, body, want)
	}
	code, body = get(t, h, "/units/AHU%201%2FNorth/chart")
	require.Equal(t, http.StatusOK, code, body)
	assert.Contains(t, body, `href="/units/AHU%201%2FNorth/chart?lines=wetbulb"`)
}
