package embedded

import (
	"context"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// benchBatch is one import's worth of one point: a week of 1-minute trend
// data is 10 080 samples.
const benchBatch = 10_000

func benchStore(b *testing.B) *Store {
	b.Helper()
	s, err := Open(context.Background(), filepath.Join(b.TempDir(), "bench.db"), Options{})
	require.NoError(b, err)
	b.Cleanup(func() { s.Close() })
	return s
}

// benchSamples returns n one-minute samples starting at start.
func benchSamples(start time.Time, n int) []ingest.Sample {
	out := make([]ingest.Sample, n)
	for i := range out {
		out[i] = ingest.Sample{Time: start.Add(time.Duration(i) * time.Minute), Value: 12.5 + float64(i%100)/10}
	}
	return out
}

func reportRate(b *testing.B, samples int) {
	b.ReportMetric(float64(samples)/b.Elapsed().Seconds(), "samples/s")
}

// BenchmarkStore_WriteSamples writes batches of benchBatch samples to a file
// in a temporary folder, each batch one transaction (WAL, synchronous=NORMAL).
// "insert" adds new times, "upsert" rewrites the same times (a re-import:
// every day block is read, merged and written back).
func BenchmarkStore_WriteSamples(b *testing.B) {
	b.Run("insert", func(b *testing.B) {
		s := benchStore(b)
		ctx := context.Background()
		start := t0
		b.ReportAllocs()
		for b.Loop() {
			b.StopTimer()
			batch := benchSamples(start, benchBatch)
			start = start.Add(benchBatch * time.Minute)
			b.StartTimer()
			if _, err := s.WriteSamples(ctx, "AHU-1 SAT", "temperature", "°C", "°F", batch); err != nil {
				b.Fatal(err)
			}
		}
		reportRate(b, b.N*benchBatch)
	})
	b.Run("upsert", func(b *testing.B) {
		s := benchStore(b)
		ctx := context.Background()
		batch := benchSamples(t0, benchBatch)
		_, err := s.WriteSamples(ctx, "AHU-1 SAT", "temperature", "°C", "°F", batch)
		require.NoError(b, err)
		b.ReportAllocs()
		for b.Loop() {
			if _, err := s.WriteSamples(ctx, "AHU-1 SAT", "temperature", "°C", "°F", batch); err != nil {
				b.Fatal(err)
			}
		}
		reportRate(b, b.N*benchBatch)
	})
}

// BenchmarkStore_ReadSeries streams a window of benchBatch samples out of a
// series of 10 batches.
func BenchmarkStore_ReadSeries(b *testing.B) {
	s := benchStore(b)
	ctx := context.Background()
	for i := range 10 {
		_, err := s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", benchSamples(t0.Add(time.Duration(i*benchBatch)*time.Minute), benchBatch))
		require.NoError(b, err)
	}
	ref := metrics.PointRef{Point: "AHU-1 SAT"}
	from := t0.Add(3 * benchBatch * time.Minute)
	to := from.Add(benchBatch * time.Minute)
	b.ReportAllocs()
	for b.Loop() {
		n := 0
		err := s.ReadSeries(ctx, ref, from, to, func(ingest.Sample) error { n++; return nil })
		if err != nil || n != benchBatch {
			b.Fatalf("read %d samples: %v", n, err)
		}
	}
	reportRate(b, b.N*benchBatch)
}
