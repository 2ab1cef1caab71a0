package ingest

import (
	"context"
	"errors"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// recycleSeries is a day of one-minute temperature and a slower RH (its
// vapour pressure follows the temperature), with a gap, a NaN and an
// implausible value, so every kind of step a hour can hold is exercised.
func recycleSeries() []Series {
	var temp, rh, flow []Sample
	for m := -30; m < 24*60; m++ {
		ts := t0.Add(time.Duration(m) * time.Minute)
		if m < 200 || m > 260 { // a gap of an hour
			temp = append(temp, Sample{ts, 24 + 3*math.Sin(float64(m)/50)})
		}
		if m%7 == 0 {
			v := 0.5 + 0.1*math.Sin(float64(m)/90)
			if m == 700 {
				v = math.NaN()
			}
			rh = append(rh, Sample{ts.Add(13 * time.Second), v})
		}
		if m%15 == 0 {
			v := 3.0
			if m == 900 {
				v = -50 // not a physical airflow
			}
			flow = append(flow, Sample{ts, v})
		}
	}
	return []Series{
		{Role: metrics.RoleEnteringTemp, Samples: temp},
		{Role: metrics.RoleEnteringRH, Samples: rh},
		{Role: metrics.RoleSupplyFlow, Samples: flow},
	}
}

// copyHour is a deep copy of h: what a consumer done with h keeps.
func copyHour(h *metrics.Hour) *metrics.Hour {
	c := &metrics.Hour{AHU: h.AHU, Start: h.Start, Step: h.Step,
		Values: map[metrics.Role][]float64{}, Quality: map[metrics.Role]metrics.RoleQuality{}}
	for r, v := range h.Values {
		c.Values[r] = append([]float64(nil), v...)
	}
	for r, q := range h.Quality {
		c.Quality[r] = q
	}
	return c
}

// sameHour asserts that two hours hold the same bits, NaN steps included.
func sameHour(t *testing.T, want, got *metrics.Hour) {
	t.Helper()
	require.Equal(t, want.AHU, got.AHU)
	require.Equal(t, want.Start, got.Start)
	require.Equal(t, want.Quality, got.Quality, "hour %s", want.Start)
	require.Len(t, got.Values, len(want.Values))
	for r, w := range want.Values {
		g := got.Values[r]
		require.Len(t, g, len(w))
		for i := range w {
			require.Equal(t, math.Float64bits(w[i]), math.Float64bits(g[i]), "%s %s step %d", want.Start, r, i)
		}
	}
}

// An aligner that fills recycled hours again yields the same hours, bit
// for bit, as one that allocates each hour (the reference: the same
// samples aligned without recycling), and reuses the hours it is given.
func TestAligner_Recycle(t *testing.T) {
	const hours = 24
	series := recycleSeries()
	want := alignHours(t, hours, series...)

	stale := map[metrics.Role]time.Duration{}
	for _, s := range series {
		stale[s.Role] = s.Stale
	}
	a, err := NewAligner("AHU-T", t0, time.Minute, stale)
	require.NoError(t, err)
	for _, s := range series {
		for _, smp := range s.Samples {
			a.Push(s.Role, smp)
		}
	}
	var got []*metrics.Hour
	made := map[*metrics.Hour]bool{}
	require.NoError(t, a.Emit(t0.Add(hours*time.Hour), func(h *metrics.Hour) error {
		made[h] = true
		got = append(got, copyHour(h))
		// Spoil what the consumer hands back: the next hour must
		// overwrite every step and every quality.
		for _, v := range h.Values {
			for i := range v {
				v[i] = -1
			}
		}
		for r := range h.Quality {
			h.Quality[r] = metrics.RoleQuality{Samples: -1, OtherUnit: "x"}
		}
		a.Recycle(h)
		return nil
	}))
	require.Len(t, got, hours)
	for i := range want {
		sameHour(t, want[i], got[i])
	}
	assert.Len(t, made, 1, "each hour handed back is filled again")
}

// Hours of another air handler or another grid are not filled again: they
// would not hold the aligner's roles.
func TestAligner_RecycleForeign(t *testing.T) {
	a, err := NewAligner("AHU-T", t0, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
	require.NoError(t, err)
	b, err := NewAligner("AHU-U", t0, time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
	require.NoError(t, err)
	c, err := NewAligner("AHU-T", t0, 5*time.Minute, map[metrics.Role]time.Duration{metrics.RoleSupplyTemp: 0})
	require.NoError(t, err)
	var foreign []*metrics.Hour
	for _, x := range []*Aligner{b, c} {
		require.NoError(t, x.Emit(t0.Add(time.Hour), func(h *metrics.Hour) error {
			foreign = append(foreign, h)
			return nil
		}))
	}
	for _, h := range foreign {
		a.Recycle(h)
	}
	a.Recycle(nil)
	require.NoError(t, a.Emit(t0.Add(time.Hour), func(h *metrics.Hour) error {
		assert.NotContains(t, foreign, h)
		assert.Len(t, h.Values[metrics.RoleSupplyTemp], 60)
		return nil
	}))
}

// RecordHours.Release hands each hour to the aligner of its air handler:
// the hours of two air handlers come back filled for their own.
func TestRecordHours_Release(t *testing.T) {
	var recs []Record
	for m := 0; m < 6*60; m++ {
		ts := t0.Add(time.Duration(m) * time.Minute)
		recs = append(recs,
			Record{Series: "SAT", Time: ts, Value: 15 + float64(m%60)/60},
			Record{Series: "OAT", Time: ts, Value: 30},
		)
	}
	units := map[string]AirHandlerPoints{
		"AHU-1": {Points: map[metrics.Role]metrics.PointRef{
			metrics.RoleSupplyTemp:  {Column: "SAT", Unit: "C"},
			metrics.RoleOutdoorTemp: {Column: "OAT", Unit: "C"},
		}},
		"AHU-2": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleOutdoorTemp: {Column: "OAT", Unit: "C"}}},
	}
	run := func(release bool) ([]*metrics.Hour, int) {
		rh := &RecordHours{Src: &sliceSource{recs: recs}, AirHandlers: units, Step: time.Minute}
		var out []*metrics.Hour
		made := map[*metrics.Hour]bool{}
		require.NoError(t, rh.Hours(context.Background(), []string{"AHU-1", "AHU-2"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
			made[h] = true
			out = append(out, copyHour(h))
			if release {
				rh.Release(h)
			}
			return nil
		}))
		return out, len(made)
	}
	want, _ := run(false)
	got, made := run(true)
	require.Len(t, got, 12)
	require.Len(t, want, 12)
	for i := range want {
		sameHour(t, want[i], got[i])
	}
	assert.Equal(t, 2, made, "one hour per air handler, filled again and again")
}

// A store read keeps its aligners only while it lasts: an agent reading a
// portfolio group by group through one StoreHours would otherwise keep
// every air handler's aligner (and its recycled hours) alive for the
// whole run. Hours released during the read are still filled again.
func TestStoreHours_ForgetsAlignersAfterTheRead(t *testing.T) {
	for _, batch := range []bool{false, true} {
		t.Run(fmt.Sprintf("batch=%v", batch), func(t *testing.T) {
			var temp []Sample
			for i := 0; i < 6*60; i++ {
				temp = append(temp, Sample{t0.Add(time.Duration(i) * time.Minute), 15 + float64(i%40)/4})
			}
			r := &memReader{series: map[string][]Sample{"SAT": temp}}
			u := AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT", Unit: "C"}}}
			sh := &StoreHours{Reader: r, AirHandlers: map[string]AirHandlerPoints{"A": u, "B": u}, Step: time.Minute,
				IsMissing: func(err error) bool { return errors.Is(err, errNoSeries) }}
			if batch {
				sh.Reader = memBatchReader{r}
			}
			seen := map[*metrics.Hour]int{}
			require.NoError(t, sh.Hours(context.Background(), []string{"A", "B"}, t0, t0.Add(6*time.Hour), func(h *metrics.Hour) error {
				seen[h]++
				sh.Release(h)
				return nil
			}))
			n := 0
			for _, c := range seen {
				n += c
			}
			assert.Equal(t, 12, n, "six hours of each air handler")
			assert.Less(t, len(seen), 12, "released hours are filled again during the read")
			sh.recycler.mu.Lock()
			defer sh.recycler.mu.Unlock()
			assert.Empty(t, sh.recycler.by, "no aligner is kept past the read")
		})
	}
}
