package metrics

import (
	"math"

	"github.com/dewline/dewline/psychro"
)

// outdoorMeans returns the hour's mean outdoor dry bulb over the steps
// that read one, and the dew point of the mean outdoor humidity ratio over
// the steps that read both the temperature and the RH (humidity ratio from
// RH, ASHRAE Fundamentals 2017 ch. 1 eqs. 20 and 22; dew point from it,
// package psychro), at pressure pPa. Either is NaN when no step read it,
// or when its role is not mapped (nil slices).
//
// The outdoor sensors are often logged slowly, so the saturation pressure
// goes through the memo m: the humidity ratio is that of
// psychro.HumRatioFromRH, which checks the temperature as
// SatVapPressureSlope does, the RH within 0..1 and the pressure, and
// computes the same products in the same order.
func outdoorMeans(tOut, rhOut []float64, pPa float64, m *satMemo) (tC, dewPointC float64) {
	tC, dewPointC = math.NaN(), math.NaN()
	var sumT, sumW float64
	var nT, nW int
	pressureOK := !math.IsNaN(pPa) && !math.IsInf(pPa, 0) && pPa > 0 && pPa <= psychro.MaxPressurePa
	for i, t := range tOut {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			continue
		}
		sumT += t
		nT++
		if rhOut == nil || i >= len(rhOut) {
			continue
		}
		rh := rhOut[i]
		if math.IsNaN(rh) || math.IsInf(rh, 0) {
			continue
		}
		if rh < 0 || rh > 1 || !pressureOK {
			continue
		}
		pws, _, ok := m.at(t)
		if !ok {
			continue
		}
		pw := rh * pws
		if pw >= pPa {
			continue
		}
		w := psychro.MolarMassRatio * pw / (pPa - pw)
		sumW += w
		nW++
	}
	if nT > 0 {
		tC = sumT / float64(nT)
	}
	if nW > 0 {
		if td, err := psychro.DewPointFromHumRatio(sumW/float64(nW), pPa); err == nil {
			dewPointC = td
		}
	}
	return tC, dewPointC
}
