package dashboards

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
	"golang.org/x/net/html"
	"golang.org/x/net/html/atom"

	"github.com/dewline/dewline/metrics"
)

// The report fixture: three invented air handlers over two local days in
// Chicago, with a few hand-made hours whose figures are consistent with
// the engine's definitions (README, "Hourly output"): cost_avoidable =
// avoidable cooling input × electricity price + avoidable reheat input ×
// its price. Every expected figure below is worked by hand from these
// literals; none comes from the code under test.
//
// Prices: electricity 0.10 USD/kWh and 0.4 kg CO2/kWh; fuel 0.05 USD/kWh
// and 0.2 kg CO2/kWh.
var repPrices = metrics.Prices{ElectricityPerKWh: 0.10, FuelPerKWh: 0.05, ElectricityCO2KgPerKWh: 0.4, FuelCO2KgPerKWh: 0.2}

// repT0 is 2026-07-01 00:00 CDT.
var repT0 = time.Date(2026, 7, 1, 5, 0, 0, 0, time.UTC)

func repSite(names map[string]string) *Site {
	unit := func(id string, reheat metrics.ReheatKind, eff float64) AirHandler {
		name := id
		if n, ok := names[id]; ok {
			name = n
		}
		return AirHandler{ID: id, Name: name, Spec: &metrics.AirHandler{ID: id, Cooling: metrics.CoolingDX, RatedCOP: 3, RatedOutdoorC: 35,
			Reheat: reheat, BoilerEff: eff, Basis: metrics.BasisStandard, Fan: metrics.FanNone, LeavingRH: 0.95,
			Target:   metrics.Target{Kind: metrics.TargetSupplyDewPoint, DewPointC: 11},
			Prices:   repPrices,
			Accuracy: metrics.DefaultAccuracy, PressurePa: 101325}}
	}
	return &Site{Name: "Harbour Test Annex", Zone: chicago, Currency: "USD", PressurePa: 101325, AirHandlers: []AirHandler{
		unit("AHU-A", metrics.ReheatElectric, 0),
		unit("AHU-B", metrics.ReheatHotWater, 0.8),
		unit("AHU-C", metrics.ReheatRecovered, 0),
	}}
}

func repResults() *memResults {
	m := &memResults{}
	add := func(ahu string, h int, f map[string]float64, flags ...string) {
		f["coverage"] = 1
		r := rec(ahu, repT0.Add(time.Duration(h)*time.Hour), f)
		r.Flags = flags
		m.recs = append(m.recs, r)
	}
	// AHU-A, electric reheat (input = heat).
	// 00:00 local, a night hour without humidity need: shc 1 h, all unneeded.
	// cost_avoidable = (2 + 8) × 0.10 = 1.00; CO2 = 10 × 0.4 = 4.0.
	add("AHU-A", 0, map[string]float64{"reheat_kwh": 10, "reheat_input_kwh": 10, "reheat_needed_kwh": 2, "reheat_avoidable_kwh": 8,
		"cooling_input_kwh": 6, "cooling_avoidable_input_kwh": 2, "shc_h": 1, "shc_unneeded_h": 1,
		"cost": 1.6, "cost_avoidable": 1.0, "co2_kg": 6.4, "co2_avoidable_kg": 4.0, "reheat_avoidable_kwh_u95": 1.0})
	// 14:00 local, humid: cost_avoidable = (3 + 5) × 0.10 = 0.80.
	add("AHU-A", 14, map[string]float64{"reheat_kwh": 20, "reheat_input_kwh": 20, "reheat_needed_kwh": 15, "reheat_avoidable_kwh": 5,
		"cooling_input_kwh": 12, "cooling_avoidable_input_kwh": 3, "shc_h": 1, "shc_unneeded_h": 0,
		"cost": 3.2, "cost_avoidable": 0.8, "co2_kg": 12.8, "co2_avoidable_kg": 3.2, "reheat_avoidable_kwh_u95": 2.0}, "cooling_input_modelled")
	// Day 2, 06:00 local: half the simultaneous time unneeded; cost_avoidable = (4 + 6) × 0.10 = 1.00.
	add("AHU-A", 30, map[string]float64{"reheat_kwh": 12, "reheat_input_kwh": 12, "reheat_needed_kwh": 6, "reheat_avoidable_kwh": 6,
		"cooling_input_kwh": 8, "cooling_avoidable_input_kwh": 4, "shc_h": 1, "shc_unneeded_h": 0.5,
		"cost": 2.0, "cost_avoidable": 1.0, "co2_kg": 8.0, "co2_avoidable_kg": 4.0, "reheat_avoidable_kwh_u95": 1.5})
	// AHU-B, hot water at a boiler efficiency of 0.8: input = 40 / 0.8 = 50 kWh of fuel.
	// 02:00 local. Avoidable reheat input = 50 × 30/40 = 37.5 kWh of fuel.
	// cost_avoidable = 10 × 0.10 + 37.5 × 0.05 = 1.0 + 1.875 = 2.875;
	// CO2 = 10 × 0.4 + 37.5 × 0.2 = 11.5.
	add("AHU-B", 2, map[string]float64{"reheat_kwh": 40, "reheat_input_kwh": 50, "reheat_needed_kwh": 10, "reheat_avoidable_kwh": 30,
		"cooling_input_kwh": 20, "cooling_avoidable_input_kwh": 10, "shc_h": 1, "shc_unneeded_h": 0.25, "fuel_kwh": 50,
		"cost": 4.5, "cost_avoidable": 2.875, "co2_kg": 18, "co2_avoidable_kg": 11.5, "reheat_avoidable_kwh_u95": 4.0})
	// AHU-C, recovered heat: no purchased reheat. 03:00 local.
	// cost_avoidable = 5 × 0.10 = 0.50.
	add("AHU-C", 3, map[string]float64{"reheat_kwh": 15, "reheat_input_kwh": 0, "reheat_needed_kwh": 0, "reheat_avoidable_kwh": 15,
		"cooling_input_kwh": 10, "cooling_avoidable_input_kwh": 5, "shc_h": 1, "shc_unneeded_h": 1,
		"cost": 1.0, "cost_avoidable": 0.5, "co2_kg": 4, "co2_avoidable_kg": 2.0})
	m.alerts = []Alert{
		{ID: "AHU-A/reheat_not_needed/1", AHU: "AHU-A", Kind: "reheat_not_needed", Severity: "warning", State: "closed",
			Start: repT0, End: repT0.Add(2 * time.Hour), EnergyKWh: 10, Money: 1.0, Reason: "reheat added 10.0 kWh while the entering air was already dry"},
		{ID: "AHU-B/coil_colder_than_needed/1", AHU: "AHU-B", Kind: "coil_colder_than_needed", Severity: "warning", State: "closed",
			Start: repT0.Add(2 * time.Hour), End: repT0.Add(5 * time.Hour), EnergyKWh: 3, Money: 0.4, Reason: "small one"},
		{ID: "AHU-B/reheat_not_needed/1", AHU: "AHU-B", Kind: "reheat_not_needed", Severity: "warning", State: "open",
			Start: repT0.Add(3 * time.Hour), EnergyKWh: 30, Money: 2.5, Reason: "large one"},
	}
	return m
}

func repPeriod(t *testing.T) Period {
	p, err := ResolvePeriod("custom", "2026-07-01", "2026-07-02", chicago, repT0)
	require.NoError(t, err)
	return p
}

func renderReport(t *testing.T, site *Site, res Results, p Period, opt ReportOptions) string {
	t.Helper()
	if opt.Generated.IsZero() {
		opt.Generated = time.Date(2026, 7, 10, 12, 0, 0, 0, time.UTC)
	}
	var b bytes.Buffer
	require.NoError(t, WriteReport(context.Background(), &b, site, res, p, opt))
	return b.String()
}

// parseHTML parses the report and fails on a tokenizer error.
func parseHTML(t *testing.T, page string) *html.Node {
	t.Helper()
	doc, err := html.Parse(strings.NewReader(page))
	require.NoError(t, err)
	return doc
}

func walk(n *html.Node, fn func(*html.Node)) {
	fn(n)
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		walk(c, fn)
	}
}

func attr(n *html.Node, key string) (string, bool) {
	for _, a := range n.Attr {
		if a.Key == key {
			return a.Val, true
		}
	}
	return "", false
}

func byID(doc *html.Node, id string) *html.Node {
	var found *html.Node
	walk(doc, func(n *html.Node) {
		if v, ok := attr(n, "id"); ok && v == id && found == nil {
			found = n
		}
	})
	return found
}

func text(n *html.Node) string {
	var b strings.Builder
	walk(n, func(x *html.Node) {
		if x.Type == html.TextNode {
			b.WriteString(x.Data)
			b.WriteString(" ")
		}
	})
	return strings.Join(strings.Fields(b.String()), " ")
}

// value reads the data-value of the element with id, or of the element
// with data-field field inside it.
func value(t *testing.T, doc *html.Node, id, field string) float64 {
	t.Helper()
	n := byID(doc, id)
	require.NotNil(t, n, "no element #%s", id)
	if field != "" {
		var f *html.Node
		walk(n, func(x *html.Node) {
			if v, ok := attr(x, "data-field"); ok && v == field && f == nil {
				f = x
			}
		})
		require.NotNil(t, f, "no [data-field=%s] in #%s", field, id)
		n = f
	}
	s, ok := attr(n, "data-value")
	require.True(t, ok, "#%s %s has no data-value", id, field)
	v, err := strconv.ParseFloat(s, 64)
	require.NoError(t, err)
	return v
}

func TestReport_RanksAirHandlersByAvoidableCost(t *testing.T) {
	page := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{})
	doc := parseHTML(t, page)
	// Avoidable cost per unit (hand sums above): AHU-B 2.875, AHU-A
	// 1.00 + 0.80 + 1.00 = 2.80, AHU-C 0.50.
	var order []string
	walk(byID(doc, "ranking"), func(n *html.Node) {
		if n.DataAtom == atom.Tr {
			if id, ok := attr(n, "data-unit"); ok {
				order = append(order, id)
			}
		}
	})
	assert.Equal(t, []string{"AHU-B", "AHU-A", "AHU-C"}, order)
	// The unit sections follow the same order.
	var sections []string
	walk(doc, func(n *html.Node) {
		if cls, _ := attr(n, "class"); n.DataAtom == atom.Section && cls == "sheet unit" {
			id, _ := attr(n, "data-unit")
			sections = append(sections, id)
		}
	})
	assert.Equal(t, []string{"AHU-B", "AHU-A", "AHU-C"}, sections)
	assert.InDelta(t, 6.175, value(t, doc, "total-cost-avoidable", ""), 1e-9, "2.875 + 2.80 + 0.50")
	// Avoidable reheat 8 + 5 + 6 + 30 + 15 = 64 kWh; avoidable cooling 2 + 3 + 4 + 10 + 5 = 24 kWh.
	assert.InDelta(t, 64, value(t, doc, "total-reheat-avoidable", ""), 1e-9)
	assert.InDelta(t, 24, value(t, doc, "total-cooling-avoidable", ""), 1e-9)
	// The findings state each unit's figures in words, most money first.
	f := text(byID(doc, "findings"))
	assert.Contains(t, f, "AHU-B reheated 40.0 kWh, of which 30.0 kWh (75 %) the humidity target did not need")
	assert.Contains(t, f, "AHU-A reheated 42.0 kWh, of which 19.0 kWh (45 %)", "8 + 5 + 6 = 19 of 10 + 20 + 12 = 42")
	assert.Less(t, strings.Index(f, "AHU-B"), strings.Index(f, "AHU-A"))
	assert.Contains(t, f, "its reheat is recovered heat", "AHU-C's avoidable reheat costs nothing purchased")
}

func TestReport_AnnualisedEstimate(t *testing.T) {
	doc := parseHTML(t, renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{}))
	// Two local days: × 365 / 2 = × 182.5.
	assert.Contains(t, text(byID(doc, "annual-basis")), "× 365 / 2 days = × 182.50")
	// 5 hours with results of 3 units × 48 h = 3.5 %, shown whole.
	assert.Contains(t, text(byID(doc, "annual-basis")), "3 % of the period's air handler-hours have results")
	// 6.175 USD × 182.5 = 1,126.9375 USD per year.
	assert.InDelta(t, 1126.9375, value(t, doc, "annual-table", "annual_cost_avoidable"), 1e-9)
	// Avoidable reheat 64 kWh × 182.5 = 11,680 kWh; its half-width
	// (1.0 + 2.0 + 1.5 + 4.0) × 182.5 = 1,551.25 kWh, scaled linearly.
	assert.InDelta(t, 11680, value(t, doc, "annual-table", "annual_reheat_avoidable_kwh"), 1e-9)
	assert.Contains(t, text(byID(doc, "annual-table")), "± 1,551 kWh (95 %)")
	// The cost's half-width from the avoidable reheat: AHU-A 0.10 × (1.0 +
	// 2.0 + 1.5) × 1 = 0.45, AHU-B 0.05 × 4.0 × 50/40 = 0.25, AHU-C 0;
	// (0.45 + 0.25) × 182.5 = 127.75 USD.
	assert.Contains(t, text(byID(doc, "annual-table")), "± 128 USD")
	// The per-unit column of the ranking: AHU-B 2.875 × 182.5 = 524.6875.
	walk(byID(doc, "ranking"), func(n *html.Node) {
		if id, _ := attr(n, "data-unit"); n.DataAtom == atom.Tr && id == "AHU-B" {
			walk(n, func(x *html.Node) {
				if f, _ := attr(x, "data-field"); f == "annual_cost_avoidable" {
					v, _ := attr(x, "data-value")
					assert.Equal(t, "524.6875", v)
				}
			})
		}
	})
}

func TestReport_MeasureSavings(t *testing.T) {
	doc := parseHTML(t, renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{}))
	tests := []struct {
		name string
		key  string
		want float64
		why  string
	}{
		{"target control", MeasureTargetControl, 6.175, "every avoidable cost: 2.875 + 2.80 + 0.50"},
		// Coil reset: avoidable cooling + the avoidable reheat of the needed share.
		// AHU-A: (0.2 + 0 × 0.8) + (0.3 + 1 × 0.5) + (0.4 + 0.5 × 0.6) = 0.2 + 0.8 + 0.7 = 1.70
		// AHU-B: 1.0 + 0.75 × 1.875 = 2.40625; AHU-C: 0.5 + 0 = 0.5.
		{"coil reset", MeasureCoilReset, 4.60625, "1.70 + 2.40625 + 0.50"},
		// Reheat lockout: the unneeded share of all avoidable money.
		// AHU-A: 1 × 1.0 + 0 × 0.8 + 0.5 × 1.0 = 1.5; AHU-B: 0.25 × 2.875 = 0.71875; AHU-C: 1 × 0.5.
		{"reheat enable", MeasureReheatEnable, 2.71875, "1.5 + 0.71875 + 0.5"},
		// Recovered heat: needed reheat input at its price.
		// AHU-A: (10 - 8) + (20 - 5) + (12 - 6) = 23 kWh × 0.10 = 2.30;
		// AHU-B: (50 - 37.5) = 12.5 kWh of fuel × 0.05 = 0.625; AHU-C is recovered already.
		{"recovered heat", MeasureRecoveredHeat, 2.925, "2.30 + 0.625"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.InDelta(t, tt.want, value(t, doc, "measure-"+tt.key, "cost"), 1e-9, tt.why)
			assert.InDelta(t, tt.want*182.5, value(t, doc, "measure-"+tt.key, "annual"), 1e-9, "× 365 / 2")
		})
	}
	// The reheat lockout names its hours: 1 + 0.5 + 0.25 + 1 = 2.75 h, at
	// 00, 02, 03 and 06 local on the 1st and 2nd of July.
	basis := text(byID(doc, "measure-"+MeasureReheatEnable))
	assert.Contains(t, basis, "2.8 h of such time in the period, on 2 days, in the site's hours 00:00–01:00, 02:00–04:00, 06:00–07:00")
	// The by-unit table: recovered heat does not apply to AHU-C.
	row := ""
	walk(byID(doc, "measures-by-unit"), func(n *html.Node) {
		if id, _ := attr(n, "data-unit"); n.DataAtom == atom.Tr && id == "AHU-C" {
			row = text(n)
		}
	})
	assert.Equal(t, "AHU-C 0.50 0.50 0.50 n/a", row)
	assert.Contains(t, text(byID(doc, "overlap")), "do not add")
}

func TestReport_AlertsAndQuality(t *testing.T) {
	doc := parseHTML(t, renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{}))
	var unitB *html.Node
	walk(doc, func(n *html.Node) {
		if cls, _ := attr(n, "class"); n.DataAtom == atom.Section && cls == "sheet unit-more" {
			if id, _ := attr(n, "data-unit"); id == "AHU-B" {
				unitB = n
			}
		}
	})
	require.NotNil(t, unitB)
	s := text(unitB)
	// Most money first: "large one" (2.50) before "small one" (0.40).
	assert.Less(t, strings.Index(s, "large one"), strings.Index(s, "small one"))
	assert.NotEqual(t, -1, strings.Index(s, "small one"))
	// The open alert started at 08:00Z on 1 July and is still open when the
	// period ends at 05:00Z on 3 July: 45 h within the period.
	assert.Contains(t, s, "1 d 21 h")
	cov := text(byID(doc, "coverage"))
	assert.Contains(t, cov, "cooling_input_modelled 1 h")
	// 3 of the 48 hours of the period for AHU-A.
	assert.Contains(t, cov, "AHU-A 3 6 %")
}

func TestReport_Cautions(t *testing.T) {
	page := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{})
	c := text(byID(parseHTML(t, page), "cautions"))
	// /work/shared/DOMAIN.md "Cautions to show users" and the README's Cautions.
	for _, want := range []string{"mould", "comfort", "laboratories, hospitals, museums", "engineer of record",
		"local codes and licensed practice", "estimates", "ASHRAE Standard 90.1"} {
		assert.Contains(t, c, want)
	}
	assert.Contains(t, page, "class=\"caution-short\"", "the first page points to the cautions")
}

// TestReport_SelfContained: nothing in the report loads from anywhere.
func TestReport_SelfContained(t *testing.T) {
	page := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{})
	doc := parseHTML(t, page)
	forbidden := map[atom.Atom]bool{atom.Script: true, atom.Link: true, atom.Iframe: true, atom.Object: true,
		atom.Embed: true, atom.Img: true, atom.Audio: true, atom.Video: true, atom.Base: true, atom.Form: true}
	walk(doc, func(n *html.Node) {
		if n.Type != html.ElementNode {
			return
		}
		assert.False(t, forbidden[n.DataAtom], "element <%s>", n.Data)
		for _, a := range n.Attr {
			k := strings.ToLower(a.Key)
			v := strings.ToLower(strings.TrimSpace(a.Val))
			assert.False(t, strings.HasPrefix(k, "on"), "event handler %s on <%s>", a.Key, n.Data)
			switch k {
			case "src", "href", "xlink:href", "action", "poster", "srcset", "data", "formaction", "background":
				assert.True(t, strings.HasPrefix(v, "#"), "<%s %s=%q> refers outside the file", n.Data, a.Key, a.Val)
			case "style":
				assert.NotContains(t, v, "url(")
			}
			if k == "xmlns" {
				continue // a namespace name, never fetched
			}
			assert.False(t, strings.Contains(v, "http://") || strings.Contains(v, "https://"), "<%s %s=%q>", n.Data, a.Key, a.Val)
		}
		if n.DataAtom == atom.Style {
			css := strings.ToLower(text(n))
			assert.NotContains(t, css, "url(")
			assert.NotContains(t, css, "@import")
			assert.NotContains(t, css, "@font-face")
		}
	})
	assert.Contains(t, page, "@page { size: A4; }", "SI display prints on A4 by default")
	ip := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{Display: Display{IP: true}})
	assert.Contains(t, ip, "@page { size: letter; }", "IP display prints on Letter by default")
	assert.Contains(t, renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{Paper: "letter"}), "@page { size: letter; }")
	var b bytes.Buffer
	assert.ErrorContains(t, WriteReport(context.Background(), &b, repSite(nil), repResults(), repPeriod(t), ReportOptions{Paper: "a3"}), `paper "a3": use a4 or letter`)
}

// TestReport_WellFormed: every element the report opens it closes, in
// order (void elements and self-closing SVG elements aside), and the
// document has the sheets the page-break rules count on.
func TestReport_WellFormed(t *testing.T) {
	page := renderReport(t, repSite(nil), repResults(), repPeriod(t), ReportOptions{})
	void := map[string]bool{"area": true, "base": true, "br": true, "col": true, "embed": true, "hr": true, "img": true,
		"input": true, "link": true, "meta": true, "source": true, "track": true, "wbr": true}
	z := html.NewTokenizer(strings.NewReader(page))
	var stack []string
	for {
		tt := z.Next()
		if tt == html.ErrorToken {
			require.ErrorIs(t, z.Err(), io.EOF)
			break
		}
		tok := z.Token()
		switch tt {
		case html.StartTagToken:
			if !void[tok.Data] {
				stack = append(stack, tok.Data)
			}
		case html.EndTagToken:
			require.NotEmpty(t, stack, "</%s> closes nothing", tok.Data)
			require.Equal(t, stack[len(stack)-1], tok.Data, "</%s> closes <%s>", tok.Data, stack[len(stack)-1])
			stack = stack[:len(stack)-1]
		}
	}
	assert.Empty(t, stack, "left open")
	doc := parseHTML(t, page)
	sheets := 0
	walk(doc, func(n *html.Node) {
		if cls, _ := attr(n, "class"); n.DataAtom == atom.Section && strings.HasPrefix(cls, "sheet") {
			sheets++
		}
	})
	// summary, annualised + measures, 2 per unit, method, assumptions + coverage, uncertainty + cautions.
	assert.Equal(t, 1+1+2*3+1+1+1, sheets)
}

func TestReport_EscapesConfiguredText(t *testing.T) {
	const payload = `<script>alert(1)</script>`
	site := repSite(map[string]string{"AHU-A": payload, "AHU-C": `"><img src=x onerror=alert(2)>`})
	site.Name = `Annex <b onmouseover=alert(3)>`
	res := repResults()
	res.alerts[0].Reason = `<script>alert(4)</script>`
	page := renderReport(t, site, res, repPeriod(t), ReportOptions{Notes: []Assumption{{Topic: "<i>x</i>", Text: "<script>alert(5)</script>"}}})
	assert.NotContains(t, page, "<script")
	assert.NotContains(t, page, "<img")
	assert.NotContains(t, page, "<b onmouseover")
	assert.Contains(t, page, "&lt;script&gt;alert(1)&lt;/script&gt;")
	doc := parseHTML(t, page)
	walk(doc, func(n *html.Node) {
		if n.Type != html.ElementNode {
			return
		}
		assert.NotEqual(t, atom.Script, n.DataAtom)
		assert.NotEqual(t, atom.Img, n.DataAtom)
		for _, a := range n.Attr {
			assert.False(t, strings.HasPrefix(a.Key, "on"), "attribute %s on <%s>", a.Key, n.Data)
		}
	})
	// The names still read as text.
	assert.Contains(t, text(doc), payload)
	assert.Contains(t, text(byID(doc, "site-name")), "Annex <b onmouseover=alert(3)>")
}

func TestReport_AirHandlerWithoutHours(t *testing.T) {
	site := repSite(nil)
	site.AirHandlers = append(site.AirHandlers, AirHandler{ID: "AHU-D", Name: "AHU-D"})
	page := renderReport(t, site, repResults(), repPeriod(t), ReportOptions{})
	assert.Contains(t, page, "AHU-D has no results in this period.")
	assert.Contains(t, page, "No hourly results for this air handler in the period.")
}

// TestReport_DashboardStillParses: the dashboard parses every template in
// templates/, this one included, with its own functions.
func TestReport_DashboardStillParses(t *testing.T) {
	_, err := New(Options{Site: repSite(nil), Results: repResults()})
	require.NoError(t, err)
}

func TestReport_StoreError(t *testing.T) {
	res := repResults()
	res.err = errStoreDown
	var b bytes.Buffer
	err := WriteReport(context.Background(), &b, repSite(nil), res, repPeriod(t), ReportOptions{})
	assert.ErrorIs(t, err, errStoreDown)
}

// sizeFixture is 5 units × 30 days of hours with changing figures and a
// nightly alert each: the size a month's report reaches.
func sizeFixture() (*Site, *memResults, Period) {
	site := repSite(nil)
	site.AirHandlers = nil
	m := &memResults{}
	for k := range 5 {
		id := fmt.Sprintf("AHU-%d", k+1)
		site.AirHandlers = append(site.AirHandlers, AirHandler{ID: id, Name: "Air handler " + id, Spec: repSite(nil).AirHandlers[0].Spec})
		for h := range 30 * 24 {
			x := float64(h)
			hour := repT0.Add(time.Duration(h) * time.Hour)
			day := (h%24 >= 8 && h%24 < 20)
			dp := 16 + 3*math.Sin(x/17)
			if !day {
				dp = 9 + math.Sin(x/13)
			}
			reheat := 20 + 5*math.Sin(x/7+float64(k))
			avoid := reheat * (0.3 + 0.2*math.Sin(x/11))
			m.recs = append(m.recs, rec(id, hour, map[string]float64{
				"coverage": 1, "entering_temp_c": 24 + 2*math.Sin(x/9), "entering_dewpoint_c": dp,
				"leaving_temp_c": 11 + 0.3*math.Sin(x/5), "leaving_dewpoint_c": 10.5, "supply_temp_c": 17,
				"required_leaving_temp_c": 12 + math.Sin(x/19), "reheat_kwh": reheat, "reheat_input_kwh": reheat,
				"reheat_needed_kwh": reheat - avoid, "reheat_avoidable_kwh": avoid, "cooling_input_kwh": 30 + 4*math.Sin(x/8),
				"cooling_avoidable_input_kwh": 3, "coil_total_kwh": 100, "water_removed_kg": 20 + 5*math.Sin(x/6),
				"water_removed_kg_u95": 4, "effective_eer": 6 + math.Sin(x/10), "cost_avoidable": (3 + avoid) * 0.1,
				"shc_h": 1, "shc_unneeded_h": 0.3, "reheat_avoidable_kwh_u95": 2}))
		}
		for d := range 30 {
			start := repT0.Add(time.Duration(d*24+20) * time.Hour)
			m.alerts = append(m.alerts, Alert{ID: fmt.Sprintf("%s/r/%d", id, d), AHU: id, Kind: "reheat_not_needed", Severity: "warning",
				State: "closed", Start: start, End: start.Add(10 * time.Hour), EnergyKWh: 40, Money: 4,
				Reason: "reheat added 40.0 kWh while the entering air was already drier than the humidity target"})
		}
	}
	p, _ := ResolvePeriod("custom", "2026-07-01", "2026-07-30", chicago, repT0)
	return site, m, p
}

// TestReport_SizeBudget: a month of five air handlers stays under 1.5 MB
// (about 0.7 MB when this was written; the charts are most of it), small
// enough to mail.
func TestReport_SizeBudget(t *testing.T) {
	site, m, p := sizeFixture()
	page := renderReport(t, site, m, p, ReportOptions{})
	t.Logf("5 units × 30 days: %d bytes", len(page))
	assert.Less(t, len(page), 1500*1024)
	assert.Greater(t, len(page), 100*1024, "the charts are there")
}

// BenchmarkReport times the report of a month of five air handlers
// against the dashboard's overview of the same hours (the reference: one
// pass over the records without charts) in the same run.
func BenchmarkReport(b *testing.B) {
	site, m, p := sizeFixture()
	b.Run("overview", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if _, err := BuildOverview(context.Background(), site, m, p); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("report", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			if err := WriteReport(context.Background(), io.Discard, site, m, p, ReportOptions{Generated: repT0}); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func TestHourRanges(t *testing.T) {
	set := func(hours ...int) [24]float64 {
		var v [24]float64
		for _, h := range hours {
			v[h] = 1
		}
		return v
	}
	var all [24]float64
	for h := range all {
		all[h] = 0.5
	}
	tests := []struct {
		name string
		v    [24]float64
		want string
	}{
		{"none", set(), ""},
		{"one hour", set(0), "00:00–01:00"},
		{"night across midnight", set(20, 21, 22, 23, 0, 1, 2, 3, 4, 5, 6, 7), "20:00–08:00"},
		{"two ranges", set(0, 23, 12, 13), "12:00–14:00, 23:00–01:00"},
		{"every hour", all, "at every hour of the day"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			assert.Equal(t, tt.want, hourRanges(tt.v))
		})
	}
}

// TestReport_FanHeatNotes: each air handler's note on fan heat says what
// metrics.Compute does with its configuration: the fan_kw point when it
// is trended, else the rated fan power, else the assumed rise (the
// precedence of the engine's fan power, metrics/step.go fanKW), and for
// a blow-through fan after the entering sensor, that the heat is added to
// the coil load. The rise is a temperature difference: 0.5 K is 0.9 °F.
func TestReport_FanHeatNotes(t *testing.T) {
	site := repSite(nil)
	base := site.AirHandlers[0]
	type tc struct {
		id      string
		fan     metrics.FanPosition
		ratedKW float64
		riseK   float64
		trended bool
		si, ip  string
	}
	cases := []tc{
		{"F-NONE", metrics.FanNone, 0, 0, false,
			"No fan heat between coil and supply sensor.", "No fan heat between coil and supply sensor."},
		{"F-DT-TRENDED", metrics.FanDrawThrough, 2.5, 0.5, true,
			"Draw-through: heat from the trended fan power.", "Draw-through: heat from the trended fan power."},
		{"F-DT-RATED", metrics.FanDrawThrough, 2.5, 0.5, false,
			"Draw-through: heat from the rated fan power, 2.5 kW, whenever air flows.",
			"Draw-through: heat from the rated fan power, 2.5 kW, whenever air flows."},
		{"F-DT-RISE", metrics.FanDrawThrough, 0, 0.5, false,
			"Draw-through: 0.5 K rise assumed.", "Draw-through: 0.9 °F rise assumed."},
		{"F-BT-TRENDED", metrics.FanBlowThrough, 0, 0.5, true,
			"Blow-through, after the entering sensor: heat from the trended fan power added to the coil load.",
			"Blow-through, after the entering sensor: heat from the trended fan power added to the coil load."},
		{"F-BT-RATED", metrics.FanBlowThrough, 4, 0.5, false,
			"Blow-through, after the entering sensor: the rated fan power, 4.0 kW, added to the coil load whenever air flows.",
			"Blow-through, after the entering sensor: the rated fan power, 4.0 kW, added to the coil load whenever air flows."},
		{"F-BT-RISE", metrics.FanBlowThrough, 0, 1, false,
			"Blow-through, after the entering sensor: 1.0 K rise assumed, added to the coil load.",
			"Blow-through, after the entering sensor: 1.8 °F rise assumed, added to the coil load."},
		{"F-BT-MEASURED", metrics.FanBlowThroughMeasured, 4, 1, true,
			"Blow-through, ahead of the entering sensor: fan heat is in the measured coil load.",
			"Blow-through, ahead of the entering sensor: fan heat is in the measured coil load."},
	}
	site.AirHandlers = nil
	trended := map[string][]string{}
	res := &memResults{}
	for _, c := range cases {
		spec := *base.Spec
		spec.ID, spec.Fan, spec.FanRatedKW, spec.FanRiseK = c.id, c.fan, c.ratedKW, c.riseK
		site.AirHandlers = append(site.AirHandlers, AirHandler{ID: c.id, Name: c.id, Spec: &spec})
		trended[c.id] = []string{string(metrics.RoleEnteringTemp), string(metrics.RoleSupplyTemp)}
		if c.trended {
			trended[c.id] = append(trended[c.id], string(metrics.RoleFanPower))
		}
		res.recs = append(res.recs, rec(c.id, repT0, map[string]float64{"coverage": 1, "reheat_kwh": 1}))
	}
	for _, ip := range []bool{false, true} {
		page := renderReport(t, site, res, repPeriod(t), ReportOptions{Display: Display{IP: ip}, Trended: trended})
		notes := map[string]string{}
		walk(parseHTML(t, page), func(n *html.Node) {
			if id, ok := attr(n, "data-unit"); ok {
				if c, _ := attr(n, "class"); c == "unit-basis" {
					notes[id] = text(n)
				}
			}
		})
		for _, c := range cases {
			want := c.si
			if ip {
				want = c.ip
			}
			note, ok := notes[c.id]
			require.True(t, ok, "%s has its paragraph of assumptions", c.id)
			_, after, found := strings.Cut(note, "Fan heat: ")
			require.True(t, found, "%s: %q", c.id, note)
			fan, _, _ := strings.Cut(after, " Coil leaving humidity:")
			assert.Equal(t, want, fan, "%s, IP %v", c.id, ip)
		}
	}
}
