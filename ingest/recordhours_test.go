package ingest

import (
	"context"
	"io"
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
	units := map[string]UnitPoints{
		"AHU-1": {Points: map[metrics.Role]metrics.PointRef{
			metrics.RoleSupplyTemp:  {Column: "AHU1 SAT", Unit: "F"},
			metrics.RoleOutdoorTemp: {Column: "OA Temp", Unit: "F"},
		}},
		"AHU-2": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleOutdoorTemp: {Column: "OA Temp", Unit: "F"}}},
	}
	rh := &RecordHours{Src: &sliceSource{recs: recs}, Units: units, Step: time.Minute}
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
	assert.Equal(t, 150, rh.Unmatched["Lobby lights"])
	assert.Equal(t, 300, rh.Records)
}

func TestRecordHours_UnitConflict(t *testing.T) {
	src := &sliceSource{recs: []Record{{Series: "SAT", Unit: "degC", Time: t0, Value: 15, File: "x.csv", Line: 3}}}
	rh := &RecordHours{Src: src, Step: time.Minute, Units: map[string]UnitPoints{
		"A": {Points: map[metrics.Role]metrics.PointRef{metrics.RoleSupplyTemp: {Column: "SAT", Unit: "F"}}}}}
	err := rh.Hours(context.Background(), []string{"A"}, time.Time{}, time.Time{}, func(*metrics.Hour) error { return nil })
	require.Error(t, err)
	assert.Contains(t, err.Error(), `x.csv line 3: column "SAT" is in °C according to the file but F according to the configuration`)
}
