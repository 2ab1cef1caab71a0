package chart

import (
	"math"
	"strconv"
)

// linear maps a domain [d0, d1] onto a range [r0, r1] of user units.
type linear struct{ d0, d1, r0, r1 float64 }

func (l linear) at(v float64) float64 {
	return l.r0 + (v-l.d0)*(l.r1-l.r0)/(l.d1-l.d0)
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// niceStep returns a step of 1, 2 or 5 times a power of ten close to
// span/target (at least one step), or 0 when span is not usable.
func niceStep(span float64, target int) float64 {
	if target < 1 {
		target = 1
	}
	raw := span / float64(target)
	if !(raw > 0) || !finite(raw) {
		return 0
	}
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	switch f := raw / mag; {
	case f < 1.5:
		return mag
	case f < 3.5:
		return 2 * mag
	case f < 7.5:
		return 5 * mag
	default:
		return 10 * mag
	}
}

// axis is a value axis: its domain and the tick values inside it.
type axis struct {
	lo, hi float64
	step   float64
	ticks  []float64
}

// maxTicks bounds the number of ticks an axis can produce, whatever the data.
const maxTicks = 60

// niceAxis returns a domain that covers [lo, hi] (and 0 when zero is true),
// extended to whole steps, with ticks at every step. Degenerate input
// (no data, a constant, non-finite spans) gives a usable axis: [0, 1] when
// there is nothing, ±10 % around a constant.
func niceAxis(lo, hi float64, target int, zero bool, fixLo, fixHi *float64) axis {
	if !finite(lo) || !finite(hi) {
		lo, hi = 0, 1
	}
	if lo > hi {
		lo, hi = hi, lo
	}
	if zero {
		lo, hi = math.Min(lo, 0), math.Max(hi, 0)
	}
	flo, fhi := fixLo != nil && finite(*fixLo), fixHi != nil && finite(*fixHi)
	if flo {
		lo = *fixLo
	}
	if fhi {
		hi = *fixHi
	}
	if lo > hi {
		if fhi {
			lo = hi - math.Max(math.Abs(hi)*0.1, 1)
		} else {
			hi = lo + math.Max(math.Abs(lo)*0.1, 1)
		}
	}
	if lo == hi {
		pad := math.Abs(lo) * 0.1
		if pad == 0 {
			pad = 1
		}
		switch {
		case zero && lo == 0 && !fhi:
			hi = 1 // nothing but zeros: show 0..1
		case !flo:
			lo -= pad
			if !fhi {
				hi += pad
			}
		default:
			hi += pad
		}
	}
	step := niceStep(hi-lo, target)
	if step == 0 || !finite(hi-lo) {
		return axis{lo: 0, hi: 1, step: 0.2, ticks: []float64{0, 0.2, 0.4, 0.6, 0.8, 1}}
	}
	for (hi-lo)/step > maxTicks {
		step *= 2
	}
	if !flo {
		lo = math.Floor(lo/step+1e-9) * step
	}
	if !fhi {
		hi = math.Ceil(hi/step-1e-9) * step
	}
	a := axis{lo: lo, hi: hi, step: step}
	k0 := math.Ceil(lo/step - 1e-9)
	k1 := math.Floor(hi/step + 1e-9)
	for k := k0; k <= k1 && len(a.ticks) <= maxTicks; k++ {
		v := k * step
		if v == 0 {
			v = 0 // no -0
		}
		a.ticks = append(a.ticks, v)
	}
	return a
}

// tickFormat decides how tick labels of an axis are written: the number of
// decimals follows the step; values of 10 000 and more are shown in
// thousands ("12k") or millions ("3.5M") to keep labels short.
type tickFormat struct {
	div    float64
	suffix string
	dec    int
	sci    bool // extreme magnitudes: 4 significant digits with an exponent
}

func newTickFormat(ticks []float64, step float64) tickFormat {
	f := tickFormat{div: 1}
	maxAbs := 0.0
	for _, t := range ticks {
		maxAbs = math.Max(maxAbs, math.Abs(t))
	}
	switch {
	case maxAbs >= 1e12 || (step < 1e-6 && maxAbs < 1e-3):
		f.sci = true
	case maxAbs >= 1e7:
		f.div, f.suffix = 1e6, "M"
	case maxAbs >= 1e4:
		f.div, f.suffix = 1e3, "k"
	}
	f.dec = decimalsFor(step / f.div)
	return f
}

// decimalsFor returns the decimals needed to show multiples of step.
func decimalsFor(step float64) int {
	if !(step > 0) || !finite(step) {
		return 0
	}
	for d := 0; d < 12; d++ {
		m := step * math.Pow(10, float64(d))
		if math.Abs(m-math.Round(m)) < 1e-6*m {
			return d
		}
	}
	return 12
}

func (f tickFormat) label(v float64) string {
	switch {
	case v == 0:
		return "0"
	case f.sci:
		return strconv.FormatFloat(v, 'g', 4, 64)
	}
	return fixedString(v/f.div, f.dec) + f.suffix
}

// compact formats a value for a label with about three significant digits.
func compact(v float64) string {
	if !finite(v) {
		return "–"
	}
	a := math.Abs(v)
	switch {
	case a >= 1e7:
		return fixedString(v/1e6, 1) + "M"
	case a >= 1e4:
		return fixedString(v/1e3, 1) + "k"
	case a >= 100:
		return fixedString(v, 0)
	case a >= 10:
		return fixedString(v, 1)
	case a >= 1:
		return fixedString(v, 2)
	case a == 0:
		return "0"
	default:
		return fixedString(v, min(3-int(math.Floor(math.Log10(a))), 12))
	}
}
