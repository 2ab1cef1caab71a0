package compare

import (
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// linearHours adds hours of unit ahu over w whose figures the model form
// follows exactly (each in proportion to the dry air: reheat 1.5, cooling
// input 2 kWh and water 0.5 kg per tonne). dp(i) and the supply dew point
// come from the callers; factor scales every figure (the change).
func linearHours(m *memResults, ahu string, w Window, factor float64, dp func(i int) float64, supplyDP func(i int) float64) {
	i := 0
	for at := w.From; at.Before(w.To); at = at.Add(time.Hour) {
		tons := 10 + 2*math.Sin(float64(i)/5)
		m.recs = append(m.recs, rec(ahu, at, map[string]float64{
			"coverage": 1, "entering_dewpoint_c": dp(i), "entering_temp_c": 24 + math.Sin(float64(i)/7), "dry_air_kg": 1000 * tons,
			"leaving_dewpoint_c": supplyDP(i), "reheat_kwh": factor * 1.5 * tons, "cooling_input_kwh": factor * 2 * tons,
			"water_removed_kg": factor * 0.5 * tons, "cost": factor * 0.15 * 3.5 * tons,
		}))
		i++
	}
}

func sineDP(i int) float64 { return 12 + 4*math.Sin(float64(i)/17) }
func constDP(v float64) func(int) float64 {
	return func(int) float64 { return v }
}

func modelSite(target float64) *cmpInput {
	c := cmpSite("AHU-1")
	c.in.AirHandlers[0].Spec = &metrics.AirHandler{Target: metrics.Target{Kind: metrics.TargetSupplyDewPoint, DewPointC: target}}
	return c
}

// A saving made by letting the supply get wetter than the target is not
// a win: two in five after hours have a supply dew point of 14 °C against
// a 12 °C target (none before): of 336 hours, i % 5 < 2 holds for
// 67 × 2 + 1 = 135.
func TestModel_SavingThatBrokeTheTarget(t *testing.T) {
	m := &memResults{}
	linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
	linearHours(m, "AHU-1", cmpAfter, 0.6, sineDP, func(i int) float64 {
		if i%5 < 2 {
			return 14
		}
		return 11
	})
	c, err := run(modelSite(12), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	u := c.AirHandlers[0]
	r := u.Model.Reheat()
	assert.InDelta(t, 40, float64(r.AvoidedPct), 1e-6, "every hour at 0.6 of the model")
	assert.Equal(t, FindingTargetLost, u.Finding)
	assert.Equal(t, "not held", u.Humidity.Held)
	assert.InDelta(t, 0, float64(u.Humidity.AboveBefore), 1e-12)
	assert.InDelta(t, 135.0/336, float64(u.Humidity.AboveAfter), 1e-12)
	assert.InDelta(t, 11, float64(u.Humidity.MeanBefore), 1e-12)
	assert.InDelta(t, (135*14+201*11)/336.0, float64(u.Humidity.MeanAfter), 1e-12)
	assert.True(t, hasWarning(c.Warnings, "the humidity target was not held"), c.Warnings)
}

// The same saving with the target held is a saving; an unchanged unit is
// no significant change; the site adds the units.
func TestModel_FindingsAndSite(t *testing.T) {
	m := &memResults{}
	linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
	linearHours(m, "AHU-1", cmpAfter, 0.6, sineDP, constDP(11))
	linearHours(m, "AHU-2", cmpBefore, 1, sineDP, constDP(11))
	linearHours(m, "AHU-2", cmpAfter, 1, sineDP, constDP(11))
	c, err := run(cmpSite("AHU-1", "AHU-2"), m, cmpBefore, cmpAfter, Options{NormaliseTo: "before"})
	require.NoError(t, err)
	assert.Equal(t, FindingSaving, c.AirHandlers[0].Finding)
	assert.Equal(t, FindingNoChange, c.AirHandlers[1].Finding)
	assert.Equal(t, "unknown", c.AirHandlers[0].Humidity.Held, "no target configured")
	// Site: baseline = both units' projections; avoided = AHU-1's 40 %
	// of its own, so 20 % of the site's.
	s := c.Total.Reheat()
	assert.InDelta(t, 20, float64(s.AvoidedPct), 1e-6)
	// Normalised to the before period: the after model is 0.6 of the
	// baseline everywhere, so 40 % again, over the before period's hours.
	n := c.AirHandlers[0].Model.Reheat().Normalised
	require.NotNil(t, n)
	assert.Equal(t, "before", n.To)
	assert.Equal(t, 14*24, n.Hours)
	assert.InDelta(t, 40, float64(n.AvoidedPct), 1e-6)
	// A perfect fit meets Guideline 14.
	f := c.AirHandlers[0].Model.Reheat().Fit
	assert.True(t, f.MeetsG14)
	assert.Equal(t, 14*24, f.N)
}

// After hours drier than any before hour are flagged by driver.
func TestModel_Extrapolation(t *testing.T) {
	m := &memResults{}
	linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
	// After: a quarter of the hours at 5 °C, below the before range 8..16.
	linearHours(m, "AHU-1", cmpAfter, 1, func(i int) float64 {
		if i%4 == 0 {
			return 5
		}
		return sineDP(i)
	}, constDP(11))
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	ex := c.AirHandlers[0].Model.Extrapolation
	require.Len(t, ex, 3)
	assert.Equal(t, "entering_dewpoint_c", ex[0].Driver)
	assert.InDelta(t, 0.25, float64(ex[0].Share), 1e-12)
	assert.True(t, ex[0].Warn)
	assert.InDelta(t, 0, float64(ex[1].Share), 1e-12, "entering temperature within range")
	assert.True(t, hasWarning(c.Warnings, "25 % of the after period's hours have an entering dew point outside"), c.Warnings)
}

func TestModel_Options(t *testing.T) {
	_, err := run(cmpSite("AHU-1"), &memResults{}, cmpBefore, cmpAfter, Options{NormaliseTo: "summer"})
	require.Error(t, err)
	assert.Contains(t, err.Error(), `normalise to "summer": use before, after or period`)
}

// Hours whose sensors read flat (a stuck RH sensor) are left out of the
// model: their figures are the sensor's, not the unit's. Here every
// fourth after hour has a stuck sensor and reads half the reheat.
func TestModel_SuspectHoursLeftOut(t *testing.T) {
	m := &memResults{}
	linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
	linearHours(m, "AHU-1", cmpAfter, 1, sineDP, constDP(11))
	stuck := 0
	for i := range m.recs {
		r := &m.recs[i]
		if !r.HourStart.Before(cmpAfter.From) && r.HourStart.Hour()%4 == 0 {
			r.Flags = []string{metrics.FlagFlat + "entering_rh"}
			r.ReheatKWh /= 2
			stuck++
		}
	}
	c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
	require.NoError(t, err)
	u := c.AirHandlers[0]
	assert.Equal(t, [2]int{0, stuck}, u.Model.Suspect)
	assert.Equal(t, 14*24-stuck, u.Model.Usable[1])
	assert.InDelta(t, 0, float64(u.Model.Reheat().AvoidedPct), 1e-6, "the stuck hours do not read as a saving")
	assert.Equal(t, FindingNoChange, u.Finding)
	assert.True(t, hasWarning(u.Warnings, "84 of the after period's hours are left out of the baseline model"), u.Warnings)
}

// withOutdoor gives the records of m from..to an outdoor dew point and
// temperature on every hour where keep(i) holds (i counts the hours).
func withOutdoor(m *memResults, from, to time.Time, keep func(i int) bool) {
	i := 0
	for k := range m.recs {
		r := &m.recs[k]
		if r.HourStart.Before(from) || !r.HourStart.Before(to) {
			continue
		}
		if keep(i) {
			r.OutdoorDewPointC, r.OutdoorTempC = r.EnteringDewPointC+3, 30+math.Cos(float64(i)/9)
		}
		i++
	}
}

// The drivers are the outdoor conditions when the hourly records carry
// them (90 % of each period's hours or more; the hours without are left
// out and counted), else the entering air's, said in a warning.
func TestModel_Drivers(t *testing.T) {
	every := func(int) bool { return true }
	tests := []struct {
		name                   string
		before, after          func(i int) bool // hours with outdoor conditions; nil: none
		want                   string
		wantUsable             [2]int
		wantWarning, wantNoWrn string
	}{
		{"no outdoor roles", nil, nil, DriversEntering, [2]int{336, 336}, "map outdoor_temp and outdoor_rh", "lack the outdoor"},
		{"outdoor throughout", every, every, DriversOutdoor, [2]int{336, 336}, "", "the baseline's drivers are the entering air"},
		{"outdoor missing one after hour in 20", every, func(i int) bool { return i%20 != 0 }, DriversOutdoor, [2]int{336, 319},
			"17 of the after period's hours lack the outdoor temperature or dew point", "the baseline's drivers are the entering air"},
		{"outdoor on half the before hours", func(i int) bool { return i%2 == 0 }, every, DriversEntering, [2]int{336, 336}, "map outdoor_temp and outdoor_rh", "lack the outdoor"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			m := &memResults{}
			linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
			linearHours(m, "AHU-1", cmpAfter, 0.6, sineDP, constDP(11))
			if tc.before != nil {
				withOutdoor(m, cmpBefore.From, cmpBefore.To, tc.before)
				withOutdoor(m, cmpAfter.From, cmpAfter.To, tc.after)
			}
			c, err := run(cmpSite("AHU-1"), m, cmpBefore, cmpAfter, Options{})
			require.NoError(t, err)
			md := c.AirHandlers[0].Model
			assert.Equal(t, tc.want, md.Drivers)
			assert.NotEmpty(t, md.DriversWhy)
			assert.Equal(t, tc.wantUsable, md.Usable)
			assert.Equal(t, tc.want+"_dewpoint_c", md.Extrapolation[0].Driver)
			assert.InDelta(t, 40, float64(md.Reheat().AvoidedPct), 1e-6, "every hour at 0.6 of the model, whatever the drivers")
			if tc.wantWarning != "" {
				assert.True(t, hasWarning(c.AirHandlers[0].Warnings, tc.wantWarning), c.AirHandlers[0].Warnings)
			}
			assert.False(t, hasWarning(c.AirHandlers[0].Warnings, tc.wantNoWrn), c.AirHandlers[0].Warnings)
			if tc.want == DriversOutdoor {
				h := md.Hours[1]
				assert.InDelta(t, sineDP(1)+3, float64(h.DewPointC), 1e-12, "the hour's driver is its outdoor dew point")
				assert.InDelta(t, sineDP(1), float64(h.EnteringDewPointC), 1e-12, "the entering dew point beside it")
			}
		})
	}
}

// Normalised to a third period: both models projected onto its hours.
// The after model is 0.6 of the baseline everywhere, so 40 % again, over
// the third period's 7 days of hours (with drivers drier than either
// period's, so the projection is not the before period's over again).
func TestModel_NormaliseToPeriod(t *testing.T) {
	third := window(time.Date(2026, 8, 1, 0, 0, 0, 0, time.UTC), time.Date(2026, 8, 8, 0, 0, 0, 0, time.UTC))
	m := &memResults{}
	linearHours(m, "AHU-1", cmpBefore, 1, sineDP, constDP(11))
	linearHours(m, "AHU-1", cmpAfter, 0.6, sineDP, constDP(11))
	// The third period's figures do not count, only its drivers and
	// airflow: its reheat is set to NaN (not measured).
	linearHours(m, "AHU-1", third, 5, func(i int) float64 { return 9 + math.Sin(float64(i)/11) }, constDP(11))
	in := cmpSite("AHU-1").in
	in.Before, in.After, in.Normal, in.Options = cmpBefore, cmpAfter, third, Options{NormaliseTo: "period"}
	a, err := New(in)
	require.NoError(t, err)
	for i := range m.recs {
		r := m.recs[i]
		for _, s := range []Side{Before, After, Normal} {
			if s == Normal {
				r.ReheatKWh = math.NaN()
			}
			a.Add(s, &r)
		}
	}
	c, err := a.Result()
	require.NoError(t, err)
	require.NotNil(t, c.NormalPeriod)
	assert.Equal(t, third, *c.NormalPeriod)
	assert.Equal(t, "period", c.Normalise)
	r := c.AirHandlers[0].Model.Reheat()
	assert.InDelta(t, 40, float64(r.AvoidedPct), 1e-6, "the after period: only before and after hours count")
	n := r.Normalised
	require.NotNil(t, n)
	assert.Equal(t, "period", n.To)
	require.NotNil(t, n.Period)
	assert.Equal(t, third.Label, n.Period.Label)
	assert.Equal(t, 7*24, n.Hours)
	assert.InDelta(t, 40, float64(n.AvoidedPct), 1e-6)
	// The baseline over the third period: 1.5 kWh per tonne of its air.
	var tons float64
	for i := 0; i < 7*24; i++ {
		tons += 10 + 2*math.Sin(float64(i)/5)
	}
	assert.InDelta(t, 1.5*tons, float64(n.Baseline), 1e-6*1.5*tons)

	in.Normal = Window{}
	_, err = New(in)
	require.Error(t, err, "a third period is needed")
}
