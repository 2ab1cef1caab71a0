package embedded

import (
	"math"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

var chicago = func() *time.Location {
	z, err := time.LoadLocation("America/Chicago")
	if err != nil {
		panic(err)
	}
	return z
}()

// readDays collects ReadDays' rows (copying the reused record's sums).
func readDays(t *testing.T, s *Store, from, to time.Time) (bool, map[string][]DayRow, map[string][]map[string]float64) {
	t.Helper()
	rows := map[string][]DayRow{}
	sums := map[string][]map[string]float64{}
	complete, err := s.ReadDays(testCtx(t), from, to, func(d DayRow) error {
		rows[d.AHU] = append(rows[d.AHU], d)
		sums[d.AHU] = append(sums[d.AHU], map[string]float64{"reheat_kwh": d.Sums.ReheatKWh, "cost": d.Sums.Cost, "coverage": d.Sums.Coverage, "shr": d.Sums.SHR})
		return nil
	})
	require.NoError(t, err)
	return complete, rows, sums
}

func TestDaily_SumsLocalDaysAcrossFallBack(t *testing.T) {
	path := filepath.Join(t.TempDir(), "d.db")
	s, err := Open(testCtx(t), path, Options{DayZone: chicago})
	require.NoError(t, err)
	defer s.Close()
	// 1 Nov 2026 in Chicago has 25 hours (daylight saving ends). Hour i
	// reheats i kWh; hour 3 carries a flag; cost is known in hour 0 only.
	day := time.Date(2026, 11, 1, 0, 0, 0, 0, chicago)
	next := time.Date(2026, 11, 2, 0, 0, 0, 0, chicago)
	var rows []HourRow
	for h := day; h.Before(next.Add(2 * time.Hour)); h = h.Add(time.Hour) {
		i := float64(h.Sub(day) / time.Hour)
		f := map[string]float64{"reheat_kwh": i, "coverage": 1, "shr": 0.8, "cost": math.NaN()}
		if i == 0 {
			f["cost"] = 2.5
		}
		r := HourRow{AHU: "AHU-1", Hour: h, Schema: 1, Fields: f}
		if i == 3 {
			r.Flags = []string{"low_coverage", "cooling_input_modelled"}
		}
		if i >= 4 && i < 10 {
			r.Flags = []string{"cooling_input_modelled"} // a note, not a data-quality flag
		}
		rows = append(rows, r)
	}
	require.NoError(t, s.PutHourly(testCtx(t), rows))

	complete, got, sums := readDays(t, s, day, next)
	require.True(t, complete)
	require.Len(t, got["AHU-1"], 1)
	d := got["AHU-1"][0]
	assert.Equal(t, 25, d.Hours)
	assert.Equal(t, 1, d.Flagged, "hours with only an informational flag are not flagged")
	assert.True(t, d.Day.Equal(day) && d.End.Equal(next))
	assert.Equal(t, 300.0, sums["AHU-1"][0]["reheat_kwh"]) // 0 + 1 + ... + 24
	assert.Equal(t, 25.0, sums["AHU-1"][0]["coverage"])
	assert.Equal(t, 2.5, sums["AHU-1"][0]["cost"])
	assert.True(t, math.IsNaN(sums["AHU-1"][0]["shr"]), "a ratio is not summed")

	// Re-writing an hour rebuilds its day.
	require.NoError(t, s.PutHourly(testCtx(t), []HourRow{{AHU: "AHU-1", Hour: day, Schema: 1, Fields: map[string]float64{"reheat_kwh": 100}}}))
	_, _, sums = readDays(t, s, day, next)
	assert.Equal(t, 400.0, sums["AHU-1"][0]["reheat_kwh"])
	assert.True(t, math.IsNaN(sums["AHU-1"][0]["cost"]), "no hour has a cost any more")

	// The next day holds the two hours written past midnight.
	complete, got, sums = readDays(t, s, day, next.Add(24*time.Hour))
	require.True(t, complete)
	require.Len(t, got["AHU-1"], 2)
	assert.Equal(t, 2, got["AHU-1"][1].Hours)
	assert.Equal(t, 25.0+26.0, sums["AHU-1"][1]["reheat_kwh"])

	// An hour written by a process that keeps no days leaves them
	// incomplete: the reader must fall back to the hours.
	other, err := Open(testCtx(t), path, Options{})
	require.NoError(t, err)
	require.NoError(t, other.PutHourly(testCtx(t), []HourRow{{AHU: "AHU-9", Hour: day.Add(5 * time.Hour), Schema: 1, Fields: map[string]float64{"reheat_kwh": 1}}}))
	require.NoError(t, other.Close())
	complete, _, _ = readDays(t, s, day, next)
	assert.False(t, complete)
}

func TestDaily_RebuiltForRowsWrittenWithoutAZone(t *testing.T) {
	path := filepath.Join(t.TempDir(), "d.db")
	s, err := Open(testCtx(t), path, Options{})
	require.NoError(t, err)
	day := time.Date(2026, 7, 6, 0, 0, 0, 0, chicago)
	var rows []HourRow
	for i := 0; i < 48; i++ {
		rows = append(rows, HourRow{AHU: "AHU-2", Hour: day.Add(time.Duration(i) * time.Hour), Schema: 1, Fields: map[string]float64{"cost": 0.5}})
	}
	require.NoError(t, s.PutHourly(testCtx(t), rows))
	complete, _, _ := readDays(t, s, day, day.AddDate(0, 0, 2))
	assert.False(t, complete, "a store without a zone keeps no days")
	require.NoError(t, s.Close())

	s, err = Open(testCtx(t), path, Options{DayZone: chicago})
	require.NoError(t, err)
	defer s.Close()
	complete, got, sums := readDays(t, s, day, day.AddDate(0, 0, 2))
	require.True(t, complete)
	require.Len(t, got["AHU-2"], 2)
	assert.Equal(t, 12.0, sums["AHU-2"][0]["cost"]) // 24 h × 0.5
	assert.Equal(t, 12.0, sums["AHU-2"][1]["cost"])

	// Read-only, the days are read but never built.
	ro, err := Open(testCtx(t), path, Options{ReadOnly: true, DayZone: time.UTC})
	require.NoError(t, err)
	defer ro.Close()
	complete, _, _ = readDays(t, ro, time.Date(2026, 7, 6, 0, 0, 0, 0, time.UTC), time.Date(2026, 7, 9, 0, 0, 0, 0, time.UTC))
	assert.False(t, complete, "no days kept for UTC")
}
