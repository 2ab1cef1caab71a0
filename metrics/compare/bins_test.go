package compare

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/metrics/compare/comparetest"
)

// The records below are made by hand so that every expected figure follows
// from their construction; the arithmetic is worked in the comments.

var (
	cmpBefore = window(time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC), time.Date(2026, 6, 15, 0, 0, 0, 0, time.UTC))
	cmpAfter  = window(time.Date(2026, 7, 1, 0, 0, 0, 0, time.UTC), time.Date(2026, 7, 15, 0, 0, 0, 0, time.UTC))
)

func window(from, to time.Time) Window {
	return Window{From: from, To: to, Label: from.Format("2 Jan") + " – " + to.Format("2 Jan 2006")}
}

// memResults holds records made by hand.
type memResults struct{ recs []metrics.Record }

// rec is an hourly record with the fields in set (comparetest.Record).
var rec = comparetest.Record

// cmpSite is the input of a comparison of units.
type cmpInput struct{ in Input }

func cmpSite(units ...string) *cmpInput {
	c := &cmpInput{in: Input{Site: "Test site", Currency: "USD", Zone: time.UTC}}
	for _, u := range units {
		c.in.AirHandlers = append(c.in.AirHandlers, AirHandler{ID: u, Name: u})
	}
	return c
}

// run compares the records of m between before and after, giving each
// period its hours as a store would (every record of its window).
func run(site *cmpInput, m *memResults, before, after Window, opt Options) (*Comparison, error) {
	in := site.in
	in.Before, in.After, in.Options = before, after, opt
	a, err := New(in)
	if err != nil {
		return nil, err
	}
	for k, w := range []Window{before, after} {
		for i := range m.recs {
			r := m.recs[i]
			if !r.HourStart.Before(w.From) && r.HourStart.Before(w.To) {
				a.Add(Side(k), &r)
			}
		}
	}
	return a.Result()
}

// Entering dew points in the middle of 1 K bins.
const (
	dpDry   = comparetest.DewPointDryC   // bin [10, 11) °C
	dpMid   = 12.5                       // bin [12, 13)
	dpHumid = comparetest.DewPointHumidC // bin [16, 17)
	dpWet   = comparetest.DewPointWetC   // bin [20, 21)
	dpCool  = 5.5                        // bin [5, 6)
)

// cmpHours appends n consecutive hours of unit ahu from *at
// (comparetest.Hours).
func cmpHours(m *memResults, ahu string, at *time.Time, n int, dpC float64, set func(i int) map[string]float64) {
	m.recs = comparetest.Hours(m.recs, ahu, at, n, dpC, set)
}

var reheatOnly = comparetest.ReheatOnly

// alternating gives reheat lo, hi, lo, hi, ...: a bin mean of (lo+hi)/2
// with a known spread.
func alternating(lo, hi float64) func(int) map[string]float64 {
	return func(i int) map[string]float64 {
		if i%2 == 0 {
			return map[string]float64{"reheat_kwh": lo}
		}
		return map[string]float64{"reheat_kwh": hi}
	}
}

// mixFixture: the same behaviour in every bin, but a different mix of
// humid hours. Dry bin: reheat alternates 1 and 3 kWh (mean 2); humid bin:
// 9 and 11 (mean 10).
//
//	before: 30 dry + 10 humid hours: 30×2 + 10×10 = 160 kWh
//	after:  10 dry + 30 humid hours: 10×2 + 30×10 = 320 kWh (raw +100 %)
//	after normalised to the before mix: 30×2 + 10×10 = 160 kWh -> change 0
func mixFixture(m *memResults, ahu string) {
	at := cmpBefore.From
	cmpHours(m, ahu, &at, 30, dpDry, alternating(1, 3))
	cmpHours(m, ahu, &at, 10, dpHumid, alternating(9, 11))
	at = cmpAfter.From
	cmpHours(m, ahu, &at, 10, dpDry, alternating(1, 3))
	cmpHours(m, ahu, &at, 30, dpHumid, alternating(9, 11))
}

// halfFixture: reheat halved in every bin, with a different mix.
//
//	before: 20 h at 4 kWh (dry) + 20 h at 8 kWh (humid) = 240 kWh
//	after:  10 h at 2 kWh (dry) + 30 h at 4 kWh (humid) = 140 kWh (raw -41.7 %)
//	after normalised: 20×2 + 20×4 = 120 kWh -> -50 %
//
// Avoidable reheat is half the reheat (also -50 %). Each hour's reheat
// half-width is 10 % of its reheat: before 0.4 and 0.8, after 0.2 and 0.4.
func halfFixture(m *memResults, ahu string) {
	f := func(v float64) func(int) map[string]float64 {
		return func(int) map[string]float64 {
			return map[string]float64{"reheat_kwh": v, "reheat_avoidable_kwh": v / 2, "reheat_kwh_u95": v / 10}
		}
	}
	at := cmpBefore.From
	cmpHours(m, ahu, &at, 20, dpDry, f(4))
	cmpHours(m, ahu, &at, 20, dpHumid, f(8))
	at = cmpAfter.From
	cmpHours(m, ahu, &at, 10, dpDry, f(2))
	cmpHours(m, ahu, &at, 30, dpHumid, f(4))
}

func TestCompare_SameBehaviourDifferentWeather(t *testing.T) {
	m := &memResults{}
	mixFixture(m, "AHU-1")
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	require.Len(t, c.AirHandlers, 1)
	u := c.AirHandlers[0].Bins
	// Raw totals, by construction: 160 and 320 kWh.
	assert.InDelta(t, 160, float64(u.RawBefore.ReheatKWh), 1e-9)
	assert.InDelta(t, 320, float64(u.RawAfter.ReheatKWh), 1e-9)
	// Normalised: both 160 kWh, no change.
	require.True(t, u.Compared)
	assert.InDelta(t, 160, float64(u.Reheat.Before), 1e-9)
	assert.InDelta(t, 160, float64(u.Reheat.After), 1e-9)
	assert.InDelta(t, 0, float64(u.Reheat.Change), 1e-9)
	assert.InDelta(t, 0, float64(u.Reheat.ChangePct), 1e-9)
	assert.Equal(t, 2, u.CommonBins)
	assert.InDelta(t, 1, float64(u.HoursBefore.Covered), 1e-12)
	assert.InDelta(t, 1, float64(u.HoursAfter.Covered), 1e-12)
	assert.Empty(t, u.Warnings)

	// Sampling half-width of the change, by hand. In every bin the values
	// sit ±1 around the mean, so with n hours s² = n/(n-1) and the squared
	// standard error of the mean is s²/n = 1/(n-1):
	//   dry bin (weight 30):   before n=30 -> 1/29, after n=10 -> 1/9
	//   humid bin (weight 10): before n=10 -> 1/9,  after n=30 -> 1/29
	//   variance = 30²(1/29 + 1/9) + 10²(1/9 + 1/29) = 1000 (1/29 + 1/9) = 145.594
	//   u95 = 1.96 × sqrt(145.594) = 1.96 × 12.066 = 23.65 kWh
	// (1.96: the two-sided 95 % point of the normal distribution, from memory.)
	assert.InDelta(t, 23.65, float64(u.Reheat.SamplingU95), 0.02)
	// No hourly half-widths were given: no measurement ± is invented.
	assert.True(t, math.IsNaN(float64(u.Reheat.ChangeU95)))
}

func TestCompare_HalvedReheat(t *testing.T) {
	m := &memResults{}
	halfFixture(m, "AHU-1")
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	u := c.AirHandlers[0].Bins
	assert.InDelta(t, 240, float64(u.RawBefore.ReheatKWh), 1e-9)
	assert.InDelta(t, 140, float64(u.RawAfter.ReheatKWh), 1e-9)
	assert.InDelta(t, 240, float64(u.Reheat.Before), 1e-9)
	assert.InDelta(t, 120, float64(u.Reheat.After), 1e-9)
	assert.InDelta(t, -120, float64(u.Reheat.Change), 1e-9)
	assert.InDelta(t, -50, float64(u.Reheat.ChangePct), 1e-9)
	assert.InDelta(t, -50, float64(u.ReheatAvoid.ChangePct), 1e-9)
	// Measurement half-widths, normalised like the values:
	//   before: 20×0.4 + 20×0.8 = 24 kWh; after: 20×0.2 + 20×0.4 = 12 kWh
	//   change: sqrt(24² + 12²) = 26.83 kWh
	assert.InDelta(t, 24, float64(u.Reheat.BeforeU95), 1e-9)
	assert.InDelta(t, 12, float64(u.Reheat.AfterU95), 1e-9)
	assert.InDelta(t, 26.833, float64(u.Reheat.ChangeU95), 1e-3)
	// Every hour in a bin is equal: no sampling spread.
	assert.InDelta(t, 0, float64(u.Reheat.SamplingU95), 1e-9)
}

func TestCompare_SiteTotal(t *testing.T) {
	m := &memResults{}
	mixFixture(m, "AHU-1")
	halfFixture(m, "AHU-2")
	c, err := run(cmpSite("AHU-1", "AHU-2"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	// Site: before 160 + 240 = 400, after 160 + 120 = 280 -> -30 %; raw
	// 400 -> 320 + 140 = 460.
	assert.InDelta(t, 400, float64(c.Total.Bins.Reheat.Before), 1e-9)
	assert.InDelta(t, 280, float64(c.Total.Bins.Reheat.After), 1e-9)
	assert.InDelta(t, -30, float64(c.Total.Bins.Reheat.ChangePct), 1e-9)
	assert.InDelta(t, 400, float64(c.Total.Bins.RawBefore.ReheatKWh), 1e-9)
	assert.InDelta(t, 460, float64(c.Total.Bins.RawAfter.ReheatKWh), 1e-9)
	assert.Equal(t, 80, c.Total.Bins.HoursBefore.InCommon)
	// Only AHU-2 has hourly half-widths, so the site has none: a sum that
	// leaves a unit out would understate it.
	assert.True(t, math.IsNaN(float64(c.Total.Bins.Reheat.ChangeU95)))
}

// Bins missing from one period, or with too few hours in it, are left out
// and the hours in the bins used are reported.
//
//	before: dry 20 h × 1 kWh, mid 20 h × 3 kWh, wet 10 h × 100 kWh (50 h)
//	after:  dry 20 h × 1 kWh, mid 20 h × 1.5 kWh, wet 2 h × 100 kWh (under
//	        the 3-hour minimum), cool 6 h × 50 kWh (no before hours),
//	        plus one hour at 30 % coverage and one without a dew point,
//	        both with 1000 kWh (50 h stored, 48 usable)
//	common bins: dry and mid. before 20×1 + 20×3 = 80 kWh;
//	after normalised 20×1 + 20×1.5 = 50 kWh -> -37.5 %
//	covered: before 40/50 = 80 %, after 40/48 = 83.3 %
func TestCompare_MissingBins(t *testing.T) {
	m := &memResults{}
	at := cmpBefore.From
	cmpHours(m, "AHU-1", &at, 20, dpDry, reheatOnly(1))
	cmpHours(m, "AHU-1", &at, 20, dpMid, reheatOnly(3))
	cmpHours(m, "AHU-1", &at, 10, dpWet, reheatOnly(100))
	at = cmpAfter.From
	cmpHours(m, "AHU-1", &at, 20, dpDry, reheatOnly(1))
	cmpHours(m, "AHU-1", &at, 20, dpMid, reheatOnly(1.5))
	cmpHours(m, "AHU-1", &at, 2, dpWet, reheatOnly(100))
	cmpHours(m, "AHU-1", &at, 6, dpCool, reheatOnly(50))
	m.recs = append(m.recs,
		rec("AHU-1", at, map[string]float64{"coverage": 0.3, "entering_dewpoint_c": dpMid, "reheat_kwh": 1000}),
		rec("AHU-1", at.Add(time.Hour), map[string]float64{"coverage": 1, "reheat_kwh": 1000}))

	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	u := c.AirHandlers[0].Bins
	assert.Equal(t, 2, u.CommonBins)
	assert.Equal(t, SideHours{Stored: 50, Usable: 50, InCommon: 40, Covered: 0.8}, u.HoursBefore)
	assert.Equal(t, 50, u.HoursAfter.Stored)
	assert.Equal(t, 1, u.HoursAfter.LowCoverage)
	assert.Equal(t, 1, u.HoursAfter.NoDewPoint)
	assert.Equal(t, 48, u.HoursAfter.Usable)
	assert.Equal(t, 40, u.HoursAfter.InCommon)
	assert.InDelta(t, 40.0/48, float64(u.HoursAfter.Covered), 1e-12)
	assert.InDelta(t, 80, float64(u.Reheat.Before), 1e-9)
	assert.InDelta(t, 50, float64(u.Reheat.After), 1e-9)
	assert.InDelta(t, -37.5, float64(u.Reheat.ChangePct), 1e-9)
	// The raw after total keeps every hour: 20 + 30 + 200 + 300 + 2000.
	assert.InDelta(t, 2550, float64(u.RawAfter.ReheatKWh), 1e-9)

	// Bins in dew-point order: cool (after only), dry, mid, wet (2 h after).
	require.Len(t, u.Bins, 4)
	want := []struct {
		lo     float64
		hb, ha int
		common bool
	}{{5, 0, 6, false}, {10, 20, 20, true}, {12, 20, 20, true}, {20, 10, 2, false}}
	for i, w := range want {
		assert.InDelta(t, w.lo, float64(u.Bins[i].LoC), 1e-12, "bin %d", i)
		assert.InDelta(t, w.lo+1, float64(u.Bins[i].HiC), 1e-12, "bin %d", i)
		assert.Equal(t, w.hb, u.Bins[i].HoursBefore, "bin %d", i)
		assert.Equal(t, w.ha, u.Bins[i].HoursAfter, "bin %d", i)
		assert.Equal(t, w.common, u.Bins[i].Common, "bin %d", i)
	}
	assert.True(t, hasWarning(u.Warnings, "2 of the after period's 50 hours are left out"), u.Warnings)

	// With a 2-hour minimum the wet bin counts too: before 80 + 10×100 =
	// 1080; after 50 + 10×100 = 1050.
	c, err = run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{MinHours: 2})
	require.NoError(t, err)
	assert.InDelta(t, 1080, float64(c.AirHandlers[0].Bins.Reheat.Before), 1e-9)
	assert.InDelta(t, 1050, float64(c.AirHandlers[0].Bins.Reheat.After), 1e-9)
}

// Effective EER is the ratio of the normalised sums:
//
//	before, dry bin 10 h:   coil 20, reheat 5, cooling input 5, reheat input 5
//	        (hourly COP (20-5)/(5+5) = 1.5)
//	        humid bin 10 h: coil 40, reheat 0, cooling input 8, reheat input 0
//	        (hourly COP 40/8 = 5)
//	sums: coil 600, reheat 50, input 130 + 50: COP 550/180 = 3.0556,
//	      EER 3.412 × 3.0556 = 10.426 Btu/Wh (the mean of the hourly
//	      ratios would be 3.412 × 3.25 = 11.09)
//	after, dry bin 5 h: coil 20, reheat 2, cooling input 5, reheat input 2;
//	       humid bin 15 h as before
//	normalised with 10 h per bin: coil 600, reheat 20, input 130 + 20:
//	      COP 580/150 = 3.8667, EER 13.193 Btu/Wh
//
// 3.412 Btu/Wh per W/W: DOMAIN rule of thumb "EER = 3.412 × COP" (common
// practice, no source); the tolerance 0.05 % covers its rounding.
func TestCompare_EERIsRatioOfSums(t *testing.T) {
	m := &memResults{}
	f := func(coil, reheat, cooling, reheatIn float64) func(int) map[string]float64 {
		return func(int) map[string]float64 {
			return map[string]float64{"coil_total_kwh": coil, "reheat_kwh": reheat, "cooling_input_kwh": cooling, "reheat_input_kwh": reheatIn,
				"effective_eer": 3.412 * (coil - reheat) / (cooling + reheatIn)}
		}
	}
	at := cmpBefore.From
	cmpHours(m, "AHU-1", &at, 10, dpDry, f(20, 5, 5, 5))
	cmpHours(m, "AHU-1", &at, 10, dpHumid, f(40, 0, 8, 0))
	at = cmpAfter.From
	cmpHours(m, "AHU-1", &at, 5, dpDry, f(20, 2, 5, 2))
	cmpHours(m, "AHU-1", &at, 15, dpHumid, f(40, 0, 8, 0))
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	e := c.AirHandlers[0].Bins.EER
	assert.InEpsilon(t, 3.412*550/180, float64(e.Before), 5e-4)
	assert.InEpsilon(t, 3.412*580/150, float64(e.After), 5e-4)
	assert.Greater(t, math.Abs(float64(e.Before)-11.09), 0.5, "not the mean of the hourly ratios")
	assert.InEpsilon(t, 100*(580.0/150-550.0/180)/(550.0/180), float64(e.ChangePct), 5e-4)
	// The raw totals' EER is of the raw sums: after coil 700, reheat 10,
	// input 145 + 10: 3.412 × 690/155 = 15.19.
	assert.InEpsilon(t, 3.412*690/155, float64(c.AirHandlers[0].Bins.RawAfter.EffectiveEER), 5e-4)
}

// TestCompare_EERLeavesOutHoursWithoutCoolingInput: the after period
// behaves as the before one (TestCompare_EERIsRatioOfSums' before hours),
// but in 5 of its 10 humid hours the cooling meter read nothing (no
// cooling input) while the coil carried 60 kWh instead of 40. The EERs,
// normalised and raw, are over the hours with a cooling input, so the
// coil of the others is out of their numerator as their input is out of
// the denominator:
//
//	normalised, both periods: coil 10×20 + 10×40 = 600, reheat 50,
//	  input 130 + 50: 3.412 × 550/180 = 10.43 (with the 60s: 650/180, 12.32)
//	raw after, hours with an input: coil 200 + 5×40, reheat 50, input
//	  (50 + 5×8) + 50: 3.412 × 350/140 = 8.53 (with the 60s: 650/140, 15.84)
func TestCompare_EERLeavesOutHoursWithoutCoolingInput(t *testing.T) {
	m := &memResults{}
	f := func(coil, reheat, cooling, reheatIn float64) func(int) map[string]float64 {
		return func(int) map[string]float64 {
			h := map[string]float64{"coil_total_kwh": coil, "reheat_kwh": reheat, "reheat_input_kwh": reheatIn}
			if !math.IsNaN(cooling) {
				h["cooling_input_kwh"] = cooling
				h["effective_eer"] = 3.412 * (coil - reheat) / (cooling + reheatIn)
			}
			return h
		}
	}
	at := cmpBefore.From
	cmpHours(m, "AHU-1", &at, 10, dpDry, f(20, 5, 5, 5))
	cmpHours(m, "AHU-1", &at, 10, dpHumid, f(40, 0, 8, 0))
	at = cmpAfter.From
	cmpHours(m, "AHU-1", &at, 10, dpDry, f(20, 5, 5, 5))
	cmpHours(m, "AHU-1", &at, 5, dpHumid, f(40, 0, 8, 0))
	cmpHours(m, "AHU-1", &at, 5, dpHumid, f(60, 0, math.NaN(), 0))
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	for name, b := range map[string]BinCheck{"AHU-1": c.AirHandlers[0].Bins, "site": c.Total.Bins} {
		assert.InEpsilon(t, 3.412*550/180, float64(b.EER.Before), 5e-4, name)
		assert.InEpsilon(t, 3.412*550/180, float64(b.EER.After), 5e-4, name)
		assert.InDelta(t, 0, float64(b.EER.ChangePct), 1e-9, name)
		assert.InEpsilon(t, 3.412*350/140, float64(b.RawAfter.EffectiveEER), 5e-4, name)
		assert.Equal(t, 5, b.RawAfter.NoCoolingInput, name)
		assert.Equal(t, 0, b.RawBefore.NoCoolingInput, name)
	}
	assert.True(t, hasWarning(c.AirHandlers[0].Bins.Warnings, "5 of the after period's 20 hours have no cooling input"), c.AirHandlers[0].Bins.Warnings)
}

func TestCompare_NoCommonBins(t *testing.T) {
	m := &memResults{recs: comparetest.NoCommonBins("AHU-1", cmpBefore.From, cmpAfter.From)}
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err, "a comparison that cannot be normalised is reported, not refused")
	u := c.AirHandlers[0].Bins
	assert.False(t, u.Compared)
	assert.True(t, math.IsNaN(float64(u.Reheat.After)))
	assert.InDelta(t, 0, float64(u.HoursBefore.Covered), 1e-12)
	assert.True(t, hasWarning(u.Warnings, "do not overlap enough"), u.Warnings)
	assert.True(t, hasWarning(c.Warnings, "nothing to normalise"), c.Warnings)
	assert.False(t, c.Total.Bins.Compared)
}

func TestCompare_Errors(t *testing.T) {
	m := &memResults{}
	halfFixture(m, "AHU-1")
	site := cmpSite("AHU-1")
	day := func(d int) time.Time { return time.Date(2026, 6, d, 0, 0, 0, 0, time.UTC) }

	_, err := run(site, m, cmpBefore, window(day(10), day(20)), Options{})
	require.ErrorIs(t, err, ErrPeriodsOverlap)
	assert.Contains(t, err.Error(), "do not share any hour")
	// Touching periods do not overlap: [1, 15) and [15, 20).
	_, err = run(site, m, cmpBefore, window(day(15), day(20)), Options{})
	require.ErrorIs(t, err, ErrNoHours, "no overlap, but nothing stored in June 15-19")
	assert.Contains(t, err.Error(), "after period")
	assert.Contains(t, err.Error(), "dewline analyze")

	_, err = run(site, m, window(day(10), day(5)), cmpAfter, Options{})
	require.Error(t, err)
	assert.Contains(t, err.Error(), "is empty or ends before it starts")
	_, err = run(site, m, cmpBefore, cmpAfter, Options{MinHours: 1})
	require.Error(t, err)
	assert.Contains(t, err.Error(), "use 2 or more")
	_, err = run(site, m, cmpBefore, cmpAfter, Options{AirHandlers: []string{"AHU-9"}})
	require.Error(t, err)
	assert.Contains(t, err.Error(), `"AHU-9"`)

	// Stored hours without entering dew points cannot be binned.
	m2 := &memResults{}
	for h := 0; h < 5; h++ {
		m2.recs = append(m2.recs, rec("AHU-1", cmpBefore.From.Add(time.Duration(h)*time.Hour), map[string]float64{"coverage": 1, "reheat_kwh": 1}))
		m2.recs = append(m2.recs, rec("AHU-1", cmpAfter.From.Add(time.Duration(h)*time.Hour), map[string]float64{"coverage": 1, "reheat_kwh": 1}))
	}
	_, err = run(site, m2, cmpBefore, cmpAfter, Options{})
	require.ErrorIs(t, err, ErrNoHours)
	assert.Contains(t, err.Error(), "entering dew point")
}

func TestCompare_JSON(t *testing.T) {
	m := &memResults{recs: comparetest.NoCommonBins("AHU-1", cmpBefore.From, cmpAfter.From)}
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	b, err := json.Marshal(c)
	require.NoError(t, err, "missing figures are encoded as null, not refused")
	var back map[string]any
	require.NoError(t, json.Unmarshal(b, &back))
	units := back["units"].([]any)
	u := units[0].(map[string]any)["bin_check"].(map[string]any)
	assert.Nil(t, u["reheat_kwh"].(map[string]any)["after_normalised"])
	assert.Equal(t, false, u["compared"])
	assert.Contains(t, back["bin_method"], "before period's hours per bin")
	assert.Equal(t, []any{}, back["total"].(map[string]any)["bin_check"].(map[string]any)["warnings"], "an empty list, not null")
}

func hasWarning(list []string, sub string) bool {
	for _, w := range list {
		if strings.Contains(w, sub) {
			return true
		}
	}
	return false
}

// Before: 20 dry and 30 humid hours; after: 20 dry and 2 humid hours
// (under the 3-hour minimum). Only the dry bin is used: 20 of the before
// period's 50 hours (40 %) and 20 of the after period's 22 (91 %).
func TestCompare_PartlyCoveredWarns(t *testing.T) {
	m := &memResults{}
	at := cmpBefore.From
	cmpHours(m, "AHU-1", &at, 20, dpDry, reheatOnly(1))
	cmpHours(m, "AHU-1", &at, 30, dpHumid, reheatOnly(5))
	at = cmpAfter.From
	cmpHours(m, "AHU-1", &at, 20, dpDry, reheatOnly(1))
	cmpHours(m, "AHU-1", &at, 2, dpHumid, reheatOnly(5))
	// Given in the other order, the periods are still compared as named.
	c, err := run(cmpSite("AHU-1"), m, cmpAfter, cmpBefore, Options{})
	require.NoError(t, err)
	u := c.AirHandlers[0].Bins
	assert.InDelta(t, 20.0/22, float64(u.HoursBefore.Covered), 1e-12)
	assert.InDelta(t, 0.4, float64(u.HoursAfter.Covered), 1e-12)
	assert.True(t, hasWarning(u.Warnings, "only 40 % of the after period's usable hours fall in bins common to both periods"), u.Warnings)
	assert.True(t, hasWarning(c.Warnings, "the after period comes before the before period"), c.Warnings)
}
