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
	u := AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT", Unit: "C"},
		metrics.RoleEnteringTemp: {Point: "MAT", Unit: "C"}}}
	collect := func(chunk time.Duration) ([]*metrics.Hour, *StoreHours) {
		sh := &StoreHours{Reader: r, AirHandlers: map[string]AirHandlerPoints{"A": u}, Step: time.Minute, Chunk: chunk,
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
	sh := &StoreHours{Reader: r, AirHandlers: map[string]AirHandlerPoints{"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT"}}}}, Step: time.Minute}
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

// memBatchReader is memReader that also reads many points at once, so
// StoreHours takes its batch path.
type memBatchReader struct{ *memReader }

func (m memBatchReader) ReadBatch(ctx context.Context, points []PointRead, from, to time.Time, fn func(i int, s Sample) error) error {
	for i, p := range points {
		err := m.ReadSeries(ctx, p.Ref, p.Kind, from, to, func(s Sample) error { return fn(i, s) })
		if err != nil && !errors.Is(err, errNoSeries) {
			return err
		}
	}
	return nil
}

// TestStoreHours_FlatAcrossMidnight: an RH logged every 15 minutes that
// sticks from 21:00 to 04:00 spans two daily chunks. Each hour of the run
// must report it as the CSV path (Align, all samples at once) does: the
// hours before midnight see the run go on in the next day's samples. Both
// the point-by-point and the batch read paths are held to it.
func TestStoreHours_FlatAcrossMidnight(t *testing.T) {
	for _, batch := range []bool{false, true} {
		t.Run(fmt.Sprintf("batch=%v", batch), func(t *testing.T) { testFlatAcrossMidnight(t, batch) })
	}
}

func testFlatAcrossMidnight(t *testing.T, batch bool) {
	day0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	var rh []Sample
	for i := 0; i < 2*24*4; i++ {
		ts := day0.Add(time.Duration(i) * 15 * time.Minute)
		v := 0.55 + 0.001*float64(i%7)
		if h := ts.Sub(day0).Hours(); h >= 21 && h < 28 {
			v = 0.612
		}
		rh = append(rh, Sample{ts, v})
	}
	r := &memReader{series: map[string][]Sample{"MA RH": rh}}
	u := AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleEnteringRH: {Point: "MA RH", Unit: "%"}}}
	sh := &StoreHours{Reader: r, AirHandlers: map[string]AirHandlerPoints{"A": u}, Step: time.Minute,
		IsMissing: func(err error) bool { return errors.Is(err, errNoSeries) }}
	if batch {
		sh.Reader = memBatchReader{r}
	}
	var store []*metrics.Hour
	require.NoError(t, sh.Hours(context.Background(), []string{"A"}, day0, day0.Add(48*time.Hour), func(h *metrics.Hour) error {
		store = append(store, h)
		return nil
	}))
	var csv []*metrics.Hour
	require.NoError(t, Align("A", day0, 48, time.Minute, []Series{{Role: metrics.RoleEnteringRH, Samples: rh}}, func(h *metrics.Hour) error {
		csv = append(csv, h)
		return nil
	}))
	require.Len(t, store, 48)
	require.Len(t, csv, 48)
	for i := range store {
		q := store[i].Quality[metrics.RoleEnteringRH]
		assert.Equal(t, csv[i].Quality[metrics.RoleEnteringRH].FlatFor, q.FlatFor, "hour %d: store and CSV paths agree", i)
		if i >= 21 && i < 28 {
			assert.GreaterOrEqual(t, q.FlatFor, 3*time.Hour, "hour %d of the stuck run", i)
		} else {
			assert.Zero(t, q.FlatFor, "hour %d", i)
		}
	}
}

// TestStoreHours_LooksAtUnits: a supply configured in °F whose stored
// values were logged in °C (imported as if °F) is named in every hour's
// quality, by the point-by-point read (the embedded store) and by the
// batch read (InfluxDB) alike, and a supply logged in °F is not.
func TestStoreHours_LooksAtUnits(t *testing.T) {
	f, err := psychro.LookupUnit(psychro.KindTemperature, "F")
	require.NoError(t, err)
	day0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	for _, batch := range []bool{false, true} {
		for _, loggedC := range []bool{false, true} {
			t.Run(fmt.Sprintf("batch=%v,logged_in_C=%v", batch, loggedC), func(t *testing.T) {
				var sat []Sample
				for i := 0; i < 6*60; i++ {
					c := 13 + 4*float64(i%10)/10 // a supply of 13-17 °C
					raw := psychro.CToF(c)
					if loggedC {
						raw = c
					}
					sat = append(sat, Sample{day0.Add(time.Duration(i) * time.Minute), f.ToSI(raw)})
				}
				r := &memReader{series: map[string][]Sample{"SAT": sat}}
				u := AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: "SAT", Unit: "F"}}}
				sh := &StoreHours{Reader: r, AirHandlers: map[string]AirHandlerPoints{"A": u}, Step: time.Minute,
					IsMissing: func(err error) bool { return errors.Is(err, errNoSeries) }}
				if batch {
					sh.Reader = memBatchReader{r}
				}
				want := ""
				if loggedC {
					want = "°C"
				}
				n := 0
				require.NoError(t, sh.Hours(context.Background(), []string{"A"}, day0, day0.Add(6*time.Hour), func(h *metrics.Hour) error {
					assert.Equal(t, want, h.Quality[metrics.RoleSupplyTemp].OtherUnit, "hour %d", n)
					n++
					return nil
				}))
				assert.Equal(t, 6, n)
			})
		}
	}
}
