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
	c.in.Units[0].Spec = &metrics.Unit{Target: metrics.Target{Kind: metrics.TargetSupplyDewPoint, DewPointC: target}}
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
	u := c.Units[0]
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
	assert.Equal(t, FindingSaving, c.Units[0].Finding)
	assert.Equal(t, FindingNoChange, c.Units[1].Finding)
	assert.Equal(t, "unknown", c.Units[0].Humidity.Held, "no target configured")
	// Site: baseline = both units' projections; avoided = AHU-1's 40 %
	// of its own, so 20 % of the site's.
	s := c.Total.Reheat()
	assert.InDelta(t, 20, float64(s.AvoidedPct), 1e-6)
	// Normalised to the before period: the after model is 0.6 of the
	// baseline everywhere, so 40 % again, over the before period's hours.
	n := c.Units[0].Model.Reheat().Normalised
	require.NotNil(t, n)
	assert.Equal(t, "before", n.To)
	assert.Equal(t, 14*24, n.Hours)
	assert.InDelta(t, 40, float64(n.AvoidedPct), 1e-6)
	// A perfect fit meets Guideline 14.
	f := c.Units[0].Model.Reheat().Fit
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
	ex := c.Units[0].Model.Extrapolation
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
	assert.Contains(t, err.Error(), `normalise to "summer": use before or after`)
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
	u := c.Units[0]
	assert.Equal(t, [2]int{0, stuck}, u.Model.Suspect)
	assert.Equal(t, 14*24-stuck, u.Model.Usable[1])
	assert.InDelta(t, 0, float64(u.Model.Reheat().AvoidedPct), 1e-6, "the stuck hours do not read as a saving")
	assert.Equal(t, FindingNoChange, u.Finding)
	assert.True(t, hasWarning(u.Warnings, "84 of the after period's hours are left out of the baseline model"), u.Warnings)
}
