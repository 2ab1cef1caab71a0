package demo

import (
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"github.com/dewline/dewline/psychro"
)

// weather is the invented outdoor air, one value per minute of the period.
type weather struct {
	tC, dpC, w, rh []float64
	sun            []float64 // 0..1, share of full sun on the building
}

// front is a cold front: after it passes, temperature and dew point drop
// within hours and recover over a few days.
type front struct {
	atDay      float64 // days from the start of the period
	dropT, dpK float64
}

// newWeather invents a humid late-season coastal climate: daily means
// near 25 °C falling slowly, a diurnal swing of about 9 K with the minimum
// near dawn, muggy nights close to saturation, dew points of about 16 to
// 23 °C that two cold fronts push down to about 14 °C for a few days, and
// rainy afternoons. The values are plausible, not climate data.
func newWeather(rng *rand.Rand, from time.Time, n int, pPa float64) (*weather, error) {
	nd := n/1440 + 3
	meanT := make([]float64, nd)
	meanDP := make([]float64, nd)
	cloud := make([]float64, nd)
	type rain struct{ start, end float64 } // minutes of the period
	var rains []rain
	for d := range nd {
		meanT[d] = 24.8 - 0.11*float64(d) + 0.9*rng.NormFloat64()
		meanDP[d] = 21.4 - 0.07*float64(d) + 0.8*rng.NormFloat64()
		cloud[d] = 0.65 + 0.35*rng.Float64()
		if rng.Float64() < 0.22 {
			st := (float64(d) + (11+5*rng.Float64())/24) * 1440
			rains = append(rains, rain{st, st + (2.5+4*rng.Float64())*60})
			cloud[d] = 0.35
		}
	}
	days := float64(n) / 1440
	fronts := []front{
		{atDay: 3.3 + 1.6*rng.Float64(), dropT: 6 + 1.5*rng.Float64(), dpK: 6 + 1.5*rng.Float64()},
		{atDay: days*0.55 + 1.5*rng.Float64(), dropT: 5 + 1.5*rng.Float64(), dpK: 5.5 + 1.5*rng.Float64()},
	}
	wx := &weather{
		tC: make([]float64, n), dpC: make([]float64, n), w: make([]float64, n),
		rh: make([]float64, n), sun: make([]float64, n),
	}
	const arMin = 90.0 // minutes: the time scale of the weather's wander
	a := math.Exp(-1 / arMin)
	sa := math.Sqrt(1 - a*a)
	var arT, arDP, rainLag float64
	fromUnix := from.Unix()
	for i := range n {
		// Sun time: standard time (UTC-6) whatever the clocks say.
		h := math.Mod(float64(fromUnix/60+int64(i))/60-6, 24)
		if h < 0 {
			h += 24
		}
		dayF := float64(i)/1440 - 0.5
		d0 := int(math.Floor(dayF))
		fr := dayF - float64(d0)
		at := func(v []float64) float64 {
			i0, i1 := clampIdx(d0, nd), clampIdx(d0+1, nd)
			return v[i0]*(1-fr) + v[i1]*fr
		}
		s := diurnal(h)
		amp := 4.6
		dayIdx := clampIdx(int(float64(i)/1440), nd)
		if cloud[dayIdx] < 0.4 {
			amp = 2.2
		}
		arT = a*arT + sa*0.55*rng.NormFloat64()
		arDP = a*arDP + sa*0.45*rng.NormFloat64()
		t := at(meanT) + amp*s + arT
		dp := at(meanDP) - 0.5*s + arDP
		day := float64(i) / 1440
		for _, f := range fronts {
			if day > f.atDay {
				x := day - f.atDay
				e := (1 - math.Exp(-x/0.15)) * math.Exp(-x/2.4)
				t -= f.dropT * e
				dp -= f.dpK * e
			}
		}
		// Rain: cooler, near saturation, little sun; eased in and out.
		r := 0.0
		for _, rn := range rains {
			if float64(i) >= rn.start && float64(i) < rn.end {
				r = 1
			}
		}
		rainLag += (r - rainLag) * (1 - math.Exp(-1.0/25))
		t -= 2.4 * rainLag
		dp += rainLag * (t - 0.7 - dp)
		dp = math.Min(dp, t-0.4)
		wx.tC[i], wx.dpC[i] = t, dp
		w, err := psychro.HumRatioFromDewPoint(dp, pPa)
		if err != nil {
			return nil, fmt.Errorf("%w: outdoor dew point %.2f °C: %v", errPhysics, dp, err)
		}
		rh, err := psychro.RHFromHumRatio(t, w, pPa)
		if err != nil {
			return nil, fmt.Errorf("%w: outdoor RH at %.2f °C: %v", errPhysics, t, err)
		}
		wx.w[i], wx.rh[i] = w, rh
		sun := math.Sin(math.Pi * (h - 7.1) / 11.4)
		wx.sun[i] = math.Max(0, sun) * cloud[dayIdx] * (1 - 0.8*rainLag)
	}
	return wx, nil
}

// diurnal is the shape of the daily temperature cycle: -1 at 06:30 and +1
// at 15:00 sun time, warming fast and cooling slowly.
func diurnal(h float64) float64 {
	if h >= 6.5 && h < 15 {
		return -math.Cos(math.Pi * (h - 6.5) / 8.5)
	}
	x := math.Mod(h-15+24, 24)
	return math.Cos(math.Pi * x / 15.5)
}

func clampIdx(i, n int) int {
	if i < 0 {
		return 0
	}
	if i >= n {
		return n - 1
	}
	return i
}
