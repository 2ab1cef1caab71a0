package csvfile

import (
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
)

// exact is the tolerance for values: a value is the decimal written in the
// file, and both the reader and the Go compiler round it correctly to the
// nearest float64, so they must agree to the bit.
const exact = 0

const fixtures = "../../testdata/csv"

func mustLoad(t testing.TB, name string) *time.Location {
	t.Helper()
	loc, err := time.LoadLocation(name)
	require.NoError(t, err)
	return loc
}

func utc(y int, mo time.Month, d, h, mi, s, ns int) time.Time {
	return time.Date(y, mo, d, h, mi, s, ns, time.UTC)
}

func openFixture(t *testing.T, name string, opt Options) (*Reader, error) {
	t.Helper()
	f, err := os.Open(filepath.Join(fixtures, name))
	require.NoError(t, err)
	t.Cleanup(func() { _ = f.Close() })
	return NewReader(f, name, opt)
}

func mustFixture(t *testing.T, name string, opt Options) *Reader {
	t.Helper()
	r, err := openFixture(t, name, opt)
	require.NoError(t, err)
	return r
}

func readAll(t testing.TB, r *Reader) []ingest.Record {
	t.Helper()
	var out []ingest.Record
	for {
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		require.NoError(t, err)
		out = append(out, rec)
	}
}

// wideRow is one expected row of a wide fixture: the instant, worked out by
// hand from the calendar, and the values in column order (NaN: no record).
type wideRow struct {
	line int
	at   time.Time
	vals []float64
}

type wantCol struct{ name, unit string }

func expandWide(file string, cols []wantCol, rows []wideRow) []ingest.Record {
	var out []ingest.Record
	for _, row := range rows {
		for i, v := range row.vals {
			if math.IsNaN(v) {
				continue
			}
			out = append(out, ingest.Record{Series: cols[i].name, Unit: cols[i].unit, Time: row.at, Value: v, File: file, Line: row.line})
		}
	}
	return out
}

func assertRecords(t *testing.T, want, got []ingest.Record) {
	t.Helper()
	require.Len(t, got, len(want))
	for i := range want {
		w, g := want[i], got[i]
		assert.Equal(t, w.Series, g.Series, "record %d", i)
		assert.Equal(t, w.Unit, g.Unit, "record %d (%s)", i, w.Series)
		assert.True(t, w.Time.Equal(g.Time), "record %d (%s line %d): time %s, want %s", i, w.Series, w.Line, g.Time.UTC(), w.Time)
		assert.InDelta(t, w.Value, g.Value, exact, "record %d (%s line %d)", i, w.Series, w.Line)
		assert.Equal(t, w.File, g.File, "record %d", i)
		assert.Equal(t, w.Line, g.Line, "record %d (%s)", i, w.Series)
	}
}

var nan = math.NaN()

// TestReader_FallBack: US clocks go back on Sunday 2026-11-01 at 02:00 EDT
// to 01:00 EST, so the export writes 01:00-01:45 twice: first in EDT
// (UTC-4), then in EST (UTC-5).
func TestReader_FallBack(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	const file = "ridgeview-ahu1-fallback.csv"
	r := mustFixture(t, file, Options{Location: ny})

	d := r.Detected()
	assert.Equal(t, LayoutWide, r.Layout())
	assert.Equal(t, ',', d.Delimiter)
	assert.False(t, d.DecimalComma)
	assert.True(t, d.UnitRow)
	assert.True(t, d.LocalTime)
	assert.Equal(t, "Timestamp", d.TimeColumn)

	cols := []wantCol{
		{"AHU-1 Supply Air Temp", "°F"}, {"AHU-1 Coil Leaving Temp", "°F"}, {"AHU-1 Return RH", "%RH"},
		{"AHU-1 Supply Flow", "CFM"}, {"AHU-1 Reheat Power", "kW"},
	}
	var gotCols []wantCol
	for _, c := range r.Columns() {
		gotCols = append(gotCols, wantCol{c.Name, c.Unit})
	}
	assert.Equal(t, cols, gotCols)

	want := expandWide(file, cols, []wideRow{
		{3, utc(2026, 11, 1, 4, 30, 0, 0), []float64{55.4, 51.2, 48.5, 11820, 0.0}}, // 00:30 EDT
		{4, utc(2026, 11, 1, 4, 45, 0, 0), []float64{55.6, 51.0, 48.9, 11790, 0.0}},
		{5, utc(2026, 11, 1, 5, 0, 0, 0), []float64{57.9, 50.6, 49.6, 11805, 3.2}}, // first 01:00, EDT
		{6, utc(2026, 11, 1, 5, 15, 0, 0), []float64{58.1, 50.4, 50.1, 11800, 3.4}},
		{7, utc(2026, 11, 1, 5, 30, 0, 0), []float64{58.0, 50.5, 50.3, 11812, 3.3}},
		{8, utc(2026, 11, 1, 5, 45, 0, 0), []float64{57.8, 50.7, 50.0, 11798, 3.1}},
		{9, utc(2026, 11, 1, 6, 0, 0, 0), []float64{57.6, 50.9, 49.8, 11803, 2.9}}, // second 01:00, EST
		{10, utc(2026, 11, 1, 6, 15, 0, 0), []float64{57.5, 51.0, 49.7, 11810, 2.8}},
		{11, utc(2026, 11, 1, 6, 30, 0, 0), []float64{55.9, 51.1, 49.5, 11815, 0.0}},
		{12, utc(2026, 11, 1, 6, 45, 0, 0), []float64{55.7, 51.3, 49.2, 11820, 0.0}},
		{13, utc(2026, 11, 1, 7, 0, 0, 0), []float64{55.5, 51.4, 49.0, 11818, 0.0}}, // 02:00 EST
		{14, utc(2026, 11, 1, 7, 15, 0, 0), []float64{55.4, 51.5, nan, 11822, 0.0}},
	})
	got := readAll(t, r)
	assertRecords(t, want, got)
	assert.Equal(t, ny, got[0].Time.Location(), "times come in Options.Location")

	s := r.Stats()
	assert.Equal(t, 12, s.Rows)
	assert.Equal(t, 59, s.Records)
	assert.Equal(t, 1, s.Missing)
	assert.Empty(t, s.Rejected)
	assert.Equal(t, DST{Repeated: 8, RepeatedEarlier: 4, RepeatedLater: 4}, s.DST)
}

// TestReader_SpringForward: EU clocks go forward on Sunday 2026-03-29 at
// 02:00 CET (UTC+1) to 03:00 CEST (UTC+2); 02:00-02:59 do not exist.
func TestReader_SpringForward(t *testing.T) {
	berlin := mustLoad(t, "Europe/Berlin")
	const file = "riedblick-ahu2-springforward.csv"
	r := mustFixture(t, file, Options{Location: berlin})

	d := r.Detected()
	assert.Equal(t, ';', d.Delimiter)
	assert.True(t, d.DecimalComma)
	assert.True(t, d.DayFirst)
	assert.Equal(t, "Zeitstempel", d.TimeColumn, "found by content: the name is not one of the usual ones")
	assert.Contains(t, d.Encoding, "byte-order mark")
	assert.Contains(t, d.DateOrderBy, "line 2")

	cols := []wantCol{{"AHU-2 Zuluft Temp", "°C"}, {"AHU-2 Kühler Austritt", "°C"}, {"AHU-2 Abluft rF", "%"}, {"AHU-2 Nachheizung", "kW"}}
	want := expandWide(file, cols, []wideRow{
		{2, utc(2026, 3, 29, 0, 30, 0, 0), []float64{19.5, 12.8, 47.5, 1.2}}, // 01:30 CET
		{3, utc(2026, 3, 29, 0, 45, 0, 0), []float64{19.6, 12.7, 47.9, 1.3}},
		{6, utc(2026, 3, 29, 1, 0, 0, 0), []float64{19.8, 12.5, 48.4, 1.4}}, // 03:00 CEST
		{7, utc(2026, 3, 29, 1, 15, 0, 0), []float64{20.1, 12.4, 48.1, 0.9}},
		{8, utc(2026, 3, 29, 1, 30, 0, 0), []float64{20.3, 12.4, 47.6, 0.0}},
	})
	assertRecords(t, want, readAll(t, r))

	s := r.Stats()
	assert.Equal(t, 7, s.Rows)
	assert.Equal(t, map[Reason]int{ReasonDSTGap: 2}, s.Rejected)
	assert.Equal(t, DST{Skipped: 2}, s.DST)
	require.Len(t, s.Examples, 2)
	assert.Equal(t, Rejection{File: file, Line: 4, Reason: ReasonDSTGap, Text: "29.03.2026 02:00"}, s.Examples[0])
	assert.Equal(t, Rejection{File: file, Line: 5, Reason: ReasonDSTGap, Text: "29.03.2026 02:30"}, s.Examples[1])
}

// TestReader_LongChangeOfValue: a long export of change-of-value samples,
// each point on its own timestamps, in July (EDT, UTC-4).
func TestReader_LongChangeOfValue(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	const file = "ridgeview-cov-long.csv"
	r := mustFixture(t, file, Options{Location: ny})
	assert.Equal(t, LayoutLong, r.Layout())
	assert.False(t, r.Detected().DayFirst, "07/14/2026: 14 cannot be a month")

	const (
		flow  = "AHU-2 Supply Flow, North Duct" // a comma, but "North Duct" is no unit
		sat   = "AHU-1 Supply Air Temp"
		rhtEn = "AHU-1 Reheat Enable"
		rh    = `Library "Stacks" RH`
	)
	rec := func(line int, series, unit string, at time.Time, v float64) ingest.Record {
		return ingest.Record{Series: series, Unit: unit, Time: at, Value: v, File: file, Line: line}
	}
	want := []ingest.Record{
		rec(2, flow, "CFM", utc(2026, 7, 14, 16, 30, 0, 0), 6180), // 12:30 PM EDT
		rec(3, sat, "°F", utc(2026, 7, 14, 17, 0, 0, 0), 55.2),
		rec(4, rhtEn, "", utc(2026, 7, 14, 17, 0, 0, 0), 0), // Off
		rec(5, sat, "°F", utc(2026, 7, 14, 17, 3, 27, 0), 56.1),
		rec(6, rh, "%RH", utc(2026, 7, 14, 17, 4, 10, 0), 52.4),
		rec(7, rhtEn, "", utc(2026, 7, 14, 17, 7, 45, 0), 1), // On
		rec(8, sat, "°F", utc(2026, 7, 14, 17, 7, 52, 0), 58.9),
		rec(9, flow, "CFM", utc(2026, 7, 14, 17, 12, 5, 0), 6240),
		// line 10: NaN, no record; then a gap of two and a half hours
		rec(11, sat, "°F", utc(2026, 7, 14, 19, 42, 18, 0), 61.3),
		rec(12, rh, "%RH", utc(2026, 7, 14, 19, 42, 18, 0), 55.0),
		rec(13, rhtEn, "", utc(2026, 7, 14, 19, 45, 0, 0), 0),
		rec(14, sat, "°F", utc(2026, 7, 15, 4, 10, 0, 0), 60.2), // 12:10 AM EDT on the 15th
	}
	assertRecords(t, want, readAll(t, r))

	s := r.Stats()
	assert.Equal(t, 13, s.Rows)
	assert.Equal(t, 12, s.Records)
	assert.Equal(t, 1, s.Missing)
	assert.Equal(t, 3, s.Booleans)
	assert.Empty(t, s.Rejected)
	var names []string
	for _, c := range r.Columns() {
		names = append(names, c.Name)
	}
	assert.Equal(t, []string{flow, sat, rhtEn, rh}, names, "points in order of first appearance")
}

// TestReader_RFC3339: every row carries its offset, so no Location is
// needed and times come back in UTC.
func TestReader_RFC3339(t *testing.T) {
	const file = "ridgeview-rfc3339.csv"
	r := mustFixture(t, file, Options{})
	assert.Equal(t, '|', r.Detected().Delimiter)
	assert.False(t, r.Detected().LocalTime)

	cols := []wantCol{{"OA Temp", "degF"}, {"OA RH", "%"}, {"AHU-1 Fan Power", "kW"}}
	want := expandWide(file, cols, []wideRow{
		{2, utc(2026, 1, 20, 11, 0, 0, 0), []float64{-3.5, 71, 4.75}}, // 06:00-05:00
		{3, utc(2026, 1, 20, 11, 5, 0, 0), []float64{-3.6, 72, 4.80}},
		{4, utc(2026, 1, 20, 11, 10, 0, 0), []float64{-3.4, 72, 4.78}}, // Z
		{5, utc(2026, 1, 20, 11, 15, 0, 500_000_000), []float64{-3.2, 70, 4.81}},
	})
	got := readAll(t, r)
	assertRecords(t, want, got)
	assert.Equal(t, time.UTC, got[0].Time.Location())
}

// TestReader_UnixMillis: 1784034000000 ms is 2026-07-14 13:00:00 UTC
// (20648 days after 1970-01-01: 56 years with 14 leap days to 2026-01-01,
// then 194 days to July 14, plus 13 h).
func TestReader_UnixMillis(t *testing.T) {
	const file = "ridgeview-unix-ms.tsv"
	r := mustFixture(t, file, Options{})
	assert.Equal(t, '\t', r.Detected().Delimiter)
	assert.Equal(t, "Unix milliseconds", r.Detected().TimeFormat)

	cols := []wantCol{{"AHU-2 SAT", "°F"}, {"AHU-2 RAT", "°F"}}
	want := expandWide(file, cols, []wideRow{
		{2, utc(2026, 7, 14, 13, 0, 0, 0), []float64{55.1, 72.4}},
		{3, utc(2026, 7, 14, 13, 1, 0, 0), []float64{55.3, 72.5}},
		{4, utc(2026, 7, 14, 13, 2, 0, 0), []float64{nan, 72.5}},
		{5, utc(2026, 7, 14, 13, 3, 0, 0), []float64{55.0, 72.6}},
	})
	assertRecords(t, want, readAll(t, r))
	assert.Equal(t, 1, r.Stats().Missing)
}

// TestReader_BadRows: good rows are returned, every bad row or cell is
// counted with its line and reason.
func TestReader_BadRows(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	const file = "ridgeview-bad-rows.csv"
	r := mustFixture(t, file, Options{Location: ny})

	cols := []wantCol{{"AHU-1 Supply Air Temp", "°F"}, {"AHU-1 Return RH", "%"}}
	want := expandWide(file, cols, []wideRow{ // 13:00 EDT = 17:00 UTC
		{2, utc(2026, 7, 14, 17, 0, 0, 0), []float64{55.2, 48.1}},
		{3, utc(2026, 7, 14, 17, 5, 0, 0), []float64{nan, 48.3}},
		{6, utc(2026, 7, 14, 17, 20, 0, 0), []float64{55.6, nan}},
		{8, utc(2026, 7, 14, 17, 30, 0, 0), []float64{55.8, 48.7}},
		{10, utc(2026, 7, 14, 17, 40, 0, 0), []float64{nan, 48.9}},
		{11, utc(2026, 7, 14, 17, 45, 0, 0), []float64{56.0, nan}},
		{13, utc(2026, 7, 14, 17, 50, 0, 0), []float64{56.1, 49}},
	})
	assertRecords(t, want, readAll(t, r))

	s := r.Stats()
	assert.Equal(t, 12, s.Rows)
	assert.Equal(t, 10, s.Records)
	assert.Equal(t, 1, s.Missing)
	assert.Equal(t, 1, s.Blank)
	assert.Equal(t, map[Reason]int{
		ReasonNotNumeric: 1, ReasonFieldCount: 2, ReasonBadTime: 2, ReasonNotFinite: 1,
		ReasonDecimalSep: 1, ReasonTruncated: 1,
	}, s.Rejected)
	assert.Equal(t, 8, s.RejectedTotal())
	assert.Equal(t, []Rejection{
		{File: file, Line: 3, Column: "AHU-1 Supply Air Temp", Reason: ReasonNotNumeric, Text: "Comm Fail"},
		{File: file, Line: 4, Reason: ReasonFieldCount, Text: "2026-07-14 13:10:00,55.4,48.2,99"},
		{File: file, Line: 5, Reason: ReasonBadTime, Text: "not a time"},
		{File: file, Line: 7, Reason: ReasonBadTime, Text: "2026-07-14 25:00:00"},
		{File: file, Line: 9, Reason: ReasonFieldCount, Text: "2026-07-14 13:35:00,55.9"},
		{File: file, Line: 10, Column: "AHU-1 Supply Air Temp", Reason: ReasonNotFinite, Text: "1e999"},
		{File: file, Line: 11, Column: "AHU-1 Return RH", Reason: ReasonDecimalSep, Text: "48,9"},
		{File: file, Line: 14, Reason: ReasonTruncated, Text: "2026-07-14 13:55:00,56."},
	}, s.Examples)
}

// TestReader_FileErrors: files that are not trend exports are refused by
// NewReader with the file name, the finding and a fix.
func TestReader_FileErrors(t *testing.T) {
	tests := []struct {
		name    string
		file    string
		wantErr error
		detail  string
	}{
		{"xlsx", "ridgeview-trends.xlsx", ErrNotText, "ZIP archive"},
		{"html", "ridgeview-portal-login.html", ErrNotText, "HTML page"},
		{"empty", "empty.csv", ErrEmpty, "0 bytes"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, err := openFixture(t, tt.file, Options{})
			require.Error(t, err)
			assert.Nil(t, r)
			assert.ErrorIs(t, err, tt.wantErr)
			var fe *FileError
			require.ErrorAs(t, err, &fe)
			assert.Equal(t, tt.file, fe.File)
			assert.Contains(t, fe.Detail, tt.detail)
			assert.NotEmpty(t, fe.Fix)
			assert.Contains(t, err.Error(), tt.file)
		})
	}
}
