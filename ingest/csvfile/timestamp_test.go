package csvfile

import (
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestDaysFromCivil: day numbers counted by hand. 2000-03-01 is 30 years
// (7 leap days: 1972..1996) plus 59 days (Jan 31 + Feb 29, 2000 is a leap
// year): 30*365 + 7 + 60 = 11017. 2026-07-14: see TestReader_UnixMillis.
func TestDaysFromCivil(t *testing.T) {
	assert.Equal(t, int64(0), daysFromCivil(1970, 1, 1))
	assert.Equal(t, int64(-1), daysFromCivil(1969, 12, 31))
	assert.Equal(t, int64(11017), daysFromCivil(2000, 3, 1))
	assert.Equal(t, int64(20648), daysFromCivil(2026, 7, 14))
}

// wallOf is the expected result of a timestamp without offset: the wall
// clock as if it were UTC.
func wallOf(y int, mo time.Month, d, h, mi, s, ns int) time.Time { return utc(y, mo, d, h, mi, s, ns) }

func stampTime(st stamp) (time.Time, bool) {
	return time.Unix(st.sec-st.off, st.nsec).UTC(), st.hasOff
}

func TestParseISO(t *testing.T) {
	tests := []struct {
		in     string
		want   time.Time // UTC instant when hasOff, else the wall clock
		hasOff bool
	}{
		{"2026-07-14 13:05:00", wallOf(2026, 7, 14, 13, 5, 0, 0), false},
		{"2026-07-14T13:05", wallOf(2026, 7, 14, 13, 5, 0, 0), false},
		{"2026-07-14", wallOf(2026, 7, 14, 0, 0, 0, 0), false},
		{"2026-07-14 24:00:00", wallOf(2026, 7, 15, 0, 0, 0, 0), false},
		{"2026-07-14T13:05:00Z", utc(2026, 7, 14, 13, 5, 0, 0), true},
		{"2026-07-14T13:05:00-04:00", utc(2026, 7, 14, 17, 5, 0, 0), true},
		{"2026-07-14T13:05:00+0530", utc(2026, 7, 14, 7, 35, 0, 0), true},
		{"2026-07-14T13:05:00+02", utc(2026, 7, 14, 11, 5, 0, 0), true},
		{"2026-07-14T13:05:00.123456789Z", utc(2026, 7, 14, 13, 5, 0, 123456789), true},
		{"2026-07-14 13:05:00,5 UTC", utc(2026, 7, 14, 13, 5, 0, 500_000_000), true},
		{"2026-07-14T13:05 +01:00", utc(2026, 7, 14, 12, 5, 0, 0), true},
		{"2024-02-29T00:00:00Z", utc(2024, 2, 29, 0, 0, 0, 0), true},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			st, ok := parseISO([]byte(tt.in))
			require.True(t, ok)
			got, hasOff := stampTime(st)
			assert.Equal(t, tt.hasOff, hasOff)
			assert.True(t, tt.want.Equal(got), "got %s", got)
		})
	}
	for _, bad := range []string{"2026-02-29 00:00", "2026-13-01", "2026-07-14 25:00", "2026-07-14 24:30",
		"2026-07-14 13:60", "2026-07-14 13:05:60", "2026-07-14T13:05:00+25:00", "2026-07-14T13:05:00 EDT",
		"2026-07-14X13:05", "2026-7-14 13:05", "1899-12-31", "2026-07-14 13:05:00.", "26-07-14"} {
		_, ok := parseISO([]byte(bad))
		assert.False(t, ok, bad)
	}
}

func TestParseYearLast(t *testing.T) {
	tests := []struct {
		in    string
		order dateOrder
		want  time.Time
	}{
		{"07/14/2026 1:05:00 PM", monthFirst, wallOf(2026, 7, 14, 13, 5, 0, 0)},
		{"07/14/2026 12:05:00 PM", monthFirst, wallOf(2026, 7, 14, 12, 5, 0, 0)},
		{"07/14/2026 12:05 am", monthFirst, wallOf(2026, 7, 14, 0, 5, 0, 0)},
		{"7/4/2026 13:05", monthFirst, wallOf(2026, 7, 4, 13, 5, 0, 0)},
		{"7/4/2026 13:05", dayFirst, wallOf(2026, 4, 7, 13, 5, 0, 0)},
		{"14.07.2026 13:05", dayFirst, wallOf(2026, 7, 14, 13, 5, 0, 0)},
		{"14-07-2026 13:05:09.5", dayFirst, wallOf(2026, 7, 14, 13, 5, 9, 500_000_000)},
		{"14/07/26", dayFirst, wallOf(2026, 7, 14, 0, 0, 0, 0)},
		{"07/14/2026, 1:05 PM", monthFirst, wallOf(2026, 7, 14, 13, 5, 0, 0)},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			st, ok := parseYearLast([]byte(tt.in), tt.order)
			require.True(t, ok)
			got, _ := stampTime(st)
			assert.True(t, tt.want.Equal(got), "got %s", got)
		})
	}
	for _, bad := range []string{"14/07/2026", "07/14/2026 13:05 PM", "07/14/2026 0:05 AM", "07/14/20261",
		"07/14-2026", "07/14/2026 1:5", "02/30/2026"} {
		_, ok := parseYearLast([]byte(bad), monthFirst)
		assert.False(t, ok, bad)
	}
}

func TestParseUnix(t *testing.T) {
	at := utc(2026, 7, 14, 13, 0, 0, 0) // 1784034000, see TestReader_UnixMillis
	tests := []struct {
		in   string
		want time.Time
	}{
		{"1784034000", at},
		{"1784034000.5", at.Add(500 * time.Millisecond)},
		{"1784034000123", at.Add(123 * time.Millisecond)},
		{"1784034000123456", at.Add(123456 * time.Microsecond)},
		{"1784034000123456789", at.Add(123456789)},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			d := unixDigits([]byte(tt.in))
			st, ok := parseUnix([]byte(tt.in), d)
			require.True(t, ok)
			got, hasOff := stampTime(st)
			assert.True(t, hasOff)
			assert.True(t, tt.want.Equal(got), "got %s", got)
		})
	}
	for _, bad := range []string{"178403400", "17840340001", "1784034000.", "1784034000.1234567891", "1784034000123.5"} {
		d := unixDigits([]byte(bad))
		if d == 0 {
			continue
		}
		_, ok := parseUnix([]byte(bad), d)
		assert.False(t, ok, bad)
	}
	_, ok := parseUnix([]byte("1784034000123"), 10)
	assert.False(t, ok, "digit count fixed per file")
}
