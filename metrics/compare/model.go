package compare

import (
	"math"
	"slices"
	"time"
)

// The baseline model.
//
// Per air handler and per quantity (reheat, cooling input, water removed,
// cost), the before period's hourly values are fitted by ordinary least
// squares against the drivers the engine records every hour:
//
//	y = Σ_mode [mode] × ( a + m × (b + Σ_j c_j seg_j(W_in) + Σ_k d_k seg_k(T_in)) )
//
//   - mode is occupied or unoccupied, by the hour of the week in the
//     site's zone: an hour of the week is occupied when the unit's mean
//     airflow in it over the before period is at least half the highest
//     such mean (hours of the week the before period did not see are
//     judged by their own airflow);
//   - m is the dry-air mass moved in the hour (t), the airflow driver;
//   - seg_j(W) are the pieces of the drivers' humidity ratio (outdoor or
//     entering, from the dew point, ASHRAE Fundamentals 2017 ch. 1 eqs. 22
//     and 20, package psychro) between change points at the before
//     period's sextiles, and seg_k(T) those of the drivers' dry bulb
//     between its terciles: the piecewise-
//     linear (change-point) basis of the time-of-week-and-temperature
//     model (Mathieu, Price, Kiliccote and Piette, IEEE Trans. Smart Grid
//     2011), whose time-of-week terms are reduced here to the two
//     occupancy modes and whose temperature terms are multiplied by the
//     airflow, because an air handler's hourly energy is airflow times a
//     per-kilogram effect of the entering state. The humidity ratio rather
//     than the dew point: the water a coil removes is a hinge in it
//     (m (W_in − W_coil) above the coil's saturation), which the
//     piecewise-linear basis then follows.
//
// The drivers are the outdoor dry bulb and dew point when the unit's
// outdoor roles are mapped (outdoorShare of the hours of each period carry
// them), else the entering air's. Outdoor air is the weather whatever the
// unit does; entering air is not: a change that dries or wets the supply
// changes the return air and so the entering air, and a baseline on the
// entering state then reads part of the change as weather (a lockout that
// leaves the supply wetter raises the entering humidity, and a baseline
// in it overstates the water the unit would have removed).
//
// Projected onto an after hour's drivers, the model gives what the unit
// would have used without the change; avoided energy = Σ projection −
// Σ measured over the after period's usable hours.

// Modelled quantities.
const (
	yReheat = iota
	yCooling
	yWater
	yCost
	nY
)

var yNames = [nY]string{"reheat_kwh", "cooling_input_kwh", "water_removed_kg", "cost"}

// Change-point fractions of the drivers' distributions.
var (
	dpKnotQ = []float64{1.0 / 6, 2.0 / 6, 3.0 / 6, 4.0 / 6, 5.0 / 6}
	tKnotQ  = []float64{1.0 / 3, 2.0 / 3}
)

// hourRow is what the model keeps of one usable hour.
type hourRow struct {
	t          time.Time
	how        int // hour of the week, local, 0 = Sunday 00:00
	dpC, tC, m float64
	wGkg       float64 // the drivers' humidity ratio, g/kg, from dpC
	supplyDPC  float64
	y          [nY]float64
	// Both sets of drivers as stored; dpC, tC and wGkg hold the set the
	// unit's model uses (useDrivers).
	in, out driverSet
}

// driverSet is one set of weather drivers of an hour: dew point,
// humidity ratio (g/kg) and dry bulb; ok when all three are known.
type driverSet struct {
	dpC, wGkg, tC float64
	ok            bool
}

// The sets of drivers a model can use.
const (
	DriversOutdoor  = "outdoor"  // outdoor dry bulb and dew point
	DriversEntering = "entering" // entering (mixed or return) air: the fallback
)

// useDrivers sets the row's model drivers to set d (DriversOutdoor or
// DriversEntering); it reports false when the hour lacks them.
func (r *hourRow) useDrivers(d string) bool {
	s := r.in
	if d == DriversOutdoor {
		s = r.out
	}
	r.dpC, r.wGkg, r.tC = s.dpC, s.wGkg, s.tC
	return s.ok
}

// modelForm is a fitted baseline: its change points, occupancy and
// coefficients per quantity.
type modelForm struct {
	dpKnots, tKnots []float64 // humidity-ratio (g/kg) and temperature change points
	occupied        [168]int8 // 1 occupied, -1 unoccupied, 0 unseen
	mThreshold      float64   // airflow that counts as occupied for unseen hours
	beta            [nY][]float64
	fits            [nY]*lsFit
	ok              [nY]bool
	modeSigma2      [nY][2]float64 // residual variance per mode (occupied, unoccupied)
	stats           [nY]FitStats
	// driver ranges of the fitted hours
	dpMin, dpMax, tMin, tMax, mMin, mMax float64
}

func (f *modelForm) cols() int { return 2 * (2 + len(f.dpKnots) + 1 + len(f.tKnots) + 1) }

// segs writes the piecewise-linear basis of v with change points knots
// into dst (len(knots)+1 values whose sum is v).
func segs(dst []float64, v float64, knots []float64) {
	prev := math.Inf(-1)
	for j, k := range knots {
		switch {
		case j == 0:
			dst[0] = math.Min(v, k)
		default:
			dst[j] = math.Max(0, math.Min(v, k)-prev)
		}
		prev = k
	}
	dst[len(knots)] = math.Max(0, v-prev)
}

func (f *modelForm) isOccupied(r *hourRow) bool {
	switch f.occupied[r.how] {
	case 1:
		return true
	case -1:
		return false
	}
	return r.m >= f.mThreshold
}

// row fills the design row of hour r.
func (f *modelForm) row(dst []float64, r *hourRow) {
	clear(dst)
	half := len(dst) / 2
	off := 0
	if !f.isOccupied(r) {
		off = half
	}
	d := dst[off : off+half]
	d[0] = 1
	d[1] = r.m
	nd := len(f.dpKnots) + 1
	segs(d[2:2+nd], r.wGkg, f.dpKnots)
	segs(d[2+nd:], r.tC, f.tKnots)
	for j := 2; j < half; j++ {
		d[j] *= r.m
	}
}

func (f *modelForm) predict(q int, r *hourRow, buf []float64) float64 {
	f.row(buf, r)
	var s float64
	for j, b := range f.beta[q] {
		s += b * buf[j]
	}
	return s
}

func quantile(sorted []float64, q float64) float64 {
	if len(sorted) == 0 {
		return math.NaN()
	}
	pos := q * float64(len(sorted)-1)
	i := int(math.Floor(pos))
	if i >= len(sorted)-1 {
		return sorted[len(sorted)-1]
	}
	return sorted[i] + (pos-float64(i))*(sorted[i+1]-sorted[i])
}

// fitModel fits every quantity on rows (in time order).
func fitModel(rows []hourRow) *modelForm {
	f := &modelForm{}
	if len(rows) == 0 {
		return f
	}
	dp, tt, ms := make([]float64, len(rows)), make([]float64, len(rows)), make([]float64, len(rows))
	var howSum [168]float64
	var howN [168]int
	for i := range rows {
		dp[i], tt[i], ms[i] = rows[i].wGkg, rows[i].tC, rows[i].m
		howSum[rows[i].how] += rows[i].m
		howN[rows[i].how]++
	}
	slices.Sort(dp)
	slices.Sort(tt)
	slices.Sort(ms)
	f.tMin, f.tMax, f.mMin, f.mMax = tt[0], tt[len(tt)-1], ms[0], ms[len(ms)-1]
	f.dpMin, f.dpMax = math.Inf(1), math.Inf(-1)
	for i := range rows {
		f.dpMin, f.dpMax = math.Min(f.dpMin, rows[i].dpC), math.Max(f.dpMax, rows[i].dpC)
	}
	for _, q := range dpKnotQ {
		f.dpKnots = append(f.dpKnots, quantile(dp, q))
	}
	for _, q := range tKnotQ {
		f.tKnots = append(f.tKnots, quantile(tt, q))
	}
	best := 0.0
	for h := range howSum {
		if howN[h] > 0 {
			best = math.Max(best, howSum[h]/float64(howN[h]))
		}
	}
	f.mThreshold = best / 2
	for h := range howSum {
		switch {
		case howN[h] == 0:
		case howSum[h]/float64(howN[h]) >= f.mThreshold:
			f.occupied[h] = 1
		default:
			f.occupied[h] = -1
		}
	}

	p := f.cols()
	buf := make([]float64, p)
	for q := 0; q < nY; q++ {
		var x, y []float64
		var idx []int
		for i := range rows {
			if v := rows[i].y[q]; finite(v) {
				f.row(buf, &rows[i])
				x = append(x, buf...)
				y = append(y, v)
				idx = append(idx, i)
			}
		}
		n := len(y)
		if n == 0 {
			continue
		}
		fit := solveLS(x, n, p, y)
		beta, kept := fit.beta, fit.kept
		f.beta[q], f.fits[q], f.ok[q] = beta, fit, true
		yhat := make([]float64, n)
		gap := make([]bool, n)
		for i := range y {
			var s float64
			for j := 0; j < p; j++ {
				s += beta[j] * x[i*p+j]
			}
			yhat[i] = s
			if i+1 < n {
				gap[i] = rows[idx[i+1]].t.Sub(rows[idx[i]].t) != time.Hour
			}
		}
		f.stats[q] = fitStats(y, yhat, kept, gap)
		// Residual variance per occupancy mode, over the mode's own
		// hours and kept columns (the first half of the columns is the
		// occupied mode's).
		var sse [2]float64
		var nm, km [2]int
		for i := range y {
			md := 0
			if !f.isOccupied(&rows[idx[i]]) {
				md = 1
			}
			sse[md] += (y[i] - yhat[i]) * (y[i] - yhat[i])
			nm[md]++
		}
		for j := 0; j < p; j++ {
			if !fit.drop[j] {
				km[j/(p/2)]++
			}
		}
		all := math.NaN()
		if n > kept {
			all = (sse[0] + sse[1]) / float64(n-kept)
		}
		for md := 0; md < 2; md++ {
			f.modeSigma2[q][md] = all
			if nm[md] > km[md] {
				f.modeSigma2[q][md] = sse[md] / float64(nm[md]-km[md])
			}
		}
	}
	return f
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
