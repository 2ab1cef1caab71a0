package chart

import (
	"math"
	"testing"
	"time"
	_ "time/tzdata" // zones for the tests on machines without a zone database

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// isNice reports whether step is 1, 2 or 5 times a power of ten (common
// practice for axis ticks, no source).
func isNice(step float64) bool {
	if !(step > 0) {
		return false
	}
	m := step / math.Pow(10, math.Floor(math.Log10(step)+1e-9))
	for _, n := range []float64{1, 2, 5, 10} {
		if math.Abs(m-n) < 1e-6 {
			return true
		}
	}
	return false
}

func TestNiceAxis(t *testing.T) {
	cases := []struct {
		name   string
		lo, hi float64
		zero   bool
	}{
		{"energy", 0, 53.7, true},
		{"temperatures", 10.4, 14.9, false},
		{"negative", -37, -2, false},
		{"mixed", -0.013, 0.042, false},
		{"large", 0, 123456, true},
		{"tiny", 1e-6, 3e-6, false},
		{"constant", 7, 7, false},
		{"zero constant", 0, 0, true},
		{"reversed", 9, 1, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a := niceAxis(c.lo, c.hi, 6, c.zero, nil, nil)
			require.GreaterOrEqual(t, len(a.ticks), 2)
			assert.True(t, isNice(a.step), "step %g", a.step)
			assert.LessOrEqual(t, a.lo, math.Min(c.lo, c.hi))
			assert.GreaterOrEqual(t, a.hi, math.Max(c.lo, c.hi))
			if c.zero {
				assert.LessOrEqual(t, a.lo, 0.0)
			}
			for i, v := range a.ticks {
				k := v / a.step
				assert.InDelta(t, math.Round(k), k, 1e-6, "tick %g is a multiple of the step", v)
				if i > 0 {
					assert.InDelta(t, a.step, v-a.ticks[i-1], a.step*1e-6)
				}
			}
		})
	}
	lo, hi := 12.0, 16.0
	a := niceAxis(0, 100, 5, false, &lo, &hi)
	assert.Equal(t, 12.0, a.lo)
	assert.Equal(t, 16.0, a.hi)
}

func TestTickFormat(t *testing.T) {
	cases := []struct {
		ticks []float64
		step  float64
		want  []string
	}{
		{[]float64{0, 0.5, 1}, 0.5, []string{"0", "0.5", "1"}},
		{[]float64{-20, 0, 20}, 20, []string{"-20", "0", "20"}},
		{[]float64{0, 20000, 40000}, 20000, []string{"0", "20k", "40k"}},
		{[]float64{0, 2500, 5000, 7500, 10000}, 2500, []string{"0", "2.5k", "5k", "7.5k", "10k"}},
		{[]float64{0.001, 0.002}, 0.001, []string{"0.001", "0.002"}},
	}
	for _, c := range cases {
		f := newTickFormat(c.ticks, c.step)
		for i, v := range c.ticks {
			assert.Equal(t, c.want[i], f.label(v))
		}
	}
}

// TestTimeTicks: ticks fall on round local times of the chart's zone,
// checked with the time package's own calendar, across a daylight-saving
// change and in a zone with a half-hour offset.
func TestTimeTicks(t *testing.T) {
	chicago, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	kolkata, err := time.LoadLocation("Asia/Kolkata")
	require.NoError(t, err)
	cases := []struct {
		name   string
		t0, t1 time.Time
		loc    *time.Location
		maxN   int
		unit   string // "hour" or "day"
	}{
		// 2026-03-08 02:00 local does not exist in Chicago; 2026-11-01 01:00 happens twice.
		{"spring forward", time.Date(2026, 3, 7, 12, 0, 0, 0, chicago), time.Date(2026, 3, 9, 12, 0, 0, 0, chicago), chicago, 10, "hour"},
		{"fall back", time.Date(2026, 10, 31, 12, 0, 0, 0, chicago), time.Date(2026, 11, 2, 12, 0, 0, 0, chicago), chicago, 10, "hour"},
		{"half-hour zone", time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC), time.Date(2026, 6, 2, 0, 0, 0, 0, time.UTC), kolkata, 10, "hour"},
		{"month", time.Date(2026, 6, 1, 0, 0, 0, 0, chicago), time.Date(2026, 7, 1, 0, 0, 0, 0, chicago), chicago, 9, "day"},
		{"month across DST", time.Date(2026, 10, 20, 0, 0, 0, 0, chicago), time.Date(2026, 11, 20, 0, 0, 0, 0, chicago), chicago, 9, "day"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			ticks := timeTicks(c.t0, c.t1, c.loc, c.maxN)
			require.GreaterOrEqual(t, len(ticks), 2)
			assert.LessOrEqual(t, len(ticks), c.maxN)
			var prev time.Time
			for i, tk := range ticks {
				lt := tk.t.In(c.loc)
				assert.False(t, tk.t.Before(c.t0) || tk.t.After(c.t1), "tick %v inside the range", lt)
				assert.Zero(t, lt.Minute(), "tick %v on a whole local hour", lt)
				assert.Zero(t, lt.Second())
				if c.unit == "day" {
					assert.Zero(t, lt.Hour(), "tick %v at local midnight", lt)
				} else {
					assert.Equal(t, lt.Format("15:04"), tk.label)
				}
				if i > 0 {
					assert.True(t, tk.t.After(prev), "ticks increase")
				}
				prev = tk.t
			}
			assert.NotEmpty(t, ticks[0].second, "the first tick names its date")
		})
	}
}
