package dashboards

import (
	"encoding/json"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

var chicago = func() *time.Location {
	z, err := time.LoadLocation("America/Chicago")
	if err != nil {
		panic(err)
	}
	return z
}()

func TestResolvePeriod(t *testing.T) {
	// 2026-11-01 is the day US daylight saving time ends: 25 hours long.
	latest := time.Date(2026, 11, 1, 23, 0, 0, 0, chicago)
	p, err := ResolvePeriod("day", "", "", chicago, latest)
	require.NoError(t, err)
	assert.Equal(t, 25.0, p.Hours())
	assert.Equal(t, "2026-11-01", p.DateFrom)
	assert.Equal(t, "2026-11-01", p.DateTo)

	p, err = ResolvePeriod("week", "", "", chicago, latest)
	require.NoError(t, err)
	assert.Equal(t, time.Date(2026, 10, 26, 0, 0, 0, 0, chicago), p.From)
	assert.Equal(t, 7, p.Days())
	assert.Equal(t, 7*24+1.0, p.Hours())

	p, err = ResolvePeriod("month", "", "", chicago, latest)
	require.NoError(t, err)
	assert.Equal(t, 30, p.Days())

	p, err = ResolvePeriod("custom", "2026-10-30", "2026-11-02", chicago, latest)
	require.NoError(t, err)
	assert.Equal(t, 4, p.Days())
	assert.Equal(t, time.Date(2026, 11, 3, 0, 0, 0, 0, chicago), p.To)

	for _, bad := range [][3]string{{"year", "", ""}, {"custom", "2026-13-01", "2026-12-01"}, {"custom", "2026-11-02", "2026-11-01"}, {"custom", "2020-01-01", "2026-01-01"}} {
		_, err := ResolvePeriod(bad[0], bad[1], bad[2], chicago, latest)
		assert.Error(t, err, bad)
	}
}

func TestFormat(t *testing.T) {
	assert.Equal(t, "1,234,567.89", fmtFixed(1234567.891, 2))
	assert.Equal(t, "-1,234", fmtFixed(-1234.4, 0))
	assert.Equal(t, "0.0", fmtFixed(-0.04, 1))
	assert.Equal(t, "–", fmtFixed(math.NaN(), 1))
	assert.Equal(t, "999", fmtQty(999.4))
	assert.Equal(t, "99.9", fmtQty(99.94))
	assert.Equal(t, "87 %", fmtPct(0.8712))
	assert.Equal(t, "2 d 3 h", fmtDuration(51*time.Hour))
}

// Two units over two days, sums worked by hand.
func fixture() (*Site, *memResults) {
	site := &Site{Name: "Test site", Zone: chicago, IP: true, Currency: "USD", PressurePa: 101325,
		AirHandlers: []AirHandler{{ID: "AHU-1", Name: "North wing", Spec: &metrics.AirHandler{Reheat: metrics.ReheatElectric}},
			{ID: "AHU-2", Name: `<script>alert("x")</script>`, Spec: &metrics.AirHandler{Reheat: metrics.ReheatHotWater}}}}
	day1 := time.Date(2026, 7, 6, 0, 0, 0, 0, chicago)
	m := &memResults{}
	for h := 0; h < 48; h++ {
		at := day1.Add(time.Duration(h) * time.Hour).UTC()
		// AHU-1: 10 kWh reheat an hour, 4 of it avoidable, 0.50 USD avoidable.
		m.recs = append(m.recs, rec("AHU-1", at, map[string]float64{"coverage": 1, "reheat_kwh": 10, "reheat_avoidable_kwh": 4,
			"reheat_needed_kwh": 6, "cost_avoidable": 0.5, "cost": 2, "coil_total_kwh": 30, "cooling_input_kwh": 8, "reheat_input_kwh": 10,
			"water_removed_kg": 5, "water_removed_kg_u95": 0.5}))
		// AHU-2: 1.25 USD avoidable an hour on day 2 only; coverage 0.5.
		cost := 0.0
		if h >= 24 {
			cost = 1.25
		}
		m.recs = append(m.recs, rec("AHU-2", at, map[string]float64{"coverage": 0.5, "reheat_kwh": 2, "reheat_avoidable_kwh": 1,
			"cost_avoidable": cost, "coil_total_kwh": 20, "cooling_input_kwh": 5, "reheat_input_kwh": 0}))
	}
	m.alerts = []Alert{
		{ID: "a1", AHU: "AHU-2", Kind: "reheat_not_needed", Severity: "high", State: "open", Start: day1.Add(30 * time.Hour), EnergyKWh: 12, Money: 3.5, Reason: `reheat <b>while</b> dry`},
		{ID: "a2", AHU: "AHU-1", Kind: "data_gap", Severity: "low", State: "closed", Start: day1.Add(2 * time.Hour), End: day1.Add(5 * time.Hour), EnergyKWh: math.NaN(), Money: math.NaN()},
	}
	return site, m
}

func TestBuildOverview_RanksAndSums(t *testing.T) {
	site, m := fixture()
	p, err := ResolvePeriod("custom", "2026-07-06", "2026-07-07", chicago, time.Now())
	require.NoError(t, err)
	ov, err := BuildOverview(t.Context(), site, m, p)
	require.NoError(t, err)
	require.Len(t, ov.AirHandlers, 2)
	// AHU-2: 24 h × 1.25 = 30 USD; AHU-1: 48 h × 0.5 = 24 USD.
	assert.Equal(t, "AHU-2", ov.AirHandlers[0].ID)
	assert.InDelta(t, 30, float64(ov.AirHandlers[0].Totals.CostAvoidable), 1e-9)
	assert.InDelta(t, 24, float64(ov.AirHandlers[1].Totals.CostAvoidable), 1e-9)
	assert.Equal(t, []Num{0, 30}, ov.AirHandlers[0].Daily)
	assert.Equal(t, []Num{12, 12}, ov.AirHandlers[1].Daily)
	assert.Equal(t, 1, ov.AirHandlers[0].OpenAlerts)
	assert.InDelta(t, 0.5, float64(ov.AirHandlers[0].Totals.Coverage), 1e-12)
	// AHU-1: 48 × 5 = 240 kg ± 48 × 0.5 = 24 kg (linear: fully correlated).
	assert.InDelta(t, 240, float64(ov.AirHandlers[1].Totals.WaterKg), 1e-9)
	assert.InDelta(t, 24, float64(ov.AirHandlers[1].Totals.WaterKgU95), 1e-9)
	// Effective EER of the sums, AHU-1: (30 − 10) / (8 + 10) kW/kW × 3.412 Btu/Wh per W/W.
	assert.InDelta(t, 20.0/18*3.412142, float64(ov.AirHandlers[1].Totals.EffectiveEER), 1e-5)
	// Site: 54 USD; reheat 48 × 12 = 576 kWh, avoidable 48 × 5 = 240.
	assert.InDelta(t, 54, float64(ov.Total.CostAvoidable), 1e-9)
	assert.InDelta(t, 240.0/576, float64(ov.Total.AvoidableShare), 1e-12)
	assert.True(t, math.IsNaN(float64(ov.AirHandlers[0].Totals.WaterKg)), "no hour had water: unknown, not zero")
}

func newTestHandler(t *testing.T, site *Site, m Results) http.Handler {
	t.Helper()
	h, err := New(Options{Site: site, Results: m, Now: func() time.Time { return time.Date(2026, 7, 8, 12, 0, 0, 0, chicago) }, Log: zerolog.New(zerolog.NewTestWriter(t))})
	require.NoError(t, err)
	return h
}

func get(t *testing.T, h http.Handler, target string) (int, string) {
	t.Helper()
	rr := httptest.NewRecorder()
	h.ServeHTTP(rr, httptest.NewRequest(http.MethodGet, target, nil))
	body, _ := io.ReadAll(rr.Body)
	return rr.Code, string(body)
}

func TestHandler_PagesEscapeNames(t *testing.T) {
	site, m := fixture()
	h := newTestHandler(t, site, m)
	for _, path := range []string{"/", "/?units=si&period=month", "/units/AHU-2", "/units/AHU-2/chart", "/alerts", "/alerts?unit=AHU-2&state=open"} {
		code, body := get(t, h, path)
		require.Equal(t, http.StatusOK, code, path)
		assert.NotContains(t, body, `<script>`, path)
		assert.NotContains(t, body, `<b>while</b>`, path)
		if strings.Contains(path, "AHU-2") || path == "/" {
			assert.Contains(t, body, `&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt;`, path)
		}
	}
}

func TestHandler_Errors(t *testing.T) {
	site, m := fixture()
	h := newTestHandler(t, site, m)
	code, body := get(t, h, "/units/%3Cimg%20src=x%3E")
	assert.Equal(t, http.StatusNotFound, code)
	assert.Contains(t, body, "&lt;img src=x&gt;")
	code, body = get(t, h, "/api/v1/overview?period=fortnight")
	assert.Equal(t, http.StatusBadRequest, code)
	assert.Contains(t, body, "use day, week, month or custom")
	code, _ = get(t, h, "/api/v1/alerts?state=maybe")
	assert.Equal(t, http.StatusBadRequest, code)
	code, _ = get(t, h, "/?units=metric")
	assert.Equal(t, http.StatusBadRequest, code)

	down := newTestHandler(t, site, &memResults{err: errStoreDown})
	code, body = get(t, down, "/")
	assert.Equal(t, http.StatusServiceUnavailable, code)
	assert.Contains(t, body, "connection refused")
	assert.Contains(t, body, "check that the store is up")
	code, body = get(t, down, "/api/v1/overview")
	assert.Equal(t, http.StatusServiceUnavailable, code)
	assert.True(t, json.Valid([]byte(body)))
}

func TestHandler_API(t *testing.T) {
	site, m := fixture()
	h := newTestHandler(t, site, m)
	code, body := get(t, h, "/api/v1/overview?period=custom&from=2026-07-06&to=2026-07-07")
	require.Equal(t, http.StatusOK, code)
	var ov struct {
		Units []struct {
			ID     string
			Totals map[string]*float64
		}
	}
	require.NoError(t, json.Unmarshal([]byte(body), &ov))
	require.Len(t, ov.Units, 2)
	assert.Equal(t, 30.0, *ov.Units[0].Totals["cost_avoidable"])
	assert.Nil(t, ov.Units[0].Totals["water_removed_kg"], "unknown is null in JSON")

	code, body = get(t, h, "/api/v1/units/AHU-1/hours?period=custom&from=2026-07-06&to=2026-07-06&units=ip")
	require.Equal(t, http.StatusOK, code)
	var uh struct {
		Hours []time.Time
		Water []float64 `json:"water_removed"`
		Units string
	}
	require.NoError(t, json.Unmarshal([]byte(body), &uh))
	assert.Len(t, uh.Hours, 24)
	assert.Equal(t, "ip", uh.Units)
	assert.InDelta(t, 5/0.45359237, uh.Water[0], 1e-4) // 1 lb = 0.45359237 kg exactly (NIST SP 811)

	code, body = get(t, h, "/api/v1/alerts?kind=reheat_not_needed&period=custom&from=2026-07-06&to=2026-07-07")
	require.Equal(t, http.StatusOK, code)
	assert.Contains(t, body, `"money":3.5`)
	// Open since hour 30 of the two days stored: 18 h to the end of the
	// last stored hour, though the clock reads a day later.
	assert.Contains(t, body, `"duration_h":18`)
	assert.NotContains(t, body, "data_gap")
	assert.Contains(t, body, `\u003cb\u003e`, "JSON escapes HTML")

	code, body = get(t, h, "/api/v1/site")
	require.Equal(t, http.StatusOK, code)
	assert.Contains(t, body, `"timezone":"America/Chicago"`)
}
