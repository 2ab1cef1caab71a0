package dashboards

import (
	"bytes"
	"encoding/xml"
	"errors"
	"io"
	"math"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics/compare"
	"github.com/dewline/dewline/metrics/compare/comparetest"
)

// The comparison's figures are tested in metrics/compare; these tests
// check the page and the table built from a comparison.

var (
	cmpBefore = compare.Window{From: time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC), To: time.Date(2026, 6, 15, 0, 0, 0, 0, time.UTC), Label: "1 Jun 2026 – 14 Jun 2026"}
	cmpAfter  = compare.Window{From: time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC), To: time.Date(2026, 7, 15, 0, 0, 0, 0, time.UTC), Label: "1 Jul 2026 – 14 Jul 2026"}
)

func cmpSite(units ...string) *compare.Input {
	in := &compare.Input{Site: "Test site", Currency: "USD", Zone: time.UTC, Before: cmpBefore, After: cmpAfter}
	for _, u := range units {
		in.AirHandlers = append(in.AirHandlers, compare.AirHandler{ID: u, Name: u})
	}
	return in
}

// cmpRun compares the records of m as the command does.
func cmpRun(t *testing.T, in *compare.Input, m *memResults) *compare.Comparison {
	t.Helper()
	a, err := compare.New(*in)
	require.NoError(t, err)
	for k, w := range []compare.Window{in.Before, in.After} {
		for i := range m.recs {
			r := m.recs[i]
			if !r.HourStart.Before(w.From) && r.HourStart.Before(w.To) {
				a.Add(compare.Side(k), &r)
			}
		}
	}
	c, err := a.Result()
	require.NoError(t, err)
	return c
}

// modelFixture adds two fortnights of hours whose figures the baseline
// model can follow exactly: reheat 1.5 kWh per tonne of dry air, cooling
// input 1 kWh per tonne per K of entering dew point above 5 °C, water
// 0.8 kg per tonne per g/kg... kept simple: water 0.5 kg per tonne.
// After the change every figure is multiplied by factor, so the avoided
// share is (1 − factor) by construction.
func modelFixture(m *memResults, ahu string, factor float64) {
	for k, w := range []compare.Window{cmpBefore, cmpAfter} {
		f := 1.0
		if k == 1 {
			f = factor
		}
		i := 0
		for at := w.From; at.Before(w.To); at = at.Add(time.Hour) {
			dp := 10 + 6*math.Sin(float64(i)/17)
			tons := 10 + 2*math.Sin(float64(i)/5)
			m.recs = append(m.recs, rec(ahu, at, map[string]float64{
				"coverage": 1, "entering_dewpoint_c": dp, "entering_temp_c": 24 + math.Sin(float64(i)/7), "dry_air_kg": 1000 * tons,
				"leaving_dewpoint_c": 10, "reheat_kwh": f * 1.5 * tons, "cooling_input_kwh": f * tons * (dp - 5),
				"water_removed_kg": f * 0.5 * tons, "cost": f * 0.15 * (1.5*tons + tons*(dp-5)),
			}))
			i++
		}
	}
}

func TestRenderCompare_NotCompared(t *testing.T) {
	m := &memResults{recs: comparetest.NoCommonBins("AHU-1", cmpBefore.From, cmpAfter.From)}
	c := cmpRun(t, cmpSite("AHU-1"), m)
	// The outputs say so rather than print numbers: the hours carry no
	// drivers (no model) and share no dew-point bin (no bin check).
	_, rows := CompareTable(c, Display{})
	assert.Equal(t, "no model", rows[0][6])
	var b bytes.Buffer
	require.NoError(t, RenderCompare(&b, c, Display{}, time.UTC))
	assert.Contains(t, b.String(), "not compared")
}

func TestCompareTable(t *testing.T) {
	m := &memResults{}
	modelFixture(m, "AHU-1", 0.5)
	modelFixture(m, "AHU-2", 1)
	c := cmpRun(t, cmpSite("AHU-1", "AHU-2"), m)
	header, rows := CompareTable(c, Display{})
	require.Len(t, rows, 3, "two units and the site")
	for _, r := range rows {
		assert.Len(t, r, len(header))
	}
	// AHU-1: reheat halved in every hour: avoided +50 %, a saving with a
	// perfect fit; AHU-2 unchanged. The site: 14 days × 24 h × 1.5 kWh/t
	// × 10 t on average, half of AHU-1's avoided: +25 %.
	assert.Equal(t, "+50 %", rows[0][4])
	assert.Equal(t, "saving", rows[0][6])
	assert.Equal(t, "0.0 %", rows[1][4])
	assert.Equal(t, "no significant change", rows[1][6])
	assert.Equal(t, "+25 %", rows[2][4])
	assert.Contains(t, rows[0][7], "0.0 % / 0.0 % / 1.00")
}

// The page is one self-contained file: no script, nothing fetched, every
// configured name escaped, and each SVG well-formed XML.
func TestRenderCompare_SelfContainedAndEscaped(t *testing.T) {
	m := &memResults{}
	modelFixture(m, "AHU-1", 1)
	modelFixture(m, `<script>alert("x")</script>`, 0.5)
	site := cmpSite("AHU-1", `<script>alert("x")</script>`)
	site.Site = `Plant <b>&</b> "north"`
	c := cmpRun(t, site, m)
	for _, d := range []Display{{}, {IP: true}} {
		var b bytes.Buffer
		require.NoError(t, RenderCompare(&b, c, d, time.UTC))
		page := b.String()
		assert.NotContains(t, strings.ToLower(page), "<script", "no script element, and the unit name is escaped")
		assert.Contains(t, page, "&lt;script&gt;alert(")
		assert.NotContains(t, page, "<b>&</b>")
		assert.Contains(t, page, "<style>")
		for _, bad := range []string{"src=", "href=", "@import", "<link", "<iframe", "<object", "<img"} {
			assert.NotContains(t, strings.ToLower(page), bad)
		}
		// The only URL is the SVG namespace, which is a name, not a fetch;
		// url() only points into the page (#pattern).
		urls := regexp.MustCompile(`(?i)(https?:)?//[a-z0-9.-]+`).FindAllString(page, -1)
		for _, u := range urls {
			assert.Equal(t, "http://www.w3.org", u)
		}
		for _, u := range regexp.MustCompile(`url\(([^)]*)\)`).FindAllStringSubmatch(page, -1) {
			assert.True(t, strings.HasPrefix(u[1], "#"), u[0])
		}
		svgs := regexp.MustCompile(`(?s)<svg .*?</svg>`).FindAllString(page, -1)
		require.Len(t, svgs, 3, "the avoided-reheat chart and one fit chart per unit")
		for i, s := range svgs {
			dec := xml.NewDecoder(strings.NewReader(s))
			for {
				_, err := dec.Token()
				if errors.Is(err, io.EOF) {
					break
				}
				require.NoError(t, err, "svg %d", i)
			}
		}
		// The method and the caution are on the page.
		assert.Contains(t, page, "before period&#39;s hours per bin", "the bin check's method")
		assert.Contains(t, page, "Guideline 14")
		assert.Contains(t, page, "engineer of record")
		assert.Contains(t, page, "&#43;50 %", "html/template writes + as &#43;")
	}
}

func TestPeriodBetween(t *testing.T) {
	chi, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	p := PeriodBetween(time.Date(2026, 6, 1, 0, 0, 0, 0, chi), time.Date(2026, 6, 15, 0, 0, 0, 0, chi), chi)
	assert.Equal(t, "2026-06-01", p.DateFrom)
	assert.Equal(t, "2026-06-14", p.DateTo, "the last day is inclusive")
	assert.Equal(t, "1 Jun 2026 – 14 Jun 2026", p.Label)
	p = PeriodBetween(time.Date(2026, 6, 1, 11, 0, 0, 0, time.UTC), time.Date(2026, 6, 2, 11, 0, 0, 0, time.UTC), chi)
	assert.Equal(t, "span", p.Kind)
	assert.Contains(t, p.Label, "1 Jun 2026 06:00")
}
