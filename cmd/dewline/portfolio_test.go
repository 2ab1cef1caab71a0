package main

import (
	"context"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest/influx"
	"github.com/dewline/dewline/metrics"
)

// portfolioSite is one invented site of the portfolio tests: its id and
// how its two days differ from the others' (mixed-air RH by day and the
// leaving temperature at night), so that a site's hours overwritten by
// another's would show.
type portfolioSite struct {
	id            string
	dayRHPct      float64
	nightLeavingF float64
}

var portfolioSites = []portfolioSite{
	{id: "north", dayRHPct: 60, nightLeavingF: 55},
	{id: "south", dayRHPct: 72, nightLeavingF: 53},
}

// writePortfolioSite writes s's export and a configuration whose store is
// the InfluxDB database db (the embedded store when base is ""), with the
// site's trend points in a measurement of its own; both sites name their
// air handler AHU-7.
func writePortfolioSite(t *testing.T, s portfolioSite, base, db string) (cfg, data string) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), s.id)
	require.NoError(t, os.MkdirAll(dir, 0o700))
	text := strings.Replace(analyzeConfig, "site: {", "site: {id: "+s.id+", name: "+s.id+", ", 1)
	if base == "" { // the embedded store, a file of the site's own
		text = strings.Replace(text, "path: test.db", "path: "+s.id+".db", 1)
	} else {
		text = onInflux(text, base, db, "")
	}
	return writeCase(t, dir, inMeasurement(text, s.id+"_trend"), scenarioExport(s.dayRHPct, s.nightLeavingF))
}

// siteResults is what one site reads back from its store.
type siteResults struct {
	hours      []metrics.Record
	alerts     []dashboards.Alert
	checkpoint time.Time
}

func readSite(t *testing.T, cfgPath string) siteResults {
	t.Helper()
	ctx := context.Background()
	cfg, err := loadConfig(cfgPath)
	require.NoError(t, err)
	st, err := openStore(ctx, cfg, false, zerolog.Nop())
	require.NoError(t, err)
	defer st.Close()
	var out siteResults
	res := st.results(time.Now)
	from, to := time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC), time.Date(2026, 8, 1, 0, 0, 0, 0, time.UTC)
	require.NoError(t, res.Hours(ctx, "", from, to, func(r *metrics.Record) error {
		c := *r
		c.Flags = append([]string(nil), r.Flags...)
		out.hours = append(out.hours, c)
		return nil
	}))
	// One air handler's read (the unit page's) gives the same hours.
	i := 0
	require.NoError(t, res.Hours(ctx, "AHU-7", from, to, func(r *metrics.Record) error {
		require.Less(t, i, len(out.hours), "more hours of AHU-7 than of the site")
		require.True(t, fieldsEqual(out.hours[i], *r), "hour %s", r.HourStart)
		i++
		return nil
	}))
	require.Equal(t, len(out.hours), i)
	out.alerts, err = res.Alerts(ctx, dashboards.AlertQuery{From: from, To: to})
	require.NoError(t, err)
	ag, err := st.Agent(ctx)
	require.NoError(t, err)
	defer ag.Close()
	cp, _, err := ag.Checkpoint(ctx, "AHU-7")
	require.NoError(t, err)
	out.checkpoint = cp // zero when there is none
	return out
}

// fieldsEqual compares records field by field, NaN equal to NaN.
func fieldsEqual(a, b metrics.Record) bool {
	fa, fb := a.Fields(), b.Fields()
	for i := range fa {
		x, y := fa[i].Value, fb[i].Value
		if !(x == y || math.IsNaN(x) && math.IsNaN(y)) {
			return false
		}
	}
	return a.AHU == b.AHU && a.HourStart.Equal(b.HourStart) && strings.Join(a.Flags, " ") == strings.Join(b.Flags, " ")
}

// portfolioCheckpoints is where each site's agent run leaves its checkpoint.
var (
	portfolioAsOf        = map[string]string{"north": "2026-07-15T12:07", "south": "2026-07-15T13:07"}
	portfolioCheckpoints = map[string]time.Time{"north": time.Date(2026, 7, 15, 16, 0, 0, 0, time.UTC), "south": time.Date(2026, 7, 15, 17, 0, 0, 0, time.UTC)}
)

// portfolio is the two sites analysed by their agents: each alone in a
// database of its own (alone, read back) and both in the shared one (cfgs).
type portfolio struct {
	base, shared string
	cfgs         []string
	alone        map[string]siteResults
}

func setUpPortfolio(t *testing.T) portfolio {
	t.Helper()
	base, _ := testkit.InfluxDB(t)
	pf := portfolio{base: base, shared: freshDB(t, base, "portfolio"), alone: map[string]siteResults{}}
	analyse := func(cfg, data, site string) {
		code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
		require.Equal(t, 0, code, errOut)
		code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", portfolioAsOf[site])
		require.Equal(t, 0, code, errOut)
		require.Contains(t, out, "checkpoint "+portfolioCheckpoints[site].Format(time.RFC3339), out)
	}
	for _, s := range portfolioSites {
		cfg, data := writePortfolioSite(t, s, base, freshDB(t, base, "alone_"+s.id))
		analyse(cfg, data, s.id)
		pf.alone[s.id] = readSite(t, cfg)
	}
	for _, s := range portfolioSites {
		cfg, data := writePortfolioSite(t, s, base, pf.shared)
		analyse(cfg, data, s.id)
		pf.cfgs = append(pf.cfgs, cfg)
	}
	return pf
}

// TestPortfolio_InfluxTwoSitesShareIDs: two sites whose air handlers share
// an id (AHU-7), each imported and analysed by its agent into one real
// InfluxDB database, read back exactly what each gives analysed alone in a
// database of its own: the same hours (count and every value), the same
// alerts, its own checkpoint.
func TestPortfolio_InfluxTwoSitesShareIDs(t *testing.T) {
	pf := setUpPortfolio(t)
	alone, together := pf.alone, map[string]siteResults{}
	for i, s := range portfolioSites {
		together[s.id] = readSite(t, pf.cfgs[i])
	}
	wantCP := portfolioCheckpoints
	base, shared := pf.base, pf.shared

	n, so := alone["north"], alone["south"]
	require.NotEmpty(t, n.hours)
	require.NotEmpty(t, n.alerts, "the humid days raise alerts")
	differ := 0
	for i := range min(len(n.hours), len(so.hours)) {
		if !fieldsEqual(n.hours[i], so.hours[i]) {
			differ++
		}
	}
	require.Greater(t, differ, 20, "the sites' hours differ, so an overwrite would show")

	for _, s := range portfolioSites {
		a, b := alone[s.id], together[s.id]
		require.Len(t, b.hours, len(a.hours), s.id)
		for i := range a.hours {
			assert.True(t, fieldsEqual(a.hours[i], b.hours[i]), "%s: hour %s differs from the site analysed alone", s.id, a.hours[i].HourStart)
		}
		require.Len(t, b.alerts, len(a.alerts), s.id)
		for i := range a.alerts {
			assert.Equal(t, a.alerts[i].ID, b.alerts[i].ID, s.id)
			assert.Equal(t, a.alerts[i].State, b.alerts[i].State, s.id)
			assert.InDelta(t, a.alerts[i].Money, b.alerts[i].Money, 1e-9, "%s %s: a float written and read back", s.id, a.alerts[i].ID)
		}
		assert.True(t, b.checkpoint.Equal(wantCP[s.id]), "%s: checkpoint %s", s.id, b.checkpoint)
	}

	// In the database: two dewline_hourly series of AHU-7, one per site.
	series := influxQL(t, base, shared, `SELECT count("coverage") FROM dewline_hourly GROUP BY "site", "ahu"`)
	got := map[string]string{}
	for _, s := range series {
		got[s.Tags["site"]] = s.Tags["ahu"]
	}
	assert.Equal(t, map[string]string{"north": "AHU-7", "south": "AHU-7"}, got)
}

// TestPortfolio_InfluxAdoptCommand: the upgrade on the real server through
// the command. A database holding what an earlier dewline wrote (the
// site's hours and alert transitions without the site tag) shows the site
// nothing until "dewline adopt" copies them; then the site reads the same
// hours and alerts as were written, and a second run copies nothing.
func TestPortfolio_InfluxAdoptCommand(t *testing.T) {
	base, _ := testkit.InfluxDB(t)
	ctx := context.Background()
	cfg, data := writePortfolioSite(t, portfolioSites[0], base, freshDB(t, base, "tagged"))
	code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
	require.Equal(t, 0, code, errOut)
	code, _, errOut = runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data)
	require.Equal(t, 0, code, errOut)
	want := readSite(t, cfg)
	require.Len(t, want.hours, 48)
	require.NotEmpty(t, want.alerts)

	// The same results as an earlier dewline wrote them: tagged by ahu only.
	old := freshDB(t, base, "untagged")
	oldCfg, _ := writePortfolioSite(t, portfolioSites[0], base, old)
	c, err := influx.New(influx.Options{URL: base, Bucket: old + "/autogen", Timeout: 20 * time.Second})
	require.NoError(t, err)
	defer c.Close()
	var pts []influx.Point
	for _, p := range influx.HourlyPoints("", want.hours) {
		delete(p.Tags, "site")
		pts = append(pts, p)
	}
	require.NoError(t, c.WritePoints(ctx, pts))
	// The alert transitions, copied on the server without their site tag
	// (InfluxQL keeps the tags named in GROUP BY).
	influxQL(t, base, old, fmt.Sprintf(`SELECT "energy_kwh", "money", "open", "id", "reason", "start", "end" INTO %q.."dewline_alert" FROM %q.."dewline_alert" GROUP BY "ahu", "kind", "severity", "status"`,
		old, strings.Split(cfgBucket(t, cfg), "/")[0]))
	before := readSite(t, oldCfg)
	assert.Empty(t, before.hours, "untagged results are read by no site")
	assert.Empty(t, before.alerts)

	code, out, errOut := runCLI(t, "--log-level", "warn", "adopt", "--config", oldCfg, "--list")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "AHU-7 (48 hours)")
	code, out, errOut = runCLI(t, "--log-level", "warn", "adopt", "--config", oldCfg)
	require.Equal(t, 0, code, errOut)
	transitions := 0
	for _, s := range influxQL(t, base, strings.Split(cfgBucket(t, cfg), "/")[0], `SELECT count("money") FROM dewline_alert`) {
		for _, r := range s.rows() {
			n, err := r["count"].(json.Number).Int64()
			require.NoError(t, err)
			transitions += int(n)
		}
	}
	require.Greater(t, transitions, len(want.alerts), "alerts that opened and closed")
	assert.Contains(t, out, fmt.Sprintf(`site "north" adopted 48 hours and %d alert transitions`, transitions), out)
	after := readSite(t, oldCfg)
	require.Len(t, after.hours, len(want.hours))
	for i := range want.hours {
		assert.True(t, fieldsEqual(want.hours[i], after.hours[i]), "hour %s", want.hours[i].HourStart)
	}
	require.Len(t, after.alerts, len(want.alerts))
	for i := range want.alerts {
		assert.Equal(t, want.alerts[i].ID, after.alerts[i].ID)
		assert.Equal(t, want.alerts[i].State, after.alerts[i].State)
		assert.InDelta(t, want.alerts[i].Money, after.alerts[i].Money, 1e-9, "a float written and read back")
	}
	code, out, errOut = runCLI(t, "--log-level", "warn", "adopt", "--config", oldCfg)
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "adopted 0 hours and 0 alert transitions")
}

// cfgBucket is the InfluxDB bucket of a configuration.
func cfgBucket(t *testing.T, path string) string {
	t.Helper()
	cfg, err := loadConfig(path)
	require.NoError(t, err)
	return cfg.Store.InfluxDB.Bucket
}

// TestPortfolio_Report: "dewline report" given two sites writes each
// site's own report beside the portfolio summary, whose site totals are
// the sums of each site's hourly file (written by the same analysis, summed
// here) and whose findings rank both sites' AHU-7 by avoidable cost.
func TestPortfolio_Report(t *testing.T) {
	dir := t.TempDir()
	want := map[string]float64{}
	var cfgs []string
	for _, s := range portfolioSites {
		cfg, data := writePortfolioSite(t, s, "", "")
		hourly := filepath.Join(dir, s.id+".csv")
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data, "--out", hourly)
		require.Equal(t, 0, code, errOut)
		header, rows := readHourly(t, hourly)
		col := -1
		for i, h := range header {
			if h == "cost_avoidable" {
				col = i
			}
		}
		require.NotEqual(t, -1, col, "hourly file has cost_avoidable")
		for _, r := range rows {
			if v, err := strconv.ParseFloat(r[col], 64); err == nil {
				want[s.id] += v
			}
		}
		cfgs = append(cfgs, cfg)
	}
	require.NotEqual(t, want["north"], want["south"])
	out := filepath.Join(dir, "portfolio.html")
	code, stdout, errOut := runCLI(t, "--log-level", "warn", "report", "--config", cfgs[0], "--config", cfgs[1], "--from", "2026-07-14", "--to", "2026-07-15", "-o", out)
	require.Equal(t, 0, code, errOut)
	for _, id := range []string{"north", "south"} {
		assert.Contains(t, stdout, filepath.Join(dir, "portfolio-"+id+".html"))
		b, err := os.ReadFile(filepath.Join(dir, "portfolio-"+id+".html"))
		require.NoError(t, err)
		assert.Contains(t, string(b), `id="site-name">`+id+`<`, "the site's own report")
	}
	b, err := os.ReadFile(out)
	require.NoError(t, err)
	html := string(b)
	site := regexp.MustCompile(`<tr data-site="([a-z]+)"><th scope="row"><a href="portfolio-([a-z]+)\.html">[^<]*</a></th><td>[^<]*</td><td class="num">1</td><td class="num" data-field="cost_avoidable" data-value="([^"]+)"`)
	m := site.FindAllStringSubmatch(html, -1)
	require.Len(t, m, 2, html)
	for _, r := range m {
		assert.Equal(t, r[1], r[2], "the link goes to the site's report")
		v, err := strconv.ParseFloat(r[3], 64)
		require.NoError(t, err)
		assert.InEpsilon(t, want[r[1]], v, 1e-6, "%s: the hourly file rounds", r[1])
	}
	find := regexp.MustCompile(`<tr data-site="([a-z]+)" data-unit="AHU-7"><td>(\d)</td>`).FindAllStringSubmatch(html, -1)
	require.Len(t, find, 2)
	first := "north"
	if want["south"] > want["north"] {
		first = "south"
	}
	assert.Equal(t, []string{first, "1"}, find[0][1:], "ranked by avoidable cost across the sites")
	code, _, errOut = runCLI(t, "report", "--config", cfgs[0], "--config", cfgs[1], "--pdf", "-o", out)
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "--pdf takes one site")
}

// TestPortfolio_ReportSiteIDs: sites whose ids differ only in characters
// a file name cannot hold ("a b", "a/b") each get a report of their own,
// and the summary, also written to a name with a space, "%", "#" and ":",
// links each site to its own report.
func TestPortfolio_ReportSiteIDs(t *testing.T) {
	names := map[string]string{"a b": "Site with a space", "a/b": "Site with a slash"}
	var cfgs []string
	for i, id := range []string{"a b", "a/b"} {
		cfg, data := writePortfolioSite(t, portfolioSites[i], "", "")
		text, err := os.ReadFile(cfg)
		require.NoError(t, err)
		named := strings.Replace(string(text), "id: "+portfolioSites[i].id+", name: "+portfolioSites[i].id,
			"id: "+yamlQuote(id)+", name: "+yamlQuote(names[id]), 1)
		require.NotEqual(t, string(text), named)
		require.NoError(t, os.WriteFile(cfg, []byte(named), 0o600))
		code, _, errOut := runCLI(t, "--log-level", "warn", "analyze", "--config", cfg, "--input", data)
		require.Equal(t, 0, code, errOut)
		cfgs = append(cfgs, cfg)
	}
	for _, name := range []string{"portfolio.html", "100% #1: sites.html"} {
		t.Run(name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), name)
			code, _, errOut := runCLI(t, "--log-level", "warn", "report", "--config", cfgs[0], "--config", cfgs[1], "--from", "2026-07-14", "--to", "2026-07-15", "-o", out)
			require.Equal(t, 0, code, errOut)
			b, err := os.ReadFile(out)
			require.NoError(t, err)
			rows := regexp.MustCompile(`<tr data-site="([^"]+)"><th scope="row"><a href="([^"]+)">`).FindAllStringSubmatch(string(b), -1)
			require.Len(t, rows, 2, string(b))
			// The summary's links, resolved as a browser resolves them from the
			// summary's own address.
			from := &url.URL{Scheme: "file", Path: out}
			files := map[string]bool{}
			for _, r := range rows {
				id := html.UnescapeString(r[1])
				ref, err := url.Parse(html.UnescapeString(r[2]))
				require.NoError(t, err, r[2])
				target := from.ResolveReference(ref)
				require.Equal(t, "file", target.Scheme, r[2])
				files[target.Path] = true
				site, err := os.ReadFile(target.Path)
				require.NoError(t, err, "site %q links to %s", id, r[2])
				assert.Contains(t, string(site), `id="site-name">`+names[id]+`<`, "site %q's link goes to its own report", id)
			}
			assert.Len(t, files, 2, "a report file each")
		})
	}
}
