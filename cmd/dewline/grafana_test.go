package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/deploy/demo"
	"github.com/dewline/dewline/deploy/grafana"
	"github.com/dewline/dewline/deploy/testkit"
	"github.com/dewline/dewline/ingest/influx"
)

// TestGrafana_QueriesMatchAPI: the demo's results written to the real
// InfluxDB server; every query of every committed Grafana dashboard, in
// both flavours (InfluxQL through the server's /query endpoint, Flux
// through its Flux endpoint), with Grafana's variables filled in as Grafana
// would, returns the figures dewline's own JSON API returns for the same
// period.
func TestGrafana_QueriesMatchAPI(t *testing.T) {
	base, _ := testkit.InfluxDB(t)
	db := freshDB(t, base, "grafana")
	dir := t.TempDir()
	sc, err := demo.Write(dir, demo.Options{Days: demo.MinDays})
	require.NoError(t, err)
	b, err := os.ReadFile(sc.ConfigPath)
	require.NoError(t, err)
	text := strings.Replace(string(b), "store:\n  kind: embedded\n  path: \"demo.db\"",
		fmt.Sprintf("store:\n  kind: influxdb\n  influxdb: {url: %q, bucket: %q, timeout: 60s}", base, db+"/autogen"), 1)
	require.NotEqual(t, string(b), text, "the demo's store section")
	cfgPath := filepath.Join(dir, "influx.yaml")
	require.NoError(t, os.WriteFile(cfgPath, []byte(text), 0o600))
	args := []string{"--log-level", "warn", "analyze", "--config", cfgPath}
	for _, e := range sc.Exports {
		args = append(args, "--input", e)
	}
	code, _, errOut := runCLI(t, args...)
	require.Equal(t, 0, code, errOut)
	// A second site with the same air-handler ids and the same figures in
	// the same bucket: a query that did not filter on the site would count
	// every hour twice.
	other := strings.Replace(text, "site:\n", "site:\n  id: other-site\n", 1)
	require.NotEqual(t, text, other, "the demo's site section")
	otherPath := filepath.Join(dir, "influx-other.yaml")
	require.NoError(t, os.WriteFile(otherPath, []byte(other), 0o600))
	args[4] = otherPath
	code, _, errOut = runCLI(t, args...)
	require.Equal(t, 0, code, errOut)
	// The same analysis into the embedded store, for dewline's API (an
	// independent read path; TestInflux_DashboardMatchesEmbedded holds the
	// two stores' figures equal).
	args[4] = sc.ConfigPath
	code, _, errOut = runCLI(t, args...)
	require.Equal(t, 0, code, errOut)

	// dewline's own API.
	cfg, st := openTestStore(t, sc.ConfigPath)
	h, err := dashboardFor(cfg, st, &env{stdout: io.Discard, stderr: io.Discard, log: zerolog.Nop()})
	require.NoError(t, err)
	api := func(path string, v any) {
		rr := httptest.NewRecorder()
		h.ServeHTTP(rr, httptest.NewRequest(http.MethodGet, path, nil))
		require.Equal(t, http.StatusOK, rr.Code, "%s: %s", path, rr.Body.String())
		require.NoError(t, json.Unmarshal(rr.Body.Bytes(), v), path)
	}
	const period = "period=custom&from=2026-10-21&to=2026-10-30&units=si"
	var ov dashboards.Overview
	api("/api/v1/overview?"+period, &ov)
	require.Len(t, ov.AirHandlers, len(cfg.AirHandlers))
	from, to := ov.Period.From, ov.Period.To
	hours := map[string]*dashboards.AirHandlerHours{}
	var ids []string
	for _, u := range ov.AirHandlers {
		var uh dashboards.AirHandlerHours
		api("/api/v1/units/"+u.ID+"/hours?"+period, &uh)
		require.NotEmpty(t, uh.Hours, u.ID)
		hours[u.ID] = &uh
		ids = append(ids, u.ID)
	}
	sort.Strings(ids)
	var alerts struct {
		Alerts []dashboards.Alert `json:"alerts"`
	}
	api("/api/v1/alerts?"+period, &alerts)
	require.NotEmpty(t, alerts.Alerts, "the demo raises alerts in the period")
	var all struct {
		Alerts []dashboards.Alert `json:"alerts"`
	}
	api("/api/v1/alerts?period=custom&from=2026-10-01&to=2026-12-31", &all)

	g := &grafanaRun{t: t, base: base, db: db, site: influx.SiteTag(cfg.Site.ID), from: from, to: to.Add(-time.Millisecond)}
	tested := 0
	for _, f := range grafana.Flavours {
		for _, name := range grafana.Names {
			raw, err := os.ReadFile(filepath.Join("../../deploy/grafana/dashboards", string(f), "dewline-"+name+".json"))
			require.NoError(t, err)
			d, err := grafana.Load(raw)
			require.NoError(t, err)
			qs, err := grafana.Queries(d)
			require.NoError(t, err)
			units := []string{""}
			switch name {
			case grafana.AirHandler:
				units = []string{"AHU-3", "AHU-4"} // the most avoidable cost; hot-water reheat
			case grafana.Alerts:
				units = []string{strings.Join(ids, "|")} // "All"
			}
			if vq := grafana.VariableQuery(d, "ahu"); vq != "" {
				rows := g.run(f, vq, "")
				var got []string
				for _, r := range rows {
					got = append(got, r.get("value", "_value"))
				}
				sort.Strings(got)
				assert.Equal(t, ids, got, "%s %s: the ahu variable lists the air handlers", f, name)
				tested++
			}
			for _, unit := range units {
				for _, pq := range qs {
					label := fmt.Sprintf("%s/%s/%s %s", f, name, pq.Panel, unit)
					rows := g.run(f, pq.Query.Query, unit)
					c := &panelCheck{t: t, label: label, rows: rows}
					switch pq.Panel {
					case "Money at stake":
						c.single("cost_avoidable", float64(ov.Total.CostAvoidable))
						c.single("cost", float64(ov.Total.Cost))
						c.single("reheat_avoidable_kwh", float64(ov.Total.ReheatAvoid))
					case "Air handlers by money at stake":
						c.byAHU(ov, f == grafana.Flux)
					case "Avoidable cost by air handler":
						for _, u := range ov.AirHandlers {
							c.perAHU(u.ID, "cost_avoidable", float64(u.Totals.CostAvoidable))
						}
					case "Avoidable cost per day":
						c.daily(hours)
					case "Totals over the range":
						tt := hours[unit].Totals
						c.single("cost_avoidable", float64(tt.CostAvoidable))
						c.single("reheat_avoidable_kwh", float64(tt.ReheatAvoid))
						c.single("reheat_kwh", float64(tt.ReheatKWh))
						c.single("water_removed_kg", float64(tt.WaterKg))
					case "Energy per hour":
						uh := hours[unit]
						c.hourly(uh.Hours, "cooling_input_kwh", uh.CoolingInput)
						c.hourly(uh.Hours, "reheat_needed_kwh", uh.ReheatNeeded)
						c.hourly(uh.Hours, "reheat_avoidable_kwh", uh.ReheatAvoid)
					case "Coil leaving against required":
						uh := hours[unit]
						c.hourly(uh.Hours, "leaving_temp_c", uh.Leaving)
						c.hourly(uh.Hours, "required_leaving_temp_c", uh.RequiredLeaving)
						c.hourly(uh.Hours, "supply_temp_c", uh.Supply)
						c.hourly(uh.Hours, "entering_dewpoint_c", uh.EnteringDewPoint)
					case "Water removed, with its 95 % band":
						uh := hours[unit]
						lo, hi := make([]dashboards.Num, len(uh.Water)), make([]dashboards.Num, len(uh.Water))
						for i := range uh.Water {
							lo[i], hi[i] = uh.Water[i]-uh.WaterU95[i], uh.Water[i]+uh.WaterU95[i]
						}
						c.hourly(uh.Hours, "water_removed_kg", uh.Water)
						// Each of the API's two figures is rounded: their
						// roundings add up in the band's edges.
						c.slack = func(i int) float64 {
							return 6e-6 * (math.Abs(float64(uh.Water[i])) + math.Abs(float64(uh.WaterU95[i])))
						}
						c.hourly(uh.Hours, "water_removed_kg_low", lo)
						c.hourly(uh.Hours, "water_removed_kg_high", hi)
					case "Effective EER and coverage":
						uh := hours[unit]
						c.hourly(uh.Hours, "effective_eer", uh.EER)
						c.hourly(uh.Hours, "coverage", uh.Coverage)
					case "Hours with data-quality flags":
						c.flags(hours[unit])
					case "Alerts in the range":
						c.alerts(alerts.Alerts)
					case "Alert transitions in the range":
						c.transitions(all.Alerts, alerts.Alerts, from, to)
					case "Open now":
						c.open(all.Alerts)
					default:
						t.Errorf("%s: no check for this panel", label)
					}
					tested++
				}
			}
		}
	}
	t.Logf("%d queries run against InfluxDB and compared with the API", tested)
}

// grafanaRun runs dashboard queries as Grafana's InfluxDB data source
// would, with the range and variables filled in.
type grafanaRun struct {
	t        *testing.T
	base, db string
	site     string // the dashboards' site variable
	from, to time.Time
}

// qrow is one row of a query result: tags and columns by name.
type qrow struct {
	time time.Time
	v    map[string]string
}

// get returns the first of names the row has.
func (r qrow) get(names ...string) string {
	for _, n := range names {
		if s, ok := r.v[n]; ok {
			return s
		}
	}
	return ""
}

func (g *grafanaRun) run(f grafana.Flavour, query, ahu string) []qrow {
	g.t.Helper()
	re := strings.NewReplacer(`\|`, "|").Replace(regexp.QuoteMeta(ahu))
	if strings.Contains(ahu, "|") {
		re = "(" + re + ")"
	}
	if f == grafana.InfluxQL {
		query = strings.NewReplacer(
			"$timeFilter", fmt.Sprintf("time >= %dms and time <= %dms", g.from.UnixMilli(), g.to.UnixMilli()),
			"${__to}", strconv.FormatInt(g.to.UnixMilli(), 10),
			"${ahu:regex}", re,
			"${site:regex}", regexp.QuoteMeta(g.site),
		).Replace(query)
		return g.influxQL(query)
	}
	query = strings.NewReplacer("${bucket}", g.db+"/autogen", "${ahu:regex}", re, "${site:regex}", regexp.QuoteMeta(g.site)).Replace(query)
	vars := fmt.Sprintf("v = {timeRangeStart: %s, timeRangeStop: %s, windowPeriod: 1h}\n",
		g.from.UTC().Format(time.RFC3339Nano), g.to.UTC().Format(time.RFC3339Nano))
	var imports, rest []string
	for _, l := range strings.Split(query, "\n") {
		if strings.HasPrefix(l, "import ") {
			imports = append(imports, l)
		} else {
			rest = append(rest, l)
		}
	}
	return g.flux(strings.Join(imports, "\n") + "\n" + vars + strings.Join(rest, "\n"))
}

func (g *grafanaRun) influxQL(q string) []qrow {
	var out []qrow
	for _, s := range influxQL(g.t, g.base, g.db, q) {
		for _, vals := range s.Values {
			r := qrow{v: map[string]string{}}
			for k, v := range s.Tags {
				r.v[k] = v
			}
			for i, c := range s.Columns {
				if vals[i] == nil {
					continue
				}
				if c == "time" {
					ms, err := vals[i].(json.Number).Int64()
					require.NoError(g.t, err)
					r.time = time.UnixMilli(ms).UTC()
					continue
				}
				r.v[c] = fmt.Sprint(vals[i])
			}
			out = append(out, r)
		}
	}
	return out
}

func (g *grafanaRun) flux(q string) []qrow {
	g.t.Helper()
	req, err := http.NewRequest(http.MethodPost, g.base+"/api/v2/query", strings.NewReader(q))
	require.NoError(g.t, err)
	req.Header.Set("Content-Type", "application/vnd.flux")
	req.Header.Set("Accept", "application/csv")
	resp, err := (&http.Client{Timeout: time.Minute}).Do(req)
	require.NoError(g.t, err)
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	require.NoError(g.t, err)
	require.Equal(g.t, http.StatusOK, resp.StatusCode, "%s\n%s", q, body)
	cr := csv.NewReader(bytes.NewReader(body))
	cr.FieldsPerRecord = -1
	var header []string
	var out []qrow
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(g.t, err)
		if len(rec) > 0 && strings.HasPrefix(rec[0], "#") {
			header = nil
			continue
		}
		if header == nil || len(rec) != len(header) || rec[1] == "result" {
			header = rec
			require.NotEqual(g.t, "error", rec[1], "%s\n%s", q, body)
			continue
		}
		r := qrow{v: map[string]string{}}
		for i, c := range header {
			switch c {
			case "", "result", "table", "_start", "_stop", "_measurement":
				continue
			case "_time":
				tt, err := time.Parse(time.RFC3339Nano, rec[i])
				require.NoError(g.t, err)
				r.time = tt.UTC()
				continue
			}
			if rec[i] != "" || c == "end" || c == "flags" {
				r.v[c] = rec[i]
			}
		}
		out = append(out, r)
	}
	return out
}

// panelCheck compares one panel's rows with the API's figures.
type panelCheck struct {
	t     *testing.T
	label string
	rows  []qrow
	slack func(i int) float64 // extra tolerance of hour i, for figures derived from two rounded ones
}

// near: the API rounds to 6 significant digits (dashboards.Num).
func (c *panelCheck) near(want, got float64, what string) {
	c.t.Helper()
	if math.IsNaN(want) {
		assert.True(c.t, math.IsNaN(got), "%s %s: %v, want none", c.label, what, got)
		return
	}
	assert.InDelta(c.t, want, got, 1e-9+6e-6*math.Abs(want), "%s %s", c.label, what)
}

func num(s string) float64 {
	if s == "" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

// field finds a field's value in rows: as a column (InfluxQL, pivoted
// Flux) or as the _value of the row whose _field it is (Flux).
func field(rows []qrow, name string, match func(qrow) bool) (float64, bool) {
	for _, r := range rows {
		if match != nil && !match(r) {
			continue
		}
		if s, ok := r.v[name]; ok {
			return num(s), true
		}
		if r.v["_field"] == name {
			return num(r.v["_value"]), true
		}
	}
	return math.NaN(), false
}

func (c *panelCheck) single(name string, want float64) {
	c.t.Helper()
	got, ok := field(c.rows, name, nil)
	require.True(c.t, ok, "%s: no %s in %v", c.label, name, c.rows)
	c.near(want, got, name)
}

func (c *panelCheck) perAHU(ahu, name string, want float64) {
	c.t.Helper()
	got, ok := field(c.rows, name, func(r qrow) bool { return r.v["ahu"] == ahu })
	if !ok {
		// A series of one field per air handler: its value is _value.
		for _, r := range c.rows {
			if r.v["ahu"] == ahu {
				got, ok = num(r.v["_value"]), true
			}
		}
	}
	require.True(c.t, ok, "%s: no %s of %s", c.label, name, ahu)
	c.near(want, got, ahu+" "+name)
}

func (c *panelCheck) byAHU(ov dashboards.Overview, ordered bool) {
	c.t.Helper()
	require.Len(c.t, c.rows, len(ov.AirHandlers), c.label)
	for _, u := range ov.AirHandlers {
		tt := u.Totals
		for name, want := range map[string]dashboards.Num{
			"cost_avoidable": tt.CostAvoidable, "cost": tt.Cost, "reheat_avoidable_kwh": tt.ReheatAvoid,
			"reheat_needed_kwh": tt.ReheatNeeded, "reheat_kwh": tt.ReheatKWh, "cooling_input_kwh": tt.CoolingInput,
			"water_removed_kg": tt.WaterKg, "effective_eer": tt.EffectiveEER,
		} {
			c.perAHU(u.ID, name, float64(want))
		}
	}
	// Ranked by money at stake: in the query (Flux) or by the table's sort
	// on that column (InfluxQL), as the API ranks them.
	got := append([]qrow(nil), c.rows...)
	if !ordered {
		sort.SliceStable(got, func(i, j int) bool { return num(got[i].v["cost_avoidable"]) > num(got[j].v["cost_avoidable"]) })
	}
	for i, u := range ov.AirHandlers {
		assert.Equal(c.t, u.ID, got[i].v["ahu"], "%s: rank %d", c.label, i+1)
	}
}

// daily compares the sums per air handler and UTC day with the API's
// hours summed the same way.
func (c *panelCheck) daily(hours map[string]*dashboards.AirHandlerHours) {
	c.t.Helper()
	want := map[string]float64{}
	for id, uh := range hours {
		for i, h := range uh.Hours {
			if v := float64(uh.Cost[i]); !math.IsNaN(v) {
				want[id+" "+h.UTC().Truncate(24*time.Hour).Format("2006-01-02")] += v
			}
		}
	}
	got := map[string]float64{}
	for _, r := range c.rows {
		v, ok := r.v["cost_avoidable"]
		if !ok {
			v = r.v["_value"]
		}
		got[r.v["ahu"]+" "+r.time.Truncate(24*time.Hour).Format("2006-01-02")] += num(v)
	}
	require.Len(c.t, got, len(want), c.label)
	for k, w := range want {
		c.near(w, got[k], k)
	}
}

// hourly compares one field hour by hour: the API's null is no value.
func (c *panelCheck) hourly(hs []time.Time, name string, want []dashboards.Num) {
	c.t.Helper()
	got := map[time.Time]float64{}
	for _, r := range c.rows {
		if s, ok := r.v[name]; ok {
			got[r.time] = num(s)
		} else if r.v["_field"] == name {
			got[r.time] = num(r.v["_value"])
		}
	}
	n := 0
	for i, h := range hs {
		w := float64(want[i])
		g, ok := got[h.UTC()]
		if math.IsNaN(w) {
			assert.True(c.t, !ok || math.IsNaN(g), "%s %s %s: %v, want none", c.label, name, h, g)
			continue
		}
		n++
		if !assert.True(c.t, ok, "%s %s: no value at %s", c.label, name, h) {
			continue
		}
		if c.slack != nil {
			assert.InDelta(c.t, w, g, 1e-9+c.slack(i), "%s %s %s", c.label, name, h.Format(time.RFC3339))
		} else {
			c.near(w, g, name+" "+h.Format(time.RFC3339))
		}
	}
	require.Positive(c.t, n, "%s %s: the API has values", c.label, name)
}

func (c *panelCheck) flags(uh *dashboards.AirHandlerHours) {
	c.t.Helper()
	want := map[time.Time]string{}
	for i, h := range uh.Hours {
		if uh.Flags[i] != "" {
			want[h.UTC()] = uh.Flags[i]
		}
	}
	got := map[time.Time]string{}
	for _, r := range c.rows {
		got[r.time] = r.v["flags"]
	}
	assert.Equal(c.t, want, got, c.label)
}

// alerts: the Flux table lists the alerts of the API's alert list for the
// period, each at its latest state.
func (c *panelCheck) alerts(api []dashboards.Alert) {
	c.t.Helper()
	got := map[string]qrow{}
	for _, r := range c.rows {
		_, dup := got[r.v["id"]]
		assert.False(c.t, dup, "%s: alert %s twice", c.label, r.v["id"])
		got[r.v["id"]] = r
	}
	require.Len(c.t, got, len(api), c.label)
	for _, a := range api {
		r, ok := got[a.ID]
		if !assert.True(c.t, ok, "%s: the API's alert %s is missing", c.label, a.ID) {
			continue
		}
		c.sameAlert(a, r, true)
	}
}

// sameAlert compares a row with an API alert; final says the row is the
// alert's latest transition (its state, money and reason now).
func (c *panelCheck) sameAlert(a dashboards.Alert, r qrow, final bool) {
	c.t.Helper()
	assert.Equal(c.t, a.AHU, r.v["ahu"], "%s %s", c.label, a.ID)
	assert.Equal(c.t, a.Kind, r.v["kind"], "%s %s", c.label, a.ID)
	assert.Equal(c.t, a.Severity, r.v["severity"], "%s %s", c.label, a.ID)
	assert.Equal(c.t, a.Start.UTC().Format(time.RFC3339), r.v["start"], "%s %s", c.label, a.ID)
	if !final {
		return
	}
	assert.Equal(c.t, a.State, r.v["status"], "%s %s", c.label, a.ID)
	assert.Equal(c.t, a.Reason, r.v["reason"], "%s %s", c.label, a.ID)
	c.near(a.Money, num(r.v["money"]), a.ID+" money")
	if e := r.v["end"]; e != "" {
		assert.Equal(c.t, a.End.UTC().Format(time.RFC3339), e, "%s %s", c.label, a.ID)
	}
}

// transitions: the InfluxQL table lists the transitions in the range.
// Each belongs to an alert of the API; an alert's closing transition, and
// the opening one of an alert still open, carry its final figures; every
// alert of the period that started in it early enough to open inside it
// (the longest persistence of a rule is 6 h, README "Alerts") is there.
func (c *panelCheck) transitions(all, period []dashboards.Alert, from, to time.Time) {
	c.t.Helper()
	byID := map[string]dashboards.Alert{}
	for _, a := range all {
		byID[a.ID] = a
	}
	seen := map[string]bool{}
	for _, r := range c.rows {
		id := r.v["id"]
		a, ok := byID[id]
		if !assert.True(c.t, ok, "%s: alert %s is not in the API's list", c.label, id) {
			continue
		}
		seen[id] = true
		assert.False(c.t, r.time.Before(from) || r.time.After(to), "%s %s: a transition at %s is outside the range", c.label, id, r.time)
		c.sameAlert(a, r, r.v["status"] == a.State)
	}
	for _, a := range period {
		if !a.Start.Before(from) && !a.Start.Add(6*time.Hour).After(to) {
			assert.True(c.t, seen[a.ID], "%s: the API's alert %s (start %s) is missing", c.label, a.ID, a.Start)
		}
	}
	require.NotEmpty(c.t, seen, c.label)
}

func (c *panelCheck) open(api []dashboards.Alert) {
	c.t.Helper()
	var want, got []string
	for _, a := range api {
		if a.State == "open" {
			want = append(want, a.ID)
		}
	}
	for _, r := range c.rows {
		if r.v["open"] == "" || num(r.v["open"]) == 1 {
			got = append(got, r.v["id"])
		}
	}
	sort.Strings(want)
	sort.Strings(got)
	assert.Equal(c.t, want, got, c.label)
}
