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
func outdoorMeans(tOut, rhOut []float64, pPa float64) (tC, dewPointC float64) {
	tC, dewPointC = math.NaN(), math.NaN()
	var sumT, sumW float64
	var nT, nW int
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
		w, err := psychro.HumRatioFromRH(t, rh, pPa)
		if err != nil {
			continue
		}
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
