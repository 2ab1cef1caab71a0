package compare

import (
	"math"
	"strconv"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Side names the period an hour belongs to.
type Side int

// The periods of a comparison.
const (
	Before Side = iota // the period before the change (the baseline period)
	After              // the period after the change (the reporting period)
	Normal             // a third period whose conditions the savings are normalised to (Options.NormaliseTo "period")
)

// Window is a period [From, To) with the label the outputs show.
type Window struct {
	From  time.Time `json:"from"`
	To    time.Time `json:"to"`
	Label string    `json:"label"`
}

// AirHandler is one configured air handler.
type AirHandler struct {
	ID, Name string
	Spec     *metrics.AirHandler // target, thresholds; may be nil
}

// Input is what a comparison needs besides the hours.
type Input struct {
	Site, Currency string
	// Zone is the site's time zone: hours of the week are local.
	Zone          *time.Location
	Before, After Window
	// Normal is the period to normalise to when Options.NormaliseTo is
	// "period"; it may overlap the others.
	Normal      Window
	AirHandlers []AirHandler // in configuration order
	Options     Options
}

// Num is a number that encodes NaN and ±Inf as JSON null (metrics.Num).
type Num = metrics.Num

// Sums are the raw totals of a unit's stored hours in one period, not
// normalised. Energies in kWh, water in kg, money in the site's currency;
// a sum skips hours where its field has no value and stays unknown (NaN)
// when no hour had one.
type Sums struct {
	Hours        int `json:"hours"`
	ReheatKWh    Num `json:"reheat_kwh"`
	ReheatAvoid  Num `json:"reheat_avoidable_kwh"`
	CoilKWh      Num `json:"coil_total_kwh"`
	ReheatInput  Num `json:"reheat_input_kwh"`
	CoolingInput Num `json:"cooling_input_kwh"`
	WaterKg      Num `json:"water_removed_kg"`
	Cost         Num `json:"cost"`
	EffectiveEER Num `json:"effective_eer"` // of the sums over the hours with a cooling input: 3.412 × (coil − reheat) / (cooling input + reheat input)
	// NoCoolingInput counts the hours without a cooling input: the EER
	// leaves out their coil, reheat and reheat input (gap).
	NoCoolingInput int `json:"no_cooling_input_hours"`
	gap            metrics.CoolingGap
}

// NewSums returns empty sums.
func NewSums() Sums {
	n := Num(math.NaN())
	return Sums{ReheatKWh: n, ReheatAvoid: n, CoilKWh: n, ReheatInput: n, CoolingInput: n, WaterKg: n, Cost: n, EffectiveEER: n}
}

func addNum(dst *Num, v float64) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	if math.IsNaN(float64(*dst)) {
		*dst = 0
	}
	*dst += Num(v)
}

// Add sums one hour.
func (t *Sums) Add(r *metrics.Record) {
	t.Hours++
	addNum(&t.ReheatKWh, r.ReheatKWh)
	addNum(&t.ReheatAvoid, r.ReheatAvoidKWh)
	addNum(&t.CoilKWh, r.CoilTotalKWh)
	addNum(&t.ReheatInput, r.ReheatInputKWh)
	addNum(&t.CoolingInput, r.CoolingInputKWh)
	addNum(&t.WaterKg, r.WaterRemovedKg)
	addNum(&t.Cost, r.Cost)
	t.gap.Add(r)
	t.NoCoolingInput = t.gap.Hours
}

// finish computes the effective EER of the sums over the hours with a
// cooling input: the other hours' input is not in the sum, so neither is
// their coil (as the analysis summary and the dashboard's totals do).
func (t *Sums) finish() {
	g := &t.gap
	input := t.CoolingInput
	if !math.IsNaN(float64(t.ReheatInput)) && !math.IsNaN(float64(input)) {
		input += t.ReheatInput - Num(g.ReheatInputKWh)
	}
	num := t.CoilKWh - Num(g.CoilKWh) - (t.ReheatKWh - Num(g.ReheatKWh))
	if math.IsNaN(float64(num)) || math.IsNaN(float64(input)) || input == 0 {
		t.EffectiveEER = Num(math.NaN())
		return
	}
	t.EffectiveEER = Num(psychro.COPToEER(float64(num / input)))
}

// fmtPct formats a fraction as a whole percentage for messages.
func fmtPct(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return strconv.FormatFloat(v*100, 'f', 0, 64) + " %"
}
