package metrics_test

import (
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// dryReheatHour is an hour with reheat while the entering air was dry.
func dryReheatHour(h int, avoid float64) metrics.Record {
	return metrics.Record{
		HourStart: day0.Add(time.Duration(h) * time.Hour), AHU: "AHU-T", Coverage: 1,
		ReheatKWh: avoid, ReheatAvoidKWh: avoid, CostAvoidable: avoid * 0.15, EnteringDewPointC: 7.5,
		OvercoolingK: 0, LeavingTempC: 11, CoilTotalKWh: 30, EffectiveEER: 8, CoilEER: 11,
	}
}

func quietHour(h int) metrics.Record {
	return metrics.Record{HourStart: day0.Add(time.Duration(h) * time.Hour), AHU: "AHU-T", Coverage: 1,
		HumidityNeedHours: 1, CoilTotalKWh: 30, EffectiveEER: 9, OvercoolingK: 0}
}

func TestEvaluate_Lifecycle(t *testing.T) {
	rules, p := metrics.Rules(), metrics.DefaultRuleParams
	state := map[string]metrics.Alert{}
	var all []metrics.Transition
	hours := []metrics.Record{dryReheatHour(0, 12), dryReheatHour(1, 10), dryReheatHour(2, 8), quietHour(3), quietHour(4), quietHour(5)}
	var open []map[string]metrics.Alert
	for i := range hours {
		var tr []metrics.Transition
		state, tr = metrics.Evaluate(rules, p, state, &hours[i])
		all = append(all, tr...)
		open = append(open, state)
	}
	require.Len(t, all, 2)
	opened, closed := all[0], all[1]
	assert.Equal(t, metrics.StatusPending, opened.From)
	assert.Equal(t, metrics.StatusOpen, opened.To)
	assert.Equal(t, day0.Add(2*time.Hour), opened.At, "opens at the end of its second hour (persistence 2)")
	assert.Equal(t, metrics.AlertReheatNotNeeded, opened.Alert.Kind)
	assert.Equal(t, "AHU-T/reheat_not_needed/20260714T00Z", opened.Alert.ID)
	assert.Contains(t, opened.Alert.Reason, "10.0 kWh of it was not needed")
	assert.Contains(t, opened.Alert.Reason, "dew point 7.5 °C")

	assert.Equal(t, metrics.StatusClosed, closed.To)
	assert.Equal(t, day0.Add(5*time.Hour), closed.At, "closes after two clear hours")
	assert.Equal(t, day0.Add(3*time.Hour), closed.Alert.End, "ended when the condition last held")
	assert.InDelta(t, 30, closed.Alert.EnergyKWh, 1e-9)
	assert.InDelta(t, 4.5, closed.Alert.Money, 1e-9)
	assert.Equal(t, opened.Alert.ID, closed.Alert.ID)
	assert.Empty(t, open[5], "nothing left active")
	assert.Equal(t, metrics.StatusPending, open[0][metrics.AlertReheatNotNeeded].Status)
}

func TestEvaluate_PendingNeverOpens(t *testing.T) {
	state := map[string]metrics.Alert{}
	var tr []metrics.Transition
	r0, r1 := dryReheatHour(0, 5), quietHour(1)
	state, tr = metrics.Evaluate(metrics.Rules(), metrics.DefaultRuleParams, state, &r0)
	assert.Empty(t, tr)
	state, tr = metrics.Evaluate(metrics.Rules(), metrics.DefaultRuleParams, state, &r1)
	assert.Empty(t, tr)
	assert.Empty(t, state)
}

func TestEvaluate_Pure(t *testing.T) {
	prev := map[string]metrics.Alert{}
	r := dryReheatHour(0, 5)
	next, _ := metrics.Evaluate(metrics.Rules(), metrics.DefaultRuleParams, prev, &r)
	assert.Empty(t, prev, "the input map is not changed")
	assert.Len(t, next, 1)
}

func TestRules_Conditions(t *testing.T) {
	p := metrics.DefaultRuleParams
	find := func(kind string) metrics.Rule {
		for _, r := range metrics.Rules() {
			if r.Kind == kind {
				return r
			}
		}
		t.Fatalf("no rule %s", kind)
		return metrics.Rule{}
	}
	tests := []struct {
		name string
		kind string
		rec  metrics.Record
		hit  bool
		in   string
	}{
		{"over-cooled coil", metrics.AlertOvercooling, metrics.Record{Coverage: 1, OvercoolingK: 2.5, LeavingTempC: 9.5, RequiredLeavingC: 12, CoolingAvoidKWh: 3, ReheatAvoidKWh: 4}, true, "2.5 K colder than the humidity target (12.0 °C)"},
		{"small over-cooling", metrics.AlertOvercooling, metrics.Record{Coverage: 1, OvercoolingK: 0.5, CoolingAvoidKWh: 3}, false, ""},
		{"negative effective EER", metrics.AlertLowEfficiency, metrics.Record{Coverage: 1, CoilTotalKWh: 20, EffectiveEER: -1.2, CoilEER: 10, ReheatCoilRatio: 1.2}, true, "effective EER -1.2 Btu/Wh"},
		{"coil at its coldest, still humid", metrics.AlertTargetMissed, metrics.Record{Coverage: 1, HumidityNeedHours: 1, RequiredLeavingC: 8, LeavingTempC: 10.2}, true, "space humidity may rise"},
		{"coil could go colder", metrics.AlertTargetMissed, metrics.Record{Coverage: 1, HumidityNeedHours: 1, RequiredLeavingC: 8, LeavingTempC: 14}, false, ""},
		{"coil warmer than the target needs", metrics.AlertShortfall, metrics.Record{Coverage: 1, HumidityNeedHours: 1, ShortfallHours: 0.8, ShortfallKg: 12, RequiredLeavingC: 11, LeavingTempC: 15}, true, "12.0 kg of water stayed in the air"},
		{"shortfall at the coldest coil is the other alert", metrics.AlertShortfall, metrics.Record{Coverage: 1, HumidityNeedHours: 1, ShortfallHours: 0.8, ShortfallKg: 12, RequiredLeavingC: 8, LeavingTempC: 10.5}, false, ""},
		{"little shortfall", metrics.AlertShortfall, metrics.Record{Coverage: 1, HumidityNeedHours: 1, ShortfallHours: 0.2, ShortfallKg: 2, RequiredLeavingC: 11, LeavingTempC: 15}, false, ""},
		{"gap", metrics.AlertDataGap, metrics.Record{Coverage: 0.3}, true, "only 30 %"},
		{"flat RH", metrics.AlertSensorFlat, metrics.Record{Coverage: 1, Flags: []string{metrics.FlagFlat + "entering_rh"}}, true, "entering_rh reads exactly the same value"},
		{"coil load and meter disagree", metrics.AlertSensorImplausible, metrics.Record{Coverage: 1, CoilTotalKWh: 90, CoolingInputKWh: 9, Flags: []string{metrics.FlagCOPImplausible}}, true, "suspect the airflow"},
		{"leaving sensor out", metrics.AlertSensorImplausible, metrics.Record{Coverage: 1, Flags: []string{metrics.FlagLeavingSensorOut}}, true, "assumed coil model took over"},
		{"wet leaving sensor", metrics.AlertSensorImplausible, metrics.Record{Coverage: 1, Flags: []string{metrics.FlagMoistureAdded}}, true, "wetter than the entering air"},
		{"meter", metrics.AlertReheatMeter, metrics.Record{Coverage: 1, ReheatInputKWh: 80, ReheatKWh: 30, Flags: []string{metrics.FlagReheatMeter}}, true, "80.0 kWh"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			hit, _, _, reason := find(tt.kind).Check(&tt.rec, p)
			if tt.kind == metrics.AlertShortfall && tt.hit {
				assert.Contains(t, reason, "mould")
			}
			assert.Equal(t, tt.hit, hit)
			if tt.hit {
				assert.Contains(t, reason, tt.in)
			}
		})
	}
}

// TestRules_ReasonsInSiteUnits: an IP site reads its reasons in °F.
func TestRules_ReasonsInSiteUnits(t *testing.T) {
	p := metrics.DefaultRuleParams
	p.IP = true
	r := metrics.Record{Coverage: 1, OvercoolingK: 2.5, LeavingTempC: 10, RequiredLeavingC: 12.5, CoolingAvoidKWh: 3, ReheatAvoidKWh: 4}
	var reason string
	for _, rule := range metrics.Rules() {
		if rule.Kind == metrics.AlertOvercooling {
			_, _, _, reason = rule.Check(&r, p)
		}
	}
	// 10 °C = 50.0 °F, 2.5 K = 4.5 °F, 12.5 °C = 54.5 °F.
	assert.Contains(t, reason, "the coil left air at 50.0 °F, 4.5 °F colder than the humidity target (54.5 °F)")
}

// TestRules_AvoidableClaimedOnce: an hour whose reheat was not needed and
// whose coil was also colder than needed, with a low effective EER, hands
// its avoidable energy and money to one alert only.
func TestRules_AvoidableClaimedOnce(t *testing.T) {
	r := metrics.Record{Coverage: 1, ReheatKWh: 20, ReheatAvoidKWh: 20, CoolingAvoidKWh: 6, CostAvoidable: 3.9,
		OvercoolingK: 4, LeavingTempC: 10, EnteringDewPointC: 8, CoilTotalKWh: 30, EffectiveEER: 1, CoilEER: 10}
	var kwh, money float64
	hits := 0
	for _, rule := range metrics.Rules() {
		hit, k, m, _ := rule.Check(&r, metrics.DefaultRuleParams)
		if hit {
			hits++
			kwh += k
			money += m
		}
	}
	assert.GreaterOrEqual(t, hits, 3, "reheat not needed, over-cooling and low EER all hold")
	assert.InDelta(t, 3.9, money, 1e-9, "the hour's avoidable cost, once")
	assert.LessOrEqual(t, kwh, r.ReheatAvoidKWh+r.CoolingAvoidKWh)
}

// TestAlert_ToldAndUpdates: an open alert tells the opening hour's reason
// and the latest hour's, labelled, and is due a while-open update at every
// whole multiple of the cadence after the hour it opened, carrying its
// running totals.
func TestAlert_ToldAndUpdates(t *testing.T) {
	rules, p := metrics.Rules(), metrics.DefaultRuleParams
	state := map[string]metrics.Alert{}
	// 12, 10, then 7, 9, 11 kWh not needed: opens after hour 1 (10 kWh).
	hours := []metrics.Record{dryReheatHour(0, 12), dryReheatHour(1, 10), dryReheatHour(2, 7), dryReheatHour(3, 9), dryReheatHour(4, 11)}
	var told []string
	var due [][]metrics.Transition
	for i := range hours {
		state, _ = metrics.Evaluate(rules, p, state, &hours[i])
		told = append(told, state[metrics.AlertReheatNotNeeded].Told())
		due = append(due, metrics.UpdatesDue(state, time.Hour))
	}
	assert.NotContains(t, told[0], "opened:", "pending: the latest reason alone")
	assert.Regexp(t, `^opened: .*10\.0 kWh of it was not needed[^;]*$`, told[1], "the opening hour is the latest: no second part")
	assert.Regexp(t, `^opened: .*10\.0 kWh of it was not needed.*; latest hour: .*11\.0 kWh of it was not needed`, told[4])

	assert.Empty(t, due[0], "pending")
	assert.Empty(t, due[1], "it opened this hour: the open event says it")
	for i := 2; i < len(hours); i++ {
		require.Len(t, due[i], 1, "hour %d", i)
		u := due[i][0]
		assert.True(t, u.IsUpdate())
		assert.Equal(t, day0.Add(time.Duration(i+1)*time.Hour), u.At, "as of the end of the hour evaluated")
		// The running total is the sum of the hours so far, written by hand.
		assert.InDelta(t, []float64{0, 0, 29, 38, 49}[i], u.Alert.EnergyKWh, 1e-9, "hour %d", i)
	}
	// Every 2 h: the updates fall 2 h and 4 h after the opening hour ends.
	state = map[string]metrics.Alert{}
	var every2 []time.Time
	for i := range hours {
		state, _ = metrics.Evaluate(rules, p, state, &hours[i])
		for _, u := range metrics.UpdatesDue(state, 2*time.Hour) {
			every2 = append(every2, u.At)
		}
	}
	assert.Equal(t, []time.Time{day0.Add(4 * time.Hour)}, every2)
	assert.Empty(t, metrics.UpdatesDue(state, 0), "a cadence under an hour gives none")
}

func TestAlertLabel(t *testing.T) {
	assert.Equal(t, "Reheat not needed", metrics.AlertLabel(metrics.AlertReheatNotNeeded))
	assert.Equal(t, "Sensor implausible", metrics.AlertLabel(metrics.AlertSensorImplausible))
	assert.Equal(t, "", metrics.AlertLabel(""))
}

// overcoolHour is an hour whose coil ran 4 K colder than the target
// needed: 6 kWh of avoidable cooling input and 11 kWh of avoidable reheat
// at 0.1 a kWh. Without a cooling input (noInput) the cooling figures are
// unknown, as Compute leaves them.
func overcoolHour(h int, noInput bool) metrics.Record {
	r := metrics.Record{HourStart: day0.Add(time.Duration(h) * time.Hour), AHU: "AHU-T", Coverage: 1,
		HumidityNeedHours: 1, OvercoolingK: 4, LeavingTempC: 8, RequiredLeavingC: 12, SupplyTempC: 16,
		CoilTotalKWh: 30, ReheatKWh: 11, ReheatAvoidKWh: 11, CoolingInputKWh: 8, CoolingAvoidKWh: 6, CostAvoidable: 1.7,
		EffectiveEER: 8, CoilEER: 12}
	if noInput {
		nan := math.NaN()
		r.CoolingInputKWh, r.CoolingAvoidKWh, r.CostAvoidable, r.EffectiveEER, r.CoilEER = nan, nan, nan, nan, nan
		r.Flags = []string{metrics.FlagCoolingMissing}
	}
	return r
}

// TestEvaluate_UncomputedHours: an hour without a cooling input keeps an
// alert going, adds none of its unknown figures to the alert's totals
// (they stay the sum of the other hours, added by hand below) and is
// counted; no reason prints NaN.
func TestEvaluate_UncomputedHours(t *testing.T) {
	rules, p := metrics.Rules(), metrics.DefaultRuleParams
	t.Run("over-cooling", func(t *testing.T) {
		hours := []metrics.Record{overcoolHour(0, false), overcoolHour(1, false), overcoolHour(2, true), overcoolHour(3, false), quietHour(4), quietHour(5)}
		state := map[string]metrics.Alert{}
		var all []metrics.Transition
		for i := range hours {
			var tr []metrics.Transition
			state, tr = metrics.Evaluate(rules, p, state, &hours[i])
			all = append(all, tr...)
		}
		require.Len(t, all, 2, "opens in the hour without an input (persistence 3) and closes")
		opened, closed := all[0].Alert, all[1].Alert
		assert.Equal(t, metrics.AlertOvercooling, opened.Kind)
		assert.Equal(t, day0.Add(3*time.Hour), all[0].At)
		assert.Equal(t, 1, opened.UncomputedHours)
		assert.InDelta(t, 2*(6+11), opened.EnergyKWh, 1e-9, "hours 0 and 1")
		assert.InDelta(t, 2*1.7, opened.Money, 1e-9)
		assert.Contains(t, opened.OpenReason, "could not be computed")
		assert.InDelta(t, 3*(6+11), closed.EnergyKWh, 1e-9, "hours 0, 1 and 3")
		assert.InDelta(t, 3*1.7, closed.Money, 1e-9)
		assert.Equal(t, 1, closed.UncomputedHours)
		assert.Contains(t, closed.Told(), "; the energy or cost at stake could not be computed for 1 hour and is left out of the totals")
		for _, a := range []metrics.Alert{opened, closed} {
			assert.NotContains(t, a.Told(), "NaN")
		}
	})
	t.Run("reheat not needed", func(t *testing.T) {
		// The reheat's energy is known; the hour's avoidable cost is not.
		hours := []metrics.Record{dryReheatHour(0, 12), dryReheatHour(1, 10), dryReheatHour(2, 8)}
		hours[1].CostAvoidable = math.NaN()
		state := map[string]metrics.Alert{}
		for i := range hours {
			state, _ = metrics.Evaluate(rules, p, state, &hours[i])
		}
		a := state[metrics.AlertReheatNotNeeded]
		assert.InDelta(t, 12+10+8, a.EnergyKWh, 1e-9)
		assert.InDelta(t, (12+8)*0.15, a.Money, 1e-9)
		assert.Equal(t, 1, a.UncomputedHours)
		assert.Contains(t, a.OpenReason, "avoidable cost could not be computed")
		assert.NotContains(t, a.Told(), "NaN")
	})
}

// TestRules_NoNaNInReasons: every rule's reason for an hour without a
// cooling input, the meter silent for part of it (cop_implausible from
// the steps it read), names no NaN or Inf.
func TestRules_NoNaNInReasons(t *testing.T) {
	r := overcoolHour(0, true)
	r.Flags = append(r.Flags, metrics.FlagCOPImplausible)
	var hits []string
	for _, rule := range metrics.Rules() {
		hit, _, _, reason := rule.Check(&r, metrics.DefaultRuleParams)
		if !hit {
			continue
		}
		hits = append(hits, rule.Kind)
		assert.NotContains(t, reason, "NaN", rule.Kind)
		assert.NotContains(t, reason, "Inf", rule.Kind)
	}
	assert.Equal(t, []string{metrics.AlertOvercooling, metrics.AlertSensorImplausible}, hits)
}
