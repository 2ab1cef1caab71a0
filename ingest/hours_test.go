package ingest

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
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

// memCheckedReader is memBatchReader that also looks points up, as the
// InfluxDB backend does: a point with no series matches nothing.
type memCheckedReader struct {
	memBatchReader
	checks int
}

func (m *memCheckedReader) CheckPoint(_ context.Context, ref metrics.PointRef, _, _ time.Time) error {
	m.checks++
	if _, ok := m.series[ref.Name()]; !ok {
		return errNoSeries
	}
	return nil
}

// TestStoreHours_BatchChecksPointsFirst: with CheckFirst, the batch path
// looks each point up once (a point two air handlers share, once), lists
// one that matches nothing in Missing and through OnMissing as the
// point-by-point path does, and gives the same hours; without it the
// batch path looks nothing up and lists nothing.
func TestStoreHours_BatchChecksPointsFirst(t *testing.T) {
	day0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	var sat, oat []Sample
	for i := 0; i < 3*60; i++ {
		at := day0.Add(time.Duration(i) * time.Minute)
		sat = append(sat, Sample{at, 14 + float64(i%9)/10})
		oat = append(oat, Sample{at, 30 + float64(i%5)/10})
	}
	series := map[string][]Sample{"A SAT": sat, "B SAT": sat, "OAT": oat}
	ahu := func(sat string) AirHandlerPoints {
		return AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{
			metrics.RoleSupplyTemp:  {Point: sat, Unit: "C"},
			metrics.RoleOutdoorTemp: {Point: "OAT", Unit: "C"},
			metrics.RoleEnteringRH:  {Point: "MA RH", Unit: "%"}, // not in the store
		}}
	}
	points := map[string]AirHandlerPoints{"A": ahu("A SAT"), "B": ahu("B SAT")}
	type result struct {
		hours   []string
		missing []string
		told    []string
	}
	read := func(reader SeriesReader, checkFirst bool) result {
		var r result
		sh := &StoreHours{Reader: reader, AirHandlers: points, Step: time.Minute, CheckFirst: checkFirst,
			IsMissing: func(err error) bool { return errors.Is(err, errNoSeries) },
			OnMissing: func(ahu string, role metrics.Role, point string) {
				r.told = append(r.told, ahu+" "+string(role)+" "+point)
			}}
		require.NoError(t, sh.Hours(context.Background(), []string{"A", "B"}, day0, day0.Add(3*time.Hour), func(h *metrics.Hour) error {
			var b strings.Builder
			fmt.Fprintf(&b, "%s %s", h.AHU, h.Start.Format("15"))
			for _, role := range []metrics.Role{metrics.RoleSupplyTemp, metrics.RoleOutdoorTemp, metrics.RoleEnteringRH} {
				fmt.Fprintf(&b, " %s=%v/%v", role, h.Values[role], h.Quality[role].Coverage)
			}
			r.hours = append(r.hours, b.String())
			return nil
		}))
		sort.Strings(r.hours)
		r.missing = sh.Missing
		return r
	}
	one := read(&memReader{series: series}, false)
	require.Len(t, one.hours, 6)
	assert.Equal(t, []string{"A entering_rh (MA RH)", "B entering_rh (MA RH)"}, one.missing)

	checked := &memCheckedReader{memBatchReader: memBatchReader{&memReader{series: series}}}
	batch := read(checked, true)
	assert.Equal(t, one, batch, "the batch path with CheckFirst is the point-by-point path")
	assert.Equal(t, 4, checked.checks, "A SAT, B SAT, OAT and MA RH, each once")

	unchecked := &memCheckedReader{memBatchReader: memBatchReader{&memReader{series: series}}}
	plain := read(unchecked, false)
	assert.Zero(t, unchecked.checks)
	assert.Empty(t, plain.missing)
	assert.Equal(t, one.hours, plain.hours, "a missing point gives no samples either way")
}

// TestStoreHours_ByHour: the batch path yields a chunk's hours air handler
// by air handler (the agent commits each at once), or with ByHour hour by
// hour across the air handlers in the order of their ids, as the CSV path
// (RecordHours) does; the hours themselves are the same.
func TestStoreHours_ByHour(t *testing.T) {
	day0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	var sat []Sample
	for i := 0; i < 2*24*60; i++ {
		sat = append(sat, Sample{day0.Add(time.Duration(i) * time.Minute), 14 + float64(i%9)/10})
	}
	pts := func(p string) AirHandlerPoints {
		return AirHandlerPoints{Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Point: p, Unit: "C"}}}
	}
	r := memBatchReader{&memReader{series: map[string][]Sample{"S1": sat, "S2": sat, "S10": sat}}}
	ahus := []string{"AHU-2", "AHU-10", "AHU-1"}
	read := func(byHour bool) []string {
		sh := &StoreHours{Reader: r, Step: time.Minute, ByHour: byHour,
			AirHandlers: map[string]AirHandlerPoints{"AHU-1": pts("S1"), "AHU-2": pts("S2"), "AHU-10": pts("S10")}}
		var got []string
		require.NoError(t, sh.Hours(context.Background(), ahus, day0, day0.Add(48*time.Hour), func(h *metrics.Hour) error {
			got = append(got, fmt.Sprintf("%s %s", h.Start.Format("02T15"), h.AHU))
			return nil
		}))
		return got
	}
	byAHU, byHour := read(false), read(true)
	require.Len(t, byHour, 3*48)
	var want []string
	for h := 0; h < 48; h++ {
		for _, id := range []string{"AHU-1", "AHU-10", "AHU-2"} {
			want = append(want, fmt.Sprintf("%s %s", day0.Add(time.Duration(h)*time.Hour).Format("02T15"), id))
		}
	}
	assert.Equal(t, want, byHour)
	assert.NotEqual(t, want, byAHU)
	assert.ElementsMatch(t, want, byAHU)
	assert.Equal(t, "14T00 AHU-2", byAHU[0])
}
