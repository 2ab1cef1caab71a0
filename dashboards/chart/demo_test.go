package chart

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/psychro"
)

// Demo data: an invented month of one air handler in a humid summer, made
// up for these tests and the previews; it stands for no real building.

// demoHours returns n hourly instants from 1 June 2026 00:00 in Chicago.
func demoHours(t testing.TB, n int) ([]time.Time, *time.Location) {
	t.Helper()
	loc, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	t0 := time.Date(2026, 6, 1, 0, 0, 0, 0, loc)
	out := make([]time.Time, n)
	for i := range out {
		out[i] = t0.Add(time.Duration(i) * time.Hour)
	}
	return out, loc
}

// demoEnergy returns three hourly energy series (kWh): cooling, reheat, fan.
func demoEnergy(n int) []Series {
	r := rand.New(rand.NewPCG(7, 11))
	cool, reheat, fan := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range n {
		h := float64(i % 24)
		day := 0.5 + 0.5*math.Sin((h-9)/24*2*math.Pi)
		cool[i] = 18 + 22*day + 4*r.Float64()
		reheat[i] = math.Max(0, 9-7*day+2*r.NormFloat64())
		fan[i] = 3.2 + 0.3*r.Float64()
	}
	return []Series{
		{Name: "Cooling", Values: cool, Class: "cooling"},
		{Name: "Reheat", Values: reheat, Class: "reheat"},
		{Name: "Supply fan", Values: fan, Class: "fan"},
	}
}

// demoPaths returns n hourly processes: entering, coil leaving, supply.
func demoPaths(t testing.TB, n int) []PsyPath {
	t.Helper()
	r := rand.New(rand.NewPCG(3, 5))
	p := psychro.StandardPressurePa
	out := make([]PsyPath, n)
	for i := range n {
		h := float64(i % 24)
		day := 0.5 + 0.5*math.Sin((h-9)/24*2*math.Pi)
		tIn := 24 + 6*day + r.NormFloat64()
		rhIn := 0.72 - 0.2*day + 0.04*r.NormFloat64()
		wIn, err := psychro.HumRatioFromRH(tIn, rhIn, p)
		require.NoError(t, err)
		tLeave := 11 + 0.6*r.NormFloat64()
		wLeave, err := psychro.HumRatioFromRH(tLeave, psychro.DefaultLeavingRH, p)
		require.NoError(t, err)
		wLeave = math.Min(wLeave, wIn)
		tSup := 17 + 1.5*r.Float64()
		out[i] = PsyPath{
			Title: "Hour " + time.Date(2026, 6, 1+i/24, i%24, 0, 0, 0, time.UTC).Format("2 Jan 15:04"),
			Points: []PsyPoint{
				{TdbC: tIn, W: wIn, Label: "Mixed air"},
				{TdbC: tLeave, W: wLeave, Label: "Coil leaving"},
				{TdbC: tSup, W: wLeave, Label: "Supply"},
			},
		}
	}
	return out
}
