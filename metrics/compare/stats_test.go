package compare

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestStudentTQuantile checks the quantiles against a printed table of
// Student's t (the two-sided critical values found in any statistics
// text, e.g. NIST/SEMATECH e-Handbook of Statistical Methods, table
// 1.3.6.7.2; values to three decimals) and the normal limit (z for 0.84
// and 0.95: 0.994 and 1.645, standard normal table).
func TestStudentTQuantile(t *testing.T) {
	tests := []struct {
		name   string
		p, dof float64
		want   float64
	}{
		{"0.90 one dof", 0.90, 1, 3.078},
		{"0.95 six dof", 0.95, 6, 1.943},
		{"0.975 ten dof", 0.975, 10, 2.228},
		{"0.995 twenty dof", 0.995, 20, 2.845},
		{"0.95 hundred dof", 0.95, 100, 1.660},
		{"0.84 normal limit", 0.84, 1e7, 0.994},
		{"0.95 normal limit", 0.95, 1e7, 1.645},
		{"lower tail", 0.05, 6, -1.943},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := StudentTQuantile(tt.p, tt.dof)
			require.NoError(t, err)
			assert.InDelta(t, tt.want, got, 0.0006, "table values carry three decimals")
		})
	}
	_, err := StudentTQuantile(1, 5)
	assert.ErrorIs(t, err, errQuantile)
	_, err = StudentTQuantile(0.9, 0)
	assert.ErrorIs(t, err, errQuantile)
}

// TestFitStats_WorkedExample checks CV(RMSE), NMBE, R², the residual
// autocorrelation, the effective number of points and the fractional
// savings uncertainty against a small example worked by hand from the
// formulas of ASHRAE Guideline 14-2014 (clause 4.3 and Annex B, from
// memory):
//
//	predicted ŷ = 10 11 11 12 12 13 13 14
//	residual  e =  1  1  0  0  1  1  0  0      (y = ŷ + e)
//	measured  y = 11 12 11 12 13 14 13 14      Σy = 100, ȳ = 12.5
//	n = 8, p = 2 parameters, n − p = 6
//	Σe = 4, Σe² = 4, Σ(y − ȳ)² = 4 × 2.25 + 4 × 0.25 = 10
//	CV(RMSE) = sqrt(4/6) / 12.5 = 0.816497 / 12.5 = 0.0653197
//	NMBE     = 4 / (6 × 12.5) = 0.0533333
//	R²       = 1 − 4/10 = 0.6
//	ρ (lag 1): ē = 0.5, deviations ±0.5 in pairs: ++−−++−−
//	           Σ d_i d_(i−1) = 4 × 0.25 − 3 × 0.25 = 0.25, Σ d² = 2, ρ = 0.125
//	n′ = 8 × (1 − 0.125)/(1 + 0.125) = 6.22222
//	over m = 4 reporting hours with a projected baseline of 60 kWh, at 90 %:
//	t(0.95, 6) = 1.943 (table)
//	sqrt((8/6.22222)(1 + 2/6.22222)/4) = sqrt(1.285714 × 1.321429 / 4) = 0.651724
//	ΔE = 1.943 × 1.26 × 0.0653197 × 60 × 0.651724 = 6.253 kWh
func TestFitStats_WorkedExample(t *testing.T) {
	yhat := []float64{10, 11, 11, 12, 12, 13, 13, 14}
	y := []float64{11, 12, 11, 12, 13, 14, 13, 14}
	s := fitStats(y, yhat, 2, nil)
	assert.Equal(t, 8, s.N)
	assert.InDelta(t, 12.5, float64(s.MeanY), 1e-12)
	assert.InDelta(t, 0.0653197, float64(s.CVRMSE), 1e-7)
	assert.InDelta(t, 0.0533333, float64(s.NMBE), 1e-7)
	assert.InDelta(t, 0.6, float64(s.R2), 1e-12)
	assert.InDelta(t, 0.125, float64(s.Rho), 1e-12)
	assert.InDelta(t, 6.22222, float64(s.NEff), 1e-5)
	assert.True(t, s.MeetsG14, "6.5 % and 5.3 % are inside 30 % and ±10 %")
	// 1.943 carries three decimals: ±0.0005 in t is ±0.0017 kWh.
	assert.InDelta(t, 6.253, savingsU(s, 4, 60, 0.90), 0.003)

	// A gap after the fourth hour drops the pair (index 4, index 3), whose
	// product is −0.25; by hand, products of the pairs (i, i−1):
	// 1-0 +.25, 2-1 −.25, 3-2 +.25, 4-3 −.25 (dropped), 5-4 +.25, 6-5 −.25,
	// 7-6 +.25: Σ = 0.5, ρ = 0.5/2 = 0.25.
	gap := make([]bool, 8)
	gap[3] = true
	assert.InDelta(t, 0.25, float64(fitStats(y, yhat, 2, gap).Rho), 1e-12)

	// Guideline 14's limits: CV(RMSE) 31 % fails.
	big := fitStats([]float64{1, 0, 1, 0, 1, 0}, []float64{0.5, 0.5, 0.5, 0.5, 0.5, 0.5}, 1, nil)
	assert.False(t, big.MeetsG14, "CV(RMSE) %v", big.CVRMSE)
	// Negative autocorrelation is taken as none: n′ = n.
	assert.InDelta(t, 6, float64(big.NEff), 1e-12)
}

// TestLeastSquares recovers a known plane exactly and drops a column
// that repeats another.
func TestLeastSquares(t *testing.T) {
	// y = 2 + 3 a − 0.5 b; column 3 is 2a (collinear), column 4 all zero.
	var x, y []float64
	for i := 0; i < 30; i++ {
		a, b := float64(i%7), float64((i*5)%11)
		x = append(x, 1, a, b, 2*a, 0)
		y = append(y, 2+3*a-0.5*b)
	}
	beta, kept := leastSquares(x, 30, 5, y)
	assert.Equal(t, 3, kept)
	for i := 0; i < 30; i++ {
		var s float64
		for j := 0; j < 5; j++ {
			s += beta[j] * x[i*5+j]
		}
		assert.InDelta(t, y[i], s, 1e-9)
	}
	assert.InDelta(t, 2, beta[0], 1e-9)
	assert.InDelta(t, -0.5, beta[2], 1e-9)
	assert.InDelta(t, 3, beta[1]+2*beta[3], 1e-9)
	assert.False(t, math.IsNaN(beta[4]))
}
