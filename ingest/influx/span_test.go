package influx

import (
	"context"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// TestInflux_SampleSpan: on the real server, a point's stored span is the
// times of its first and last sample, whichever order they were written
// in; a point with no samples has none.
func TestInflux_SampleSpan(t *testing.T) {
	c := freshBucket(t)
	ctx := context.Background()
	b := NewBackend(c, BackendOptions{Site: "north"})
	ref := metrics.PointRef{Point: "AHU1_SAT", Unit: "C"}
	t0 := time.Date(2026, 7, 14, 0, 7, 0, 0, time.UTC)
	// Written out of order: the last sample first.
	require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0.Add(47 * time.Hour), Value: 13}}))
	require.NoError(t, c.WriteSamples(ctx, ref, psychro.KindTemperature, []ingest.Sample{{Time: t0, Value: 12}, {Time: t0.Add(time.Hour), Value: 12.5}}))

	first, last, ok, err := b.SampleSpan(ctx, ref)
	require.NoError(t, err)
	require.True(t, ok)
	assert.True(t, first.Equal(t0), "first %s", first)
	assert.True(t, last.Equal(t0.Add(47*time.Hour)), "last %s", last)

	_, _, ok, err = b.SampleSpan(ctx, metrics.PointRef{Point: "AHU1_NOTHING"})
	require.NoError(t, err)
	assert.False(t, ok)
}
