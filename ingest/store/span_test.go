package store

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

type spans map[string][2]time.Time

func (s spans) SampleSpan(_ context.Context, ref metrics.PointRef) (first, last time.Time, ok bool, err error) {
	if ref.Name() == "broken" {
		return time.Time{}, time.Time{}, false, errors.New("disk on fire")
	}
	v, ok := s[ref.Name()]
	return v[0], v[1], ok, nil
}

// TestSpan: the whole hours from the first sample of any point to the end
// of the hour of the last, over the points that hold samples.
func TestSpan(t *testing.T) {
	at := func(h, m int) time.Time { return time.Date(2026, 7, 14, h, m, 0, 0, time.UTC) }
	sp := spans{"SAT": {at(6, 20), at(9, 5)}, "MAT": {at(5, 59), at(8, 0)}}
	ctx := context.Background()

	from, to, ok, err := Span(ctx, sp, []metrics.PointRef{{Point: "SAT"}, {Point: "MAT"}, {Point: "empty"}, {Point: "SAT"}})
	require.NoError(t, err)
	require.True(t, ok)
	assert.Equal(t, at(5, 0), from)
	assert.Equal(t, at(10, 0), to, "the hour of the last sample is included")

	_, _, ok, err = Span(ctx, sp, []metrics.PointRef{{Point: "empty"}})
	require.NoError(t, err)
	assert.False(t, ok, "no point holds a sample")

	_, _, _, err = Span(ctx, sp, []metrics.PointRef{{Point: "SAT"}, {Point: "broken"}})
	assert.ErrorContains(t, err, "the stored span of broken")
}
