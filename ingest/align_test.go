package ingest

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

var t0 = time.Date(2026, 7, 14, 12, 0, 0, 0, time.UTC)

func at(d string) time.Time {
	x, err := time.ParseDuration(d)
	if err != nil {
		panic(err)
	}
	return t0.Add(x)
}

func alignHours(t *testing.T, hours int, series ...Series) []*metrics.Hour {
	t.Helper()
	var out []*metrics.Hour
	require.NoError(t, Align("AHU-T", t0, hours, time.Minute, series, func(h *metrics.Hour) error {
		out = append(out, h)
		return nil
	}))
	require.Len(t, out, hours)
	return out
}

// steps returns the indexes of non-NaN values.
func present(vals []float64) (n int, first, last int) {
	first, last = -1, -1
	for i, v := range vals {
		if !math.IsNaN(v) {
			if first < 0 {
				first = i
			}
			last = i
			n++
		}
	}
	return
}

// The expectations below are worked out by hand from the rule: a step's
// value is the last good sample at or before the step's midpoint
// (hh:mm:30), if it is no older than the stale limit.
func TestAlign_Interval(t *testing.T) {
	var s []Sample
	for i := 0; i < 60; i++ {
		s = append(s, Sample{t0.Add(time.Duration(i) * time.Minute), 20 + float64(i)/10})
	}
	h := alignHours(t, 1, Series{Role: metrics.RoleSupplyTemp, Samples: s})[0]
	v := h.Values[metrics.RoleSupplyTemp]
	assert.Equal(t, 1.0, h.Quality[metrics.RoleSupplyTemp].Coverage)
	assert.Equal(t, 60, h.Quality[metrics.RoleSupplyTemp].Samples)
	assert.InDelta(t, 20.0, v[0], 1e-12)
	assert.InDelta(t, 25.9, v[59], 1e-12)
}

func TestAlign_ChangeOfValueAndStale(t *testing.T) {
	s := []Sample{{at("10s"), 20}, {at("20m"), 22}}
	h := alignHours(t, 1, Series{Role: metrics.RoleSupplyTemp, Stale: 15 * time.Minute, Samples: s})[0]
	v := h.Values[metrics.RoleSupplyTemp]
	// 20 holds for midpoints 12:00:30 .. 12:14:30 (15 steps, 12:15:30 is
	// more than 15 min after 12:00:10); 22 for 12:20:30 .. 12:34:30 (15
	// steps), after which it too is older than the stale limit.
	n, first, _ := present(v[:20])
	assert.Equal(t, 15, n)
	assert.Equal(t, 0, first)
	assert.True(t, math.IsNaN(v[15]))
	assert.Equal(t, 22.0, v[20])
	n, _, last := present(v[20:])
	assert.Equal(t, 15, n)
	assert.Equal(t, 14, last)
	assert.InDelta(t, 30.0/60, h.Quality[metrics.RoleSupplyTemp].Coverage, 1e-12)
}

func TestAlign_OutOfRangeEndsHold(t *testing.T) {
	s := []Sample{{at("0s"), 0.5}, {at("30m"), 1.5}, {at("45m"), 0.6}}
	h := alignHours(t, 1, Series{Role: metrics.RoleEnteringRH, Stale: time.Hour, Samples: s})[0]
	v := h.Values[metrics.RoleEnteringRH]
	q := h.Quality[metrics.RoleEnteringRH]
	assert.Equal(t, 0.5, v[29])
	assert.True(t, math.IsNaN(v[30]), "RH 150 %% is excluded and the 0.5 no longer holds")
	assert.True(t, math.IsNaN(v[44]))
	assert.Equal(t, 0.6, v[45])
	assert.Equal(t, 1, q.OutOfRange)
	assert.Equal(t, 3, q.Samples)
	assert.InDelta(t, 45.0/60, q.Coverage, 1e-12)
}

func TestAlign_LeadInAndGapAcrossHours(t *testing.T) {
	s := []Sample{
		{at("-5m"), 10}, // logged before the first hour: holds to 12:10
		{at("90m"), 11}, // 13:30, after a gap
		{at("100m"), math.NaN()},
	}
	hs := alignHours(t, 2, Series{Role: metrics.RoleLeavingTemp, Stale: 15 * time.Minute, Samples: s})
	n, first, last := present(hs[0].Values[metrics.RoleLeavingTemp])
	assert.Equal(t, 10, n) // midpoints 12:00:30 .. 12:09:30
	assert.Equal(t, 0, first)
	assert.Equal(t, 9, last)
	assert.Equal(t, 0, hs[0].Quality[metrics.RoleLeavingTemp].Samples)
	n, first, last = present(hs[1].Values[metrics.RoleLeavingTemp])
	assert.Equal(t, 10, n) // 13:30:30 .. 13:39:30; the NaN at 13:40 ends it
	assert.Equal(t, 30, first)
	assert.Equal(t, 39, last)
	assert.Equal(t, 1, hs[1].Quality[metrics.RoleLeavingTemp].NotFinite)
	assert.Equal(t, 2, hs[1].Quality[metrics.RoleLeavingTemp].Samples)
}

func TestAlign_UnsortedAndMultipleRoles(t *testing.T) {
	flow := []Sample{{at("30m"), 5}, {at("0s"), 4}} // out of order
	temp := []Sample{{at("59m59s"), 13}}            // last sample after the last midpoint
	h := alignHours(t, 1,
		Series{Role: metrics.RoleSupplyFlow, Stale: time.Hour, Samples: flow},
		Series{Role: metrics.RoleLeavingTemp, Samples: temp})[0]
	assert.Equal(t, 4.0, h.Values[metrics.RoleSupplyFlow][0])
	assert.Equal(t, 5.0, h.Values[metrics.RoleSupplyFlow][30])
	assert.Equal(t, 1.0, h.Coverage(metrics.RoleSupplyFlow))
	assert.Equal(t, 0.0, h.Coverage(metrics.RoleLeavingTemp))
	assert.Equal(t, 1, h.Quality[metrics.RoleLeavingTemp].Samples, "counted in the hour it was logged")
	assert.False(t, h.Has(metrics.RoleReheatPower))
}

func TestAlign_Errors(t *testing.T) {
	err := Align("A", t0, 1, 7*time.Minute, nil, func(*metrics.Hour) error { return nil })
	assert.ErrorContains(t, err, "does not divide an hour")
	err = Align("A", t0, 1, time.Minute, []Series{{Role: "humidity"}}, func(*metrics.Hour) error { return nil })
	assert.ErrorContains(t, err, `unknown role "humidity"`)
}

// TestAligner_Incremental: pushing samples as they are read and emitting
// hour by hour gives the same hours as aligning all at once, and a sample
// for an hour already emitted is counted as late.
func TestAligner_Incremental(t *testing.T) {
	var s []Sample
	for i := -10; i < 180; i++ {
		s = append(s, Sample{t0.Add(time.Duration(i) * time.Minute), 20 + float64(i%17)/3})
	}
	batch := alignHours(t, 3, Series{Role: metrics.RoleSupplyTemp, Samples: s})

	a, err := NewAligner("AHU-T", t0, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
	require.NoError(t, err)
	var got []*metrics.Hour
	emit := func(h *metrics.Hour) error { got = append(got, h); return nil }
	for _, smp := range s {
		a.Push(metrics.RoleSupplyTemp, smp)
		require.NoError(t, a.Emit(smp.Time, emit))
	}
	require.NoError(t, a.Emit(t0.Add(3*time.Hour), emit))
	require.Len(t, got, 3)
	for i := range got {
		assert.True(t, sameValues(batch[i].Values, got[i].Values))
		assert.Equal(t, batch[i].Quality, got[i].Quality)
	}
	a.Push(metrics.RoleSupplyTemp, Sample{t0.Add(30 * time.Minute), 99})
	assert.Equal(t, 1, a.Late())
	assert.Equal(t, t0.Add(3*time.Hour), a.Next())
}

// TestAlign_HoldsMoistureNotRH: an RH logged every 15 minutes beside a
// temperature logged every minute that swings by 2 K. The moisture of the
// air does not change, so the humidity ratio computed from each step's
// aligned RH and temperature must stay at that of the logged sample (the
// physics: an RH belongs to the temperature of its own instant). Holding
// the RH itself would move W by about 6 % per kelvin.
func TestAlign_HoldsMoistureNotRH(t *testing.T) {
	const p = psychro.StandardPressurePa
	wTrue, err := psychro.HumRatioFromDewPoint(14, p)
	require.NoError(t, err)
	var temps, rhs []Sample
	tAt := func(i int) float64 { return 24 + math.Sin(2*math.Pi*float64(i)/20) }
	for i := 0; i < 60; i++ {
		temps = append(temps, Sample{t0.Add(time.Duration(i) * time.Minute), tAt(i)})
		if i%15 == 0 {
			rh, err := psychro.RHFromHumRatio(tAt(i), wTrue, p)
			require.NoError(t, err)
			rhs = append(rhs, Sample{t0.Add(time.Duration(i) * time.Minute), rh})
		}
	}
	h := alignHours(t, 1, Series{Role: metrics.RoleEnteringTemp, Samples: temps}, Series{Role: metrics.RoleEnteringRH, Samples: rhs})[0]
	for i := 0; i < 60; i++ {
		w, err := psychro.HumRatioFromRH(h.Values[metrics.RoleEnteringTemp][i], h.Values[metrics.RoleEnteringRH][i], p)
		require.NoError(t, err)
		assert.InEpsilon(t, wTrue, w, 1e-9, "step %d", i)
	}
	// Without its temperature an RH is held as logged.
	h = alignHours(t, 1, Series{Role: metrics.RoleEnteringRH, Samples: rhs})[0]
	assert.Equal(t, rhs[1].Value, h.Values[metrics.RoleEnteringRH][20])
}

// TestAlign_FlatWhateverTheInterval: an RH logged every 15 minutes that
// sticks for seven hours gives four samples an hour, too few for a one-hour
// rule; every hour of the stuck run must still report a run of three hours
// or more (the samples after the hour are already pushed), and the hours
// around it none.
func TestAlign_FlatWhateverTheInterval(t *testing.T) {
	var s []Sample
	for i := 0; i < 12*4; i++ {
		v := 0.55 + 0.001*float64(i%7)
		if i >= 2*4 && i < 9*4 {
			v = 0.612
		}
		s = append(s, Sample{t0.Add(time.Duration(i) * 15 * time.Minute), v})
	}
	hs := alignHours(t, 12, Series{Role: metrics.RoleEnteringRH, Samples: s})
	for i, h := range hs {
		q := h.Quality[metrics.RoleEnteringRH]
		if i >= 2 && i < 9 {
			assert.GreaterOrEqual(t, q.FlatFor, 3*time.Hour, "hour %d", i)
		} else {
			assert.Zero(t, q.FlatFor, "hour %d", i)
		}
		assert.False(t, q.Flat, "four samples an hour are too few for the one-hour rule")
	}
}

// TestAligner_SinceIsSub: the aligner's own time difference is t.Sub of
// its first hour, to the nanosecond, for times near it and far from it
// (where Sub saturates), in other zones and with a monotonic reading.
func TestAligner_SinceIsSub(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	zone := time.FixedZone("UTC-5", -5*3600)
	for _, from := range []time.Time{time.Date(2026, 7, 14, 9, 30, 0, 0, time.UTC), time.Date(1970, 1, 1, 0, 0, 0, 0, zone)} {
		a, err := NewAligner("AHU-1", from, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
		require.NoError(t, err)
		ts := []time.Time{
			time.Time{}, time.Date(1, 1, 1, 0, 0, 0, 1, time.UTC), time.Date(9999, 12, 31, 23, 59, 59, 999999999, zone),
			a.base.Add(-1), a.base, a.base.Add(1), a.base.Add(136 * 365 * 24 * time.Hour), a.base.Add(-136 * 365 * 24 * time.Hour),
			time.Unix(a.baseSec+1<<32, 5), time.Unix(a.baseSec-1<<32, 5), time.Unix(a.baseSec+1<<32-1, 999999999), time.Unix(a.baseSec-1<<32+1, 0),
			time.Now(),
		}
		for k := 0; k < 10000; k++ {
			ts = append(ts, time.Unix(a.baseSec+rng.Int64N(2<<33)-1<<33, rng.Int64N(1e9)).In(zone))
			ts = append(ts, a.base.Add(time.Duration(rng.Int64N(int64(400*24*time.Hour)))-200*24*time.Hour))
		}
		for _, tm := range ts {
			require.Equal(t, int64(tm.Sub(a.base)), a.since(tm), "%v from %v", tm, a.base)
		}
	}
}
