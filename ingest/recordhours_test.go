package ingest

import (
	"context"
	"io"
	"math"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

type sliceSource struct {
	recs []Record
	i    int
}

func (s *sliceSource) Next() (Record, error) {
	if s.i >= len(s.recs) {
		return Record{}, io.EOF
	}
	s.i++
	return s.recs[s.i-1], nil
}

func TestRecordHours(t *testing.T) {
	var recs []Record
	for m := 0; m < 150; m++ {
		ts := t0.Add(time.Duration(m) * time.Minute)
		recs = append(recs,
			Record{Series: "AHU1 SAT", Unit: "°F", Time: ts, Value: 59, File: "a.csv", Line: m + 2},
			Record{Series: "OA Temp", Time: ts, Value: 86, File: "a.csv", Line: m + 2},
			Record{Series: "Lobby lights", Time: ts, Value: 1, File: "a.csv", Line: m + 2},
		)
	}
	units := map[string]AirHandlerPoints{
		"AHU-1": {Points: map[metrics.Role]metrics.PointRef{
			metrics.RoleSupplyTemp:  {Column: "AHU1 SAT", Unit: "F"},
			metrics.RoleOutdoorTemp: {Column: "OA Temp", Unit: "F"},
		}},
		"AHU-2": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleOutdoorTemp: {Column: "OA Temp", Unit: "F"}}},
	}
	rh := &RecordHours{Src: &sliceSource{recs: recs}, AirHandlers: units, Step: time.Minute}
	var got []*metrics.Hour
	require.NoError(t, rh.Hours(context.Background(), []string{"AHU-1", "AHU-2"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
		got = append(got, h)
		return nil
	}))
	// 150 minutes from 12:00 cover three hours (the last partly); each air
	// handler gets them in order, and the hours interleave in time.
	require.Len(t, got, 6)
	assert.Equal(t, []string{"AHU-1", "AHU-2", "AHU-1", "AHU-2", "AHU-1", "AHU-2"}, []string{got[0].AHU, got[1].AHU, got[2].AHU, got[3].AHU, got[4].AHU, got[5].AHU})
	assert.Equal(t, t0.Add(2*time.Hour), got[4].Start)
	assert.InDelta(t, 15.0, got[0].Values[metrics.RoleSupplyTemp][10], 1e-12, "59 °F is 15 °C")
	assert.InDelta(t, 30.0, got[1].Values[metrics.RoleOutdoorTemp][10], 1e-12, "86 °F is 30 °C, shared by both")
	assert.InDelta(t, 44.0/60, got[4].Coverage(metrics.RoleSupplyTemp), 1e-12, "logged to 14:29, held 15 min: midpoints 14:00:30..14:43:30")
	assert.Equal(t, 150, rh.Unmatched.Count("Lobby lights"))
	assert.Equal(t, 300, rh.Records)
}

func TestRecordHours_UnitConflict(t *testing.T) {
	src := &sliceSource{recs: []Record{{Series: "SAT", Unit: "degC", Time: t0, Value: 15, File: "x.csv", Line: 3}}}
	rh := &RecordHours{Src: src, Step: time.Minute, AirHandlers: map[string]AirHandlerPoints{
		"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Column: "SAT", Unit: "F"}}}}}
	err := rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(*metrics.Hour) error { return nil })
	require.Error(t, err)
	assert.Contains(t, err.Error(), `x.csv line 3: column "SAT" is in °C according to the file but F according to the configuration`)
}

// TestRecordHours_RowUnits: in a long export each row's unit is honoured.
// 70 °F, 21 °C and 294.15 K are all about 21.1 °C (°F = °C x 9/5 + 32 and
// K = °C + 273.15, SI Brochure 9th ed. 2019 and NIST SP 811); a row in a
// pressure unit is rejected and counted, never read as °F.
func TestRecordHours_RowUnits(t *testing.T) {
	tests := []struct {
		name     string
		units    []string
		values   []float64
		want     []float64 // °C per minute; NaN where the row is refused
		rejected int
		err      string
	}{
		{name: "F then C and K", units: []string{"°F", "C", "K", "degF"}, values: []float64{70, 21, 294.15, 70},
			want: []float64{21.111, 21, 21, 21.111}},
		{name: "wrong kind rejected", units: []string{"F", "kPa", "F"}, values: []float64{70, 101, 70},
			want: []float64{21.111, math.NaN(), 21.111}, rejected: 1},
		{name: "blank first unit then C", units: []string{"", "C", "C"}, values: []float64{70, 21, 21},
			err: `x.csv line 3: column "SAT" is in °C according to the file but F according to the configuration`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var recs []Record
			for i, u := range tt.units {
				recs = append(recs, Record{Series: "SAT", Unit: u, Time: t0.Add(time.Duration(i) * time.Minute),
					Value: tt.values[i], File: "x.csv", Line: i + 2})
			}
			rh := &RecordHours{Src: &sliceSource{recs: recs}, Step: time.Minute, AirHandlers: map[string]AirHandlerPoints{
				"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Column: "SAT", Unit: "F"}}}}}
			var got []*metrics.Hour
			err := rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
				got = append(got, h)
				return nil
			})
			if tt.err != "" {
				require.Error(t, err)
				assert.Contains(t, err.Error(), tt.err)
				return
			}
			require.NoError(t, err)
			require.Len(t, got, 1)
			v := got[0].Values[metrics.RoleSupplyTemp]
			for i, w := range tt.want {
				if math.IsNaN(w) {
					continue // the aligner holds the previous value; the count below proves the refusal
				}
				assert.InDelta(t, w, v[i], 0.001, "minute %d (%s)", i, tt.units[i])
			}
			assert.Equal(t, tt.rejected, rh.RowUnits.Rejected)
			if tt.rejected > 0 {
				assert.Contains(t, rh.RowUnits.Examples[0].String(), `x.csv line 3: "SAT" states the unit "kPa"`)
			}
		})
	}
}

// orderRecords is three points logged every minute for five hours from t0,
// each point's values its own ramp, in time order.
func orderRecords() []Record {
	var recs []Record
	for m := 0; m < 5*60; m++ {
		ts := t0.Add(time.Duration(m) * time.Minute)
		for k, s := range []string{"MAT", "LAT", "SAT"} {
			recs = append(recs, Record{Series: s, Time: ts, Value: 20 - 3*float64(k) + float64(m%37)/10, File: "x.csv"})
		}
	}
	return recs
}

func orderUnits() map[string]AirHandlerPoints {
	return map[string]AirHandlerPoints{"A": {Points: map[metrics.Role]metrics.PointRef{
		metrics.RoleEnteringTemp: {Column: "MAT", Unit: "C"},
		metrics.RoleLeavingTemp:  {Column: "LAT", Unit: "C"},
		metrics.RoleSupplyTemp:   {Column: "SAT", Unit: "C"},
	}}}
}

// streamHours runs RecordHours over recs (numbered as file lines in the
// order given) and returns each hour's values by role.
func streamHours(t *testing.T, recs []Record) ([]map[metrics.Role][]float64, error) {
	t.Helper()
	for i := range recs {
		recs[i].Line = i + 2
	}
	rh := &RecordHours{Src: &sliceSource{recs: recs}, AirHandlers: orderUnits(), Step: time.Minute}
	var got []map[metrics.Role][]float64
	err := rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
		v := map[metrics.Role][]float64{}
		for r, xs := range h.Values {
			v[r] = append([]float64(nil), xs...)
		}
		got = append(got, v)
		return nil
	})
	return got, err
}

// TestRecordHours_OutOfOrder: a record up to MaxDisorder earlier than the
// latest before it reaches its hour (the hours equal those of the sorted
// records); an export sorted by point or newest first is refused with the
// file, line and times, never streamed with its later points' early hours
// dropped (they were: 42 % coverage for a 12-hour export sorted by point).
func TestRecordHours_OutOfOrder(t *testing.T) {
	sorted := orderRecords()
	want, err := streamHours(t, sorted)
	require.NoError(t, err)
	require.Len(t, want, 5)

	t.Run("within MaxDisorder", func(t *testing.T) {
		// Each block of 50 minutes of one point is logged 50 minutes
		// after its time: every record is at most 50 min late.
		recs := orderRecords()
		slices.SortStableFunc(recs, func(a, b Record) int {
			ka, kb := a.Time, b.Time
			if a.Series == "LAT" {
				ka = ka.Add(50 * time.Minute)
			}
			if b.Series == "LAT" {
				kb = kb.Add(50 * time.Minute)
			}
			return ka.Compare(kb)
		})
		got, err := streamHours(t, recs)
		require.NoError(t, err)
		assert.Equal(t, want, got)
	})
	t.Run("by point", func(t *testing.T) {
		recs := orderRecords()
		slices.SortStableFunc(recs, func(a, b Record) int { return strings.Compare(a.Series, b.Series) })
		_, err := streamHours(t, recs)
		var ooo *OutOfOrderError
		require.ErrorAs(t, err, &ooo)
		// LAT's 300 records come first, then MAT's at 12:00 after LAT's 16:59.
		assert.Equal(t, OutOfOrderError{File: "x.csv", Line: 302, Series: "MAT", Time: t0, Latest: t0.Add(5*time.Hour - time.Minute)}, *ooo)
		assert.Contains(t, err.Error(), "x.csv line 302: MAT at ")
		assert.Contains(t, err.Error(), "dewline import")
	})
	t.Run("newest first", func(t *testing.T) {
		recs := orderRecords()
		slices.Reverse(recs)
		_, err := streamHours(t, recs)
		var ooo *OutOfOrderError
		require.ErrorAs(t, err, &ooo)
		assert.Equal(t, t0.Add(5*time.Hour-time.Minute), ooo.Latest)
		assert.True(t, ooo.Time.Before(ooo.Latest.Add(-MaxDisorder)))
	})
}

// TestScanOrder: the span of the configured points' records (the earliest
// not the first), and the first record RecordHours would refuse; an
// unconfigured series out of order does not count.
func TestScanOrder(t *testing.T) {
	ix, err := NewPointIndex(orderUnits())
	require.NoError(t, err)
	scan := func(recs []Record) Order {
		for i := range recs {
			recs[i].Line = i + 2
		}
		o, err := ScanOrder(context.Background(), &sliceSource{recs: recs}, ix)
		require.NoError(t, err)
		return o
	}
	end := t0.Add(5*time.Hour - time.Minute)

	recs := orderRecords()
	recs = append([]Record{{Series: "Lobby", Time: end.Add(10 * time.Hour)}}, recs...) // not configured
	recs[1], recs[4] = recs[4], recs[1]                                                // 12:01 before 12:00: within the bound
	o := scan(recs)
	assert.Nil(t, o.OutOfOrder)
	assert.Equal(t, t0, o.First)
	assert.Equal(t, end, o.Last)

	recs = orderRecords()
	slices.Reverse(recs)
	o = scan(recs)
	require.NotNil(t, o.OutOfOrder)
	assert.Equal(t, end, o.OutOfOrder.Latest)
	assert.Equal(t, end.Add(-MaxDisorder-time.Minute), o.OutOfOrder.Time, "the first record more than an hour earlier")
	assert.Equal(t, t0, o.First)
	assert.Equal(t, end, o.Last)
}

// TestRecordHours_LooksAtUnits: streaming exports judges whether a point
// looks logged in another unit than configured, as the store's read paths
// do (TestStoreHours_LooksAtUnits); it did not, so a supply logged in °C
// and configured in °F went unflagged when analysed from exports.
func TestRecordHours_LooksAtUnits(t *testing.T) {
	for _, loggedC := range []bool{false, true} {
		var recs []Record
		for i := 0; i < 3*60; i++ {
			c := 13 + 4*float64(i%10)/10 // a supply of 13-17 °C
			raw := psychro.CToF(c)
			if loggedC {
				raw = c
			}
			recs = append(recs, Record{Series: "SAT", Time: t0.Add(time.Duration(i) * time.Minute), Value: raw, File: "x.csv", Line: i + 2})
		}
		rh := &RecordHours{Src: &sliceSource{recs: recs}, Step: time.Minute, AirHandlers: map[string]AirHandlerPoints{
			"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Column: "SAT", Unit: "F"}}}}}
		want := ""
		if loggedC {
			want = "°C"
		}
		n := 0
		require.NoError(t, rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
			assert.Equal(t, want, h.Quality[metrics.RoleSupplyTemp].OtherUnit, "logged in °C: %v, hour %d", loggedC, n)
			n++
			return nil
		}))
		assert.Equal(t, 3, n)
	}
}

// TestDuplicates: a record that gives its series another value at the
// time of its previous record is counted with both lines; the same value
// again, a value in another unit, another series' record or a later time
// is not.
func TestDuplicates(t *testing.T) {
	rec := func(series, unit string, min int, v float64, line int) Record {
		return Record{Series: series, Unit: unit, Time: t0.Add(time.Duration(min) * time.Minute), Value: v, File: "x.csv", Line: line}
	}
	recs := []Record{
		rec("MAT", "", 0, 20, 2),
		rec("MAT", "", 0, 20, 3),  // the same value again: no conflict
		rec("MAT", "", 0, 21, 4),  // another value: counted
		rec("SAT", "", 0, 15, 5),  // another series
		rec("SAT", "C", 1, 15, 6), // a later time
		rec("SAT", "F", 1, 59, 7), // another unit: not compared
		rec("SAT", "F", 1, 60, 8), // counted
	}
	var d Duplicates
	last := map[string]*LastRecord{"MAT": {}, "SAT": {}}
	for i := range recs {
		d.See(last[recs[i].Series], &recs[i])
	}
	assert.Equal(t, 2, d.Conflicting)
	require.Len(t, d.Examples, 2)
	assert.Equal(t, Duplicate{File: "x.csv", Series: "MAT", Time: t0, Line: 3, Later: 4, Value: 20, LaterV: 21}, d.Examples[0])
	assert.Equal(t, "x.csv lines 7 and 8: SAT at 2026-07-14T12:01:00Z is 59, then 60 (kept)", d.Examples[1].String())

	// RecordHours counts them as it streams, and aligns the later value.
	rh := &RecordHours{Src: &sliceSource{recs: recs[:3]}, Step: time.Minute, AirHandlers: map[string]AirHandlerPoints{
		"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleEnteringTemp: {Column: "MAT", Unit: "C"}}}}}
	var first float64
	require.NoError(t, rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(h *metrics.Hour) error {
		first = h.Values[metrics.RoleEnteringTemp][0]
		return nil
	}))
	assert.Equal(t, 1, rh.Duplicates.Conflicting)
	assert.Equal(t, 21.0, first, "the later row")
}
