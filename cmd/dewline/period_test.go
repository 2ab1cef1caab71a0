package main

import (
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestParseTime(t *testing.T) {
	chicago, err := time.LoadLocation("America/Chicago")
	require.NoError(t, err)
	got, err := parseTime("2026-07-14T06:00", chicago)
	require.NoError(t, err)
	assert.Equal(t, time.Date(2026, 7, 14, 11, 0, 0, 0, time.UTC), got.UTC())
	got, err = parseTime("2026-11-01T01:30:00-06:00", chicago)
	require.NoError(t, err)
	assert.Equal(t, time.Date(2026, 11, 1, 7, 30, 0, 0, time.UTC), got.UTC())
	// 2026-11-01 01:30 happens twice in Chicago; 2026-03-08 02:30 never.
	_, err = parseTime("2026-11-01T01:30", chicago)
	assert.ErrorContains(t, err, "happens twice")
	_, err = parseTime("2026-03-08T02:30", chicago)
	assert.ErrorContains(t, err, "does not exist")
	got, err = parseTime("2026-11-01", chicago)
	require.NoError(t, err, "a date is its midnight, which happens once")
	assert.Equal(t, time.Date(2026, 11, 1, 5, 0, 0, 0, time.UTC), got.UTC())
	_, err = parseTime("yesterday", chicago)
	assert.ErrorContains(t, err, "is not a time")
}
