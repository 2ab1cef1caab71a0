package metrics

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"
)

// Severity of an alert.
type Severity string

// Severities, in rising order.
const (
	SeverityInfo     Severity = "info"
	SeverityWarning  Severity = "warning"
	SeverityCritical Severity = "critical"
)

// Status of an alert.
type Status string

// Alert statuses: a condition seen for fewer hours than the rule's
// persistence is pending; it opens once it persists and closes after the
// rule's clear time without it.
const (
	StatusPending Status = "pending"
	StatusOpen    Status = "open"
	StatusClosed  Status = "closed"
)

// Alert kinds: our own names for what the rules find.
const (
	AlertReheatNotNeeded   = "reheat_not_needed"
	AlertOvercooling       = "coil_colder_than_needed"
	AlertLowEfficiency     = "low_effective_eer"
	AlertTargetMissed      = "humidity_target_missed"
	AlertShortfall         = "too_little_dehumidification"
	AlertDataGap           = "data_gap"
	AlertSensorFlat        = "sensor_flat"
	AlertSensorImplausible = "sensor_implausible"
	AlertReheatMeter       = "reheat_meter_mismatch"
)

// RuleParams are the site's thresholds for the alert rules.
type RuleParams struct {
	MinAvoidableKWh  float64 // avoidable energy in an hour that counts, default 1 kWh
	OvercoolingK     float64 // over-cooling beyond the need that counts, default 1.5 K
	MinEffectiveEER  float64 // Btu/Wh below which efficiency alerts, default 5
	CoilMinLeavingC  float64 // the coldest the coil can reach, default 10 °C
	MinCoverage      float64 // coverage below which data is missing, default 0.5
	ElectricityPrice float64 // for money at stake when a record has no cost split
	IP               bool    // state temperatures in reasons in °F (the site's display units)
}

// temp formats a temperature (°C) for a reason in the site's units.
func (p RuleParams) temp(c float64) string {
	if p.IP {
		return fmt.Sprintf("%.1f °F", c*1.8+32)
	}
	return fmt.Sprintf("%.1f °C", c)
}

// delta formats a temperature difference (K) for a reason.
func (p RuleParams) delta(k float64) string {
	if p.IP {
		return fmt.Sprintf("%.1f °F", k*1.8)
	}
	return fmt.Sprintf("%.1f K", k)
}

// DefaultRuleParams are dewline's defaults (common practice, no source).
var DefaultRuleParams = RuleParams{MinAvoidableKWh: 1, OvercoolingK: 1.5, MinEffectiveEER: 5, CoilMinLeavingC: 10, MinCoverage: 0.5}

// Rule is one alert rule: a condition on an hourly record, with the hours
// it must persist before an alert opens and the clear hours before it closes.
type Rule struct {
	Kind     string
	Severity Severity
	Persist  int
	Clear    int
	// Check reports whether the condition holds in the hour, the energy
	// (kWh) and money at stake in it, and a plain-language reason. A NaN
	// energy or money is at stake but could not be computed (an hour
	// without a cooling input): Evaluate leaves it out of the alert's
	// totals and counts the hour (Alert.UncomputedHours).
	Check func(r *Record, p RuleParams) (hit bool, kwh, money float64, reason string)
}

// Rules returns dewline's alert rules.
func Rules() []Rule {
	return []Rule{
		{AlertReheatNotNeeded, SeverityWarning, 2, 2, checkReheatNotNeeded},
		{AlertOvercooling, SeverityWarning, 3, 2, checkOvercooling},
		{AlertLowEfficiency, SeverityInfo, 3, 3, checkLowEfficiency},
		{AlertTargetMissed, SeverityCritical, 2, 2, checkTargetMissed},
		{AlertShortfall, SeverityCritical, 2, 2, checkShortfall},
		{AlertDataGap, SeverityWarning, 2, 1, checkDataGap},
		{AlertSensorFlat, SeverityWarning, 6, 2, checkFlat},
		{AlertSensorImplausible, SeverityWarning, 2, 2, checkImplausible},
		{AlertReheatMeter, SeverityInfo, 3, 3, checkReheatMeter},
	}
}

func covered(r *Record) bool { return r.Coverage > 0 }

func checkReheatNotNeeded(r *Record, p RuleParams) (bool, float64, float64, string) {
	if !covered(r) || r.ReheatAvoidKWh < p.MinAvoidableKWh || r.HumidityNeedHours > 0.1*r.Coverage {
		return false, 0, 0, ""
	}
	kwh := r.ReheatAvoidKWh
	reason := fmt.Sprintf(
		"reheat added %.1f kWh while the entering air (dew point %s) was already drier than the humidity target; %.1f kWh of it was not needed",
		r.ReheatKWh, p.temp(r.EnteringDewPointC), kwh)
	if !finite(r.CostAvoidable) {
		reason += "; " + noCoolingInput + ", so the hour's avoidable cost could not be computed"
	}
	return true, kwh, r.CostAvoidable, reason
}

// noCoolingInput says why an hour's cooling figures are unknown
// (FlagCoolingMissing).
const noCoolingInput = "the hour has no cooling input (cooling_kw read nothing and no rated efficiency stands in)"

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func checkOvercooling(r *Record, p RuleParams) (bool, float64, float64, string) {
	if !covered(r) || math.IsNaN(r.OvercoolingK) || r.OvercoolingK < p.OvercoolingK {
		return false, 0, 0, ""
	}
	kwh, money := r.CoolingAvoidKWh+r.ReheatAvoidKWh, r.CostAvoidable
	// Without a cooling input the avoidable cooling input is unknown, not
	// small: the coil cooled beyond the need, so the hour counts, its
	// energy and money uncomputed (NaN).
	known := finite(r.CoolingAvoidKWh)
	if known && kwh < p.MinAvoidableKWh {
		return false, 0, 0, ""
	}
	// Each avoidable kWh belongs to one alert: when reheat_not_needed
	// claims the hour, this one names the cause but claims nothing.
	if hit, _, _, _ := checkReheatNotNeeded(r, p); hit {
		kwh, money = 0, 0
	}
	need := "the supply temperature"
	if !math.IsNaN(r.RequiredLeavingC) {
		need = fmt.Sprintf("the humidity target (%s)", p.temp(r.RequiredLeavingC))
	}
	told := fmt.Sprintf("the coil left air at %s, %s colder than %s needed; ", p.temp(r.LeavingTempC), p.delta(r.OvercoolingK), need)
	if !known {
		return true, kwh, money, told + fmt.Sprintf("that cost %.1f kWh of reheat and cooling that could not be computed: %s",
			r.ReheatAvoidKWh, noCoolingInput)
	}
	return true, kwh, money, told + fmt.Sprintf("that cost %.1f kWh of cooling and %.1f kWh of reheat", r.CoolingAvoidKWh, r.ReheatAvoidKWh)
}

func checkLowEfficiency(r *Record, p RuleParams) (bool, float64, float64, string) {
	if !covered(r) || r.CoilTotalKWh < 1 || math.IsNaN(r.EffectiveEER) || r.EffectiveEER >= p.MinEffectiveEER {
		return false, 0, 0, ""
	}
	// A symptom, not a cause: the avoidable energy belongs to the alert
	// that names its cause (reheat_not_needed or coil_colder_than_needed).
	return true, 0, 0, fmt.Sprintf(
		"effective EER %.1f Btu/Wh (coil EER %.1f) is below %.1f: reheat took %.0f %% of the coil's work back",
		r.EffectiveEER, r.CoilEER, p.MinEffectiveEER, 100*r.ReheatCoilRatio)
}

func checkTargetMissed(r *Record, p RuleParams) (bool, float64, float64, string) {
	if !covered(r) || r.HumidityNeedHours < 0.5*r.Coverage || math.IsNaN(r.RequiredLeavingC) {
		return false, 0, 0, ""
	}
	if r.LeavingTempC <= r.RequiredLeavingC+0.5 || r.LeavingTempC > p.CoilMinLeavingC+1 {
		return false, 0, 0, ""
	}
	return true, 0, 0, fmt.Sprintf(
		"the coil is at its coldest (%s leaving) but the humidity target needs %s: space humidity may rise above the target",
		p.temp(r.LeavingTempC), p.temp(r.RequiredLeavingC))
}

// checkShortfall finds the other failure: the coil ran warmer than the
// target required while it could have gone colder (a lagging or mis-set
// sequence), so too little water came out. Distinct from
// humidity_target_missed, where the coil is at its coldest.
func checkShortfall(r *Record, p RuleParams) (bool, float64, float64, string) {
	if !covered(r) || r.ShortfallHours < 0.5*r.Coverage || r.ShortfallKg < 1 || math.IsNaN(r.RequiredLeavingC) {
		return false, 0, 0, ""
	}
	if r.LeavingTempC <= p.CoilMinLeavingC+1 {
		return false, 0, 0, "" // at its coldest: humidity_target_missed
	}
	// Within half the over-cooling threshold of the required temperature the
	// coil model's own uncertainty (the assumed leaving RH) can explain
	// the difference: no alert.
	if r.LeavingTempC-r.RequiredLeavingC < p.OvercoolingK/2 {
		return false, 0, 0, ""
	}
	return true, 0, 0, fmt.Sprintf(
		"the coil left air at %s while the humidity target needed %s and the coil could go colder: %.1f kg of water stayed in the air; meeting the target would have taken %.1f kWh more cooling and %.1f kWh more reheat. "+
			"Space humidity may rise: a comfort, mould and liability risk. Have the dehumidification sequence checked by the engineer of record; some spaces have humidity limits set by code",
		p.temp(r.LeavingTempC), p.temp(r.RequiredLeavingC), r.ShortfallKg, r.ShortfallCoolKWh, r.ShortfallReheatKWh)
}

func checkDataGap(r *Record, p RuleParams) (bool, float64, float64, string) {
	if r.Coverage >= p.MinCoverage {
		return false, 0, 0, ""
	}
	return true, 0, 0, fmt.Sprintf("only %.0f %% of the hour has every required reading; figures for it are incomplete", 100*r.Coverage)
}

func checkFlat(r *Record, _ RuleParams) (bool, float64, float64, string) {
	var roles []string
	for _, f := range r.Flags {
		if strings.HasPrefix(f, FlagFlat) {
			roles = append(roles, strings.TrimPrefix(f, FlagFlat))
		}
	}
	if len(roles) == 0 {
		return false, 0, 0, ""
	}
	if len(roles) == 1 {
		return true, 0, 0, fmt.Sprintf("%s reads exactly the same value all hour; the sensor may be stuck", roles[0])
	}
	return true, 0, 0, fmt.Sprintf("%s read exactly the same value all hour; the sensors may be stuck", strings.Join(roles, ", "))
}

func checkImplausible(r *Record, p RuleParams) (bool, float64, float64, string) {
	var why []string
	for _, f := range r.Flags {
		switch {
		case f == FlagMoistureAdded:
			why = append(why, "the coil leaving humidity reads wetter than the entering air")
		case f == FlagSupersaturated:
			why = append(why, "the entering dew point reads above the dry bulb")
		case f == FlagReheatWithoutCoil:
			why = append(why, "the supply reads warmer than the coil leaving air on a unit without reheat")
		case f == FlagSupplyBelowCoil:
			why = append(why, fmt.Sprintf("the supply (%s) reads colder than the coil leaving air (%s), which nothing after the coil can do: check the supply sensor and its unit (°C logged as °F reads far too cold)",
				p.temp(r.SupplyTempC), p.temp(r.LeavingTempC)))
		case f == FlagCOPImplausible && !r.HasCoolingInput():
			// The meter read for part of the hour only: no hourly input to name.
			why = append(why, "the air-side coil load over the metered cooling input, while the meter read, is outside 1.5-7: suspect the airflow, the entering humidity sensor or the meter")
		case f == FlagCOPImplausible:
			why = append(why, fmt.Sprintf("the air-side coil load (%.1f kWh) over the metered cooling input (%.1f kWh) is outside 1.5-7: suspect the airflow, the entering humidity sensor or the meter", r.CoilTotalKWh, r.CoolingInputKWh))
		case f == FlagLeavingSensorOut:
			why = append(why, "the coil leaving humidity sensor read nothing for part of the hour; the assumed coil model took over")
		case strings.HasPrefix(f, FlagWrongUnit):
			why = append(why, strings.TrimPrefix(f, FlagWrongUnit)+"'s values look logged in another unit than configured (dewline check --store names it): check the point's unit")
		case strings.HasPrefix(f, FlagOutOfRange):
			why = append(why, strings.TrimPrefix(f, FlagOutOfRange)+" logged values outside its physical range")
		}
	}
	if len(why) == 0 {
		return false, 0, 0, ""
	}
	return true, 0, 0, strings.Join(why, "; ")
}

func checkReheatMeter(r *Record, _ RuleParams) (bool, float64, float64, string) {
	if !r.HasFlag(FlagReheatMeter) {
		return false, 0, 0, ""
	}
	return true, 0, 0, fmt.Sprintf("the reheat meter read %.1f kWh but the air-side rise gives %.1f kWh: check the supply and coil leaving sensors or the meter",
		r.ReheatInputKWh, r.ReheatKWh)
}

// Alert is the state of one alert of one kind on one air handler.
type Alert struct {
	ID        string // ahu/kind/start hour, stable across restarts
	AHU       string
	Kind      string
	Severity  Severity
	Status    Status
	Start     time.Time // first hour the condition held
	End       time.Time // end of the last hour it held, once closed; zero while pending or open
	LastSeen  time.Time // start of the last hour evaluated
	Opened    time.Time // end of the hour it opened (its open transition's At); zero while pending
	Hits      int       // consecutive hours the condition held
	Misses    int       // consecutive hours it did not
	EnergyKWh float64   // at stake over the hours the condition held (those where it could be computed)
	Money     float64
	// UncomputedHours counts the hours the condition held whose energy or
	// money at stake could not be computed (an hour without a cooling
	// input): the totals leave that figure of those hours out, and Told
	// says how many.
	UncomputedHours int    `json:",omitempty"`
	Reason          string // the latest hour's reason (the last hour the condition held)
	// OpenReason is the reason of the hour it opened; empty while pending
	// (and in states kept before it was recorded).
	OpenReason string `json:",omitempty"`
}

// Told is the alert's reason as every output tells it (the store, the
// API, the pages, the report, the analysis summary and the webhook): the
// opening hour's reason and the latest hour's, labelled,
//
//	opened: <the opening hour's reason>; latest hour: <the latest hour's reason>
//
// or "opened: <reason>" alone while the opening hour is the latest. An
// alert without an opening reason (pending, or kept before it was
// recorded) tells its latest reason unlabelled. An alert with uncomputed
// hours ends with how many ("; the energy or cost at stake could not be
// computed for N hours and is left out of the totals").
func (a Alert) Told() string {
	var s string
	switch {
	case a.OpenReason == "":
		s = a.Reason
	case !a.Opened.IsZero() && !a.LastSeen.Add(time.Hour).After(a.Opened):
		s = "opened: " + a.OpenReason
	default:
		s = "opened: " + a.OpenReason + "; latest hour: " + a.Reason
	}
	if n := a.UncomputedHours; n > 0 {
		s += "; the energy or cost at stake could not be computed for " + Plural(n, "hour") + " and is left out of the totals"
	}
	return s
}

// AlertLabel is how people read an alert kind: words in sentence case
// ("reheat_not_needed" reads "Reheat not needed"). Pages, the report, the
// analysis summary and the webhook's label use it.
func AlertLabel(kind string) string {
	s := strings.ReplaceAll(kind, "_", " ")
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// UpdatesDue are the while-open updates due after an hour was evaluated:
// one for each open alert whose time open (from the end of the hour it
// opened to the end of the hour evaluated last) is a whole positive
// multiple of every, carrying the alert's running totals as a Transition
// from open to open at the end of that hour. every under an hour gives
// none. The result is sorted by kind.
func UpdatesDue(states map[string]Alert, every time.Duration) []Transition {
	if every < time.Hour {
		return nil
	}
	var out []Transition
	for _, a := range states {
		if a.Status != StatusOpen || a.Opened.IsZero() {
			continue
		}
		at := a.LastSeen.Add(time.Hour)
		if d := at.Sub(a.Opened); d > 0 && d%every == 0 {
			out = append(out, Transition{From: StatusOpen, To: StatusOpen, Alert: a, At: at})
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Alert.Kind < out[j].Alert.Kind })
	return out
}

// IsUpdate reports whether t is a while-open update (open to open) rather
// than an alert opening or closing.
func (t Transition) IsUpdate() bool { return t.From == StatusOpen && t.To == StatusOpen }

// Transition is an alert that changed status in an hour.
type Transition struct {
	From, To Status
	Alert    Alert
	At       time.Time // end of the hour that caused it
}

// Evaluate applies the rules to one record, given the air handler's alert
// states so far (keyed by kind; missing means inactive), and returns the
// new states and the transitions that happened. It is pure: states are
// copied, not changed. Records must be evaluated in hour order.
func Evaluate(rules []Rule, p RuleParams, prev map[string]Alert, r *Record) (map[string]Alert, []Transition) {
	next := make(map[string]Alert, len(prev))
	for k, a := range prev {
		if a.Status != StatusClosed {
			next[k] = a
		}
	}
	var out []Transition
	end := r.HourStart.Add(time.Hour)
	for _, rule := range rules {
		hit, kwh, money, reason := rule.Check(r, p)
		a, active := next[rule.Kind]
		switch {
		case hit && !active:
			a = Alert{AHU: r.AHU, Kind: rule.Kind, Severity: rule.Severity, Status: StatusPending, Start: r.HourStart}
			a.ID = fmt.Sprintf("%s/%s/%s", r.AHU, rule.Kind, r.HourStart.UTC().Format("20060102T15Z"))
			fallthrough
		case hit:
			a.Hits++
			a.Misses = 0
			if finite(kwh) {
				a.EnergyKWh += kwh
			}
			if finite(money) {
				a.Money += money
			}
			if !finite(kwh) || !finite(money) {
				a.UncomputedHours++
			}
			a.Reason = reason
			a.LastSeen = r.HourStart
			if a.Status == StatusPending && a.Hits >= rule.Persist {
				a.Status = StatusOpen
				a.Opened = end
				a.OpenReason = reason
				out = append(out, Transition{From: StatusPending, To: StatusOpen, Alert: a, At: end})
			}
			next[rule.Kind] = a
		case active:
			a.Misses++
			a.LastSeen = r.HourStart
			switch {
			case a.Status == StatusPending:
				delete(next, rule.Kind) // never persisted: drop quietly
			case a.Misses >= rule.Clear:
				a.Status = StatusClosed
				a.End = r.HourStart.Add(-time.Duration(a.Misses-1) * time.Hour)
				out = append(out, Transition{From: StatusOpen, To: StatusClosed, Alert: a, At: end})
				delete(next, rule.Kind)
			default:
				next[rule.Kind] = a
			}
		}
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Alert.Kind < out[j].Alert.Kind })
	return next, out
}
