package compare

import (
	"errors"
	"math"
)

// Fit statistics and savings uncertainty of ASHRAE Guideline 14-2014
// (Measurement of Energy, Demand, and Water Savings), clause 4 and
// Annex B. The formulas are the published ones; the acceptance limits and
// the 1.26 factor are recalled from the guideline (memory) and stated as
// such wherever the outputs show them.

// Guideline 14 acceptance limits for hourly models (memory: the limits
// the guideline gives for hourly calibration, also used for hourly
// baseline models): CV(RMSE) at most 30 %, NMBE within ±10 %.
const (
	HourlyCVRMSELimit = 0.30
	HourlyNMBELimit   = 0.10
	// FSULimit is the guideline's test of a savings figure: its
	// fractional uncertainty at 68 % confidence below 50 % (memory).
	FSULimit = 0.50
	// g14Factor is the empirical 1.26 of the fractional savings
	// uncertainty formula (Annex B; memory).
	g14Factor = 1.26
)

// FitStats describes how well a baseline model fits its own period.
type FitStats struct {
	N int `json:"n"` // hours fitted
	P int `json:"p"` // parameters estimated (columns left after dropping collinear ones)
	// MeanY is the mean of the measured values, the denominator of CV and NMBE.
	MeanY Num `json:"mean_measured"`
	// CVRMSE = sqrt(Σ(y−ŷ)² / (n−p)) / ȳ, a fraction.
	CVRMSE Num `json:"cv_rmse"`
	// NMBE = Σ(y−ŷ) / ((n−p) ȳ), a fraction.
	NMBE Num `json:"nmbe"`
	// R2 = 1 − Σ(y−ŷ)² / Σ(y−ȳ)².
	R2 Num `json:"r2"`
	// Rho is the lag-1 autocorrelation of the residuals over consecutive
	// hours; NEff = n (1−ρ)/(1+ρ), the effective number of independent
	// hours (ρ below zero is taken as zero, the cautious side).
	Rho  Num `json:"residual_autocorrelation"`
	NEff Num `json:"n_effective"`
	// MeetsG14: CV(RMSE) and NMBE within the hourly limits.
	MeetsG14 bool `json:"meets_guideline14"`
}

// fitStats computes the statistics of measured y against predicted yhat
// for a model of p parameters. gapAfter[i] is true when hour i+1 does not
// follow hour i directly (its pair is left out of ρ); nil means the hours
// are consecutive.
func fitStats(y, yhat []float64, p int, gapAfter []bool) FitStats {
	n := len(y)
	s := FitStats{N: n, P: p}
	nan := Num(math.NaN())
	s.MeanY, s.CVRMSE, s.NMBE, s.R2, s.Rho, s.NEff = nan, nan, nan, nan, nan, nan
	if n == 0 || n <= p {
		return s
	}
	var sum float64
	for _, v := range y {
		sum += v
	}
	mean := sum / float64(n)
	var sse, se, sst, eSum float64
	e := make([]float64, n)
	for i := range y {
		e[i] = y[i] - yhat[i]
		sse += e[i] * e[i]
		se += e[i]
		sst += (y[i] - mean) * (y[i] - mean)
		eSum += e[i]
	}
	dof := float64(n - p)
	s.MeanY = Num(mean)
	if mean != 0 {
		s.CVRMSE = Num(math.Sqrt(sse/dof) / mean)
		s.NMBE = Num(se / (dof * mean))
	}
	if sst > 0 {
		s.R2 = Num(1 - sse/sst)
	}
	eMean := eSum / float64(n)
	var num, den float64
	for i := range e {
		d := e[i] - eMean
		den += d * d
		if i > 0 && (gapAfter == nil || !gapAfter[i-1]) {
			num += d * (e[i-1] - eMean)
		}
	}
	rho := 0.0
	if den > 0 {
		rho = num / den
	}
	s.Rho = Num(rho)
	s.NEff = Num(effectiveN(n, rho))
	s.MeetsG14 = !math.IsNaN(float64(s.CVRMSE)) && float64(s.CVRMSE) <= HourlyCVRMSELimit &&
		math.Abs(float64(s.NMBE)) <= HourlyNMBELimit
	return s
}

// effectiveN is n (1−ρ)/(1+ρ), with ρ held to [0, 0.999].
func effectiveN(n int, rho float64) float64 {
	rho = math.Max(0, math.Min(rho, 0.999))
	return float64(n) * (1 - rho) / (1 + rho)
}

// savingsU is the Guideline 14 (Annex B) uncertainty of savings over m
// reporting hours, at two-sided confidence conf, in the energy unit of
// baselineSum (the baseline model's projection over those hours):
//
//	ΔE = t(conf, n−p) × 1.26 × CV × E_base × sqrt((n/n′)(1 + 2/n′)(1/m))
//
// with n′ = n(1−ρ)/(1+ρ) correcting for the autocorrelation of hourly
// residuals. Divided by the savings it is the fractional savings
// uncertainty. NaN when the statistics are unknown.
func savingsU(s FitStats, m int, baselineSum, conf float64) float64 {
	cv, nEff := float64(s.CVRMSE), float64(s.NEff)
	if m <= 0 || s.N <= s.P || math.IsNaN(cv) || !(nEff > 0) {
		return math.NaN()
	}
	t, err := StudentTQuantile(0.5+conf/2, float64(s.N-s.P))
	if err != nil {
		return math.NaN()
	}
	n := float64(s.N)
	return t * g14Factor * math.Abs(cv*baselineSum) * math.Sqrt((n/nEff)*(1+2/nEff)/float64(m))
}

// modeVar is one occupancy mode's share of a prediction's variance: its
// residual variance (the modes' columns are disjoint, so each has its own
// parameters and its own scatter), its reporting hours and its part of
// s′(X′X)⁻¹s.
type modeVar struct {
	sigma2 float64
	m      int
	quad   float64
}

// predictionU is the half-width at two-sided confidence conf of
// Σ measured − Σ predicted over the reporting hours when nothing changed,
// from the regression itself. Per occupancy mode, the residual variance
// σ² = SSE/(n−p) times (m + s′(X′X)⁻¹s), where s is the sum of the mode's
// reporting-hour design rows (the parameters' error, common to every
// hour, plus each hour's own scatter); the modes add, and the total is
// inflated by n/n′ for the autocorrelation of hourly residuals:
//
//	U = t(conf, n−p) × sqrt(n/n′ × Σ_mode σ²_mode (m_mode + s′(X′X)⁻¹s))
//
// This is the ordinary least-squares prediction interval of a sum. The
// Guideline 14 formula approximates s′(X′X)⁻¹s by 2m/n, which holds for a
// two-parameter model, and uses one σ for all hours; with the tens of
// parameters of an hourly model, and a unit that is off at night, it
// understates the uncertainty, so the findings use the larger of the two.
func predictionU(s FitStats, modes []modeVar, conf float64) float64 {
	nEff := float64(s.NEff)
	if s.N <= s.P || !(nEff > 0) {
		return math.NaN()
	}
	t, err := StudentTQuantile(0.5+conf/2, float64(s.N-s.P))
	if err != nil {
		return math.NaN()
	}
	var v float64
	for _, md := range modes {
		if md.m > 0 {
			v += md.sigma2 * (float64(md.m) + md.quad)
		}
	}
	if math.IsNaN(v) {
		return math.NaN()
	}
	return t * math.Sqrt(float64(s.N)/nEff*v)
}

// errQuantile is returned for a probability or degrees of freedom out of range.
var errQuantile = errors.New("compare: Student's t quantile needs 0 < p < 1 and dof > 0")

// StudentTQuantile returns x with P(T ≤ x) = p for Student's t with dof
// degrees of freedom, by bisection on the distribution function, which is
// the regularised incomplete beta function (Abramowitz and Stegun 26.7.1,
// 26.5.8), evaluated by its continued fraction (A&S 26.5.8, in the form of
// Lentz's method).
func StudentTQuantile(p, dof float64) (float64, error) {
	if !(p > 0 && p < 1) || !(dof > 0) {
		return math.NaN(), errQuantile
	}
	if p == 0.5 {
		return 0, nil
	}
	lo, hi := -1.0, 1.0
	for studentTCDF(lo, dof) > p {
		lo *= 2
	}
	for studentTCDF(hi, dof) < p {
		hi *= 2
	}
	for i := 0; i < 200 && hi-lo > 1e-12*math.Max(1, math.Abs(hi)); i++ {
		mid := (lo + hi) / 2
		if studentTCDF(mid, dof) < p {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2, nil
}

// studentTCDF is P(T ≤ x): 1 − I_{ν/(ν+x²)}(ν/2, 1/2)/2 for x ≥ 0.
func studentTCDF(x, dof float64) float64 {
	tail := 0.5 * regIncBeta(dof/(dof+x*x), dof/2, 0.5)
	if x >= 0 {
		return 1 - tail
	}
	return tail
}

// regIncBeta is the regularised incomplete beta function I_x(a, b).
func regIncBeta(x, a, b float64) float64 {
	switch {
	case x <= 0:
		return 0
	case x >= 1:
		return 1
	}
	la, _ := math.Lgamma(a)
	lb, _ := math.Lgamma(b)
	lab, _ := math.Lgamma(a + b)
	front := math.Exp(lab - la - lb + a*math.Log(x) + b*math.Log1p(-x))
	if x < (a+1)/(a+b+2) {
		return front * betaCF(x, a, b) / a
	}
	return 1 - front*betaCF(1-x, b, a)/b
}

// lentzTiny stands in for a zero denominator in the modified Lentz method.
const lentzTiny = 1e-300

// betaCF evaluates the continued fraction of the incomplete beta function.
func betaCF(x, a, b float64) float64 {
	c, d := 1.0, 1-(a+b)*x/(a+1)
	if math.Abs(d) < lentzTiny {
		d = lentzTiny
	}
	d = 1 / d
	f := d
	for m := 1; m <= 300; m++ {
		fm := float64(m)
		// even step
		f *= lentzStep(fm*(b-fm)*x/((a+2*fm-1)*(a+2*fm)), &c, &d)
		// odd step
		delta := lentzStep(-(a+fm)*(a+b+fm)*x/((a+2*fm)*(a+2*fm+1)), &c, &d)
		f *= delta
		if math.Abs(delta-1) < 1e-15 {
			break
		}
	}
	return f
}

// lentzStep takes the next term, with numerator num, into the modified
// Lentz evaluation of a continued fraction whose running ratios are c and
// d; it returns the factor d·c by which the value changes.
func lentzStep(num float64, c, d *float64) float64 {
	*d = 1 + num**d
	if math.Abs(*d) < lentzTiny {
		*d = lentzTiny
	}
	*c = 1 + num / *c
	if math.Abs(*c) < lentzTiny {
		*c = lentzTiny
	}
	*d = 1 / *d
	return *d * *c
}

// leastSquares solves min ‖X β − y‖ for the n×p matrix X (row-major) by
// the normal equations on unit-scaled columns with a Cholesky
// factorisation that drops a column whose pivot falls below 1e-10 of its
// scale: a column that is (nearly) a combination of earlier ones carries
// no information here (a driver without spread, an empty occupancy mode),
// and its coefficient is set to zero. It returns β and the number of
// columns kept. n and p are small (hundreds to thousands of hours, a few
// tens of columns), so the normal equations on scaled columns are
// accurate enough; the tests check the fit against a known line.
func leastSquares(x []float64, n, p int, y []float64) (beta []float64, kept int) {
	f := solveLS(x, n, p, y)
	return f.beta, f.kept
}

// lsFit is a least-squares solution with what the variance of a
// prediction needs: the Cholesky factor of the scaled X'X.
type lsFit struct {
	p     int
	beta  []float64
	kept  int
	l     []float64 // lower triangle, p×p, scaled columns
	drop  []bool
	scale []float64
}

// quad returns s' (X'X)⁻¹ s over the kept columns: the variance of the
// prediction s'β in units of the residual variance.
func (f *lsFit) quad(s []float64) float64 {
	z := make([]float64, f.p)
	var q float64
	for j := 0; j < f.p; j++ {
		if f.drop[j] {
			continue
		}
		v := s[j] / f.scale[j]
		for k := 0; k < j; k++ {
			if !f.drop[k] {
				v -= f.l[j*f.p+k] * z[k]
			}
		}
		z[j] = v / f.l[j*f.p+j]
		q += z[j] * z[j]
	}
	return q
}

func solveLS(x []float64, n, p int, y []float64) *lsFit {
	scale := make([]float64, p)
	for j := 0; j < p; j++ {
		var s float64
		for i := 0; i < n; i++ {
			s += x[i*p+j] * x[i*p+j]
		}
		scale[j] = math.Sqrt(s)
	}
	a := make([]float64, p*p) // X'X of the scaled columns
	g := make([]float64, p)   // X'y
	for i := 0; i < n; i++ {
		row := x[i*p : i*p+p]
		for j := 0; j < p; j++ {
			if scale[j] == 0 {
				continue
			}
			xj := row[j] / scale[j]
			g[j] += xj * y[i]
			for k := 0; k <= j; k++ {
				if scale[k] != 0 {
					a[j*p+k] += xj * row[k] / scale[k]
				}
			}
		}
	}
	// Cholesky, lower triangle in place; dropped columns are zeroed.
	drop := make([]bool, p)
	for j := 0; j < p; j++ {
		if scale[j] == 0 {
			drop[j] = true
			continue
		}
		d := a[j*p+j]
		for k := 0; k < j; k++ {
			if !drop[k] {
				d -= a[j*p+k] * a[j*p+k]
			}
		}
		if d <= 1e-10 {
			drop[j] = true
			continue
		}
		l := math.Sqrt(d)
		a[j*p+j] = l
		for i := j + 1; i < p; i++ {
			if scale[i] == 0 {
				continue
			}
			s := a[i*p+j]
			for k := 0; k < j; k++ {
				if !drop[k] {
					s -= a[i*p+k] * a[j*p+k]
				}
			}
			a[i*p+j] = s / l
		}
	}
	// Forward and back substitution over the kept columns.
	z := make([]float64, p)
	for j := 0; j < p; j++ {
		if drop[j] {
			continue
		}
		s := g[j]
		for k := 0; k < j; k++ {
			if !drop[k] {
				s -= a[j*p+k] * z[k]
			}
		}
		z[j] = s / a[j*p+j]
	}
	beta := make([]float64, p)
	kept := 0
	for j := p - 1; j >= 0; j-- {
		if drop[j] {
			continue
		}
		s := z[j]
		for i := j + 1; i < p; i++ {
			if !drop[i] {
				s -= a[i*p+j] * beta[i]
			}
		}
		beta[j] = s / a[j*p+j]
		kept++
	}
	for j := range beta {
		if !drop[j] {
			beta[j] /= scale[j]
		}
	}
	return &lsFit{p: p, beta: beta, kept: kept, l: a, drop: drop, scale: scale}
}
