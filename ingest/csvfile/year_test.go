package csvfile

import (
	"errors"
	"io"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestAddYear(t *testing.T) {
	for in, want := range map[string]string{
		"08/26  00:01:00": "08/26/2023  00:01:00",
		"8/6 7:05":        "8/6/2023 7:05",
		"26.08":           "26.08.2023",
	} {
		got, ok := addYear([]byte(in), 2023, nil)
		assert.True(t, ok, in)
		assert.Equal(t, want, string(got))
	}
	for _, in := range []string{"08/26/2026 00:01", "2026-08-26", "826 10:00", "08/265 10:00", "1735689600"} {
		_, ok := addYear([]byte(in), 2023, nil)
		assert.False(t, ok, in)
	}
}

// TestReader_Year: an export whose dates carry no year (as some laboratory
// loggers write them, "MM/DD  hh:mm:ss" with 24:00:00 for midnight) reads
// with Options.Year; without it the file is refused.
func TestReader_Year(t *testing.T) {
	const data = "date_time,sa_temp\n08/26  23:59:00,55.1\n08/26  24:00:00,55.3\n08/27  00:01:00,55.2\n"
	r, err := NewReader(strings.NewReader(data), "lab.csv", Options{Location: time.UTC, Year: 2023})
	require.NoError(t, err)
	var got []time.Time
	for {
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(t, err)
		got = append(got, rec.Time)
	}
	require.Len(t, got, 3)
	assert.Equal(t, time.Date(2023, 8, 26, 23, 59, 0, 0, time.UTC), got[0])
	assert.Equal(t, time.Date(2023, 8, 27, 0, 0, 0, 0, time.UTC), got[1], "24:00 ends the day")
	assert.Equal(t, time.Date(2023, 8, 27, 0, 1, 0, 0, time.UTC), got[2])
	_, err = NewReader(strings.NewReader(data), "lab.csv", Options{Location: time.UTC})
	assert.Error(t, err)
	_, err = NewReader(strings.NewReader(data), "lab.csv", Options{Location: time.UTC, Year: 99})
	assert.ErrorContains(t, err, "Year 99")
}
