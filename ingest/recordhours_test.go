package ingest

import (
	"context"
	"io"
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
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
