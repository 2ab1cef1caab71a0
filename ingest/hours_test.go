package ingest

import (
	"context"
	"errors"
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// memReader is a fake store: samples by point name.
type memReader struct {
	series map[string][]Sample
	reads  int
}

var errNoSeries = errors.New("no such series")

func (m *memReader) ReadSeries(_ context.Context, ref metrics.PointRef, _ psychro.Kind, from, to time.Time, fn func(Sample) error) error {
	s, ok := m.series[ref.Name()]
	if !ok {
		return errNoSeries
	}
	m.reads++
	for _, x := range s {
		if !x.Time.Before(from) && x.Time.Before(to) {
			if err := fn(x); err != nil {
				return err
			}
		}
	}
	return nil
}

var _ SeriesReader = (*memReader)(nil)

func TestStoreHours_ChunksMatchOneRead(t *testing.T) {
	var temp []Sample
	for i := -20; i < 3*24*60; i += 3 {
		temp = append(temp, Sample{t0.Add(time.Duration(i) * time.Minute), 15 + float64(i%40)/4})
	}
	r := &memReader{series: map[string][]Sample{"SAT": temp}}
	u := UnitPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT", Unit: "C"},
		metrics.RoleEnteringTemp: {Point: "MAT", Unit: "C"}}}
	collect := func(chunk time.Duration) ([]*metrics.Hour, *StoreHours) {
		sh := &StoreHours{Reader: r, Units: map[string]UnitPoints{"A": u}, Step: time.Minute, Chunk: chunk,
			IsMissing: func(err error) bool { return errors.Is(err, errNoSeries) }}
		var out []*metrics.Hour
		require.NoError(t, sh.Hours(context.Background(), []string{"A"}, t0, t0.Add(72*time.Hour), func(h *metrics.Hour) error {
			out = append(out, h)
			return nil
		}))
		return out, sh
	}
	day, sh := collect(24 * time.Hour)
	hourly, _ := collect(time.Hour)
	require.Len(t, day, 72)
	require.Len(t, hourly, 72)
	for i := range day {
		assert.True(t, sameValues(day[i].Values, hourly[i].Values), "hour %d", i)
		assert.Equal(t, t0.Add(time.Duration(i)*time.Hour), day[i].Start)
	}
	assert.Equal(t, 1.0, day[0].Coverage(metrics.RoleSupplyTemp), "the lead-in holds into the first hour")
	assert.Equal(t, 0.0, day[0].Coverage(metrics.RoleEnteringTemp))
	assert.Equal(t, []string{"A entering_temp (MAT)"}, sh.Missing)
	assert.Equal(t, len(temp)-2, sh.Read, "reads start one stale limit (15 min) before the period: -20 and -17 min are not read")
}

func TestStoreHours_StoreFailure(t *testing.T) {
	boom := errors.New("connection refused")
	r := readerFunc(func() error { return boom })
	sh := &StoreHours{Reader: r, Units: map[string]UnitPoints{"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT"}}}}, Step: time.Minute}
	err := sh.Hours(context.Background(), []string{"A"}, t0, t0.Add(time.Hour), func(*metrics.Hour) error { return nil })
	assert.ErrorIs(t, err, boom)
	assert.ErrorContains(t, err, "read A supply_temp")
}

type readerFunc func() error

func (f readerFunc) ReadSeries(context.Context, metrics.PointRef, psychro.Kind, time.Time, time.Time, func(Sample) error) error {
	return f()
}

// sameValues compares aligned values, NaN equal to NaN.
func sameValues(a, b map[metrics.Role][]float64) bool {
	if len(a) != len(b) {
		return false
	}
	for r, x := range a {
		y, ok := b[r]
		if !ok || len(x) != len(y) {
			return false
		}
		for i := range x {
			if x[i] != y[i] && !(math.IsNaN(x[i]) && math.IsNaN(y[i])) {
				return false
			}
		}
	}
	return true
}
