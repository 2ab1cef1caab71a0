package embedded

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// collect reads a whole window into a slice.
func collect(t *testing.T, s *Store, ref metrics.PointRef, from, to time.Time) []ingest.Sample {
	t.Helper()
	var out []ingest.Sample
	require.NoError(t, s.ReadSeries(testCtx(t), ref, from, to, func(sm ingest.Sample) error {
		out = append(out, sm)
		return nil
	}))
	return out
}

func TestStore_WriteSamples(t *testing.T) {
	ctx := testCtx(t)
	s, path := newStore(t)
	ref := metrics.PointRef{Point: "AHU-1 SAT"}
	// Written out of order, in a non-UTC zone, with a sub-millisecond part.
	nyc := time.FixedZone("EDT", -4*3600)
	in := []ingest.Sample{
		{Time: t0.Add(2 * time.Minute).In(nyc), Value: -0.5},
		{Time: t0.Add(123*time.Millisecond + 456*time.Microsecond), Value: 12.345678901234567},
		{Time: t0, Value: 12.5},
		{Time: t0.Add(time.Minute), Value: 1e-300},
	}
	n, err := s.WriteSamples(ctx, ref.Name(), "temperature", "°C", "°F", in)
	require.NoError(t, err)
	assert.Equal(t, 4, n)

	got := collect(t, s, ref, t0, t0.Add(time.Hour))
	// Times in UTC, sub-millisecond part truncated; values bit-exact.
	want := []ingest.Sample{
		{Time: t0, Value: 12.5},
		{Time: t0.Add(123 * time.Millisecond), Value: 12.345678901234567},
		{Time: t0.Add(time.Minute), Value: 1e-300},
		{Time: t0.Add(2 * time.Minute), Value: -0.5},
	}
	assert.Equal(t, want, got)

	// The stored integers are Unix milliseconds computed outside this code:
	// one block for the UTC day, with the first and last sample times.
	var day, first, last, count int64
	require.NoError(t, plainDB(t, path).QueryRow(
		"SELECT day_ms, first_ms, last_ms, n FROM sample_blocks").Scan(&day, &first, &last, &count))
	assert.Equal(t, int64(1719792000000), day, "date -u -d 2024-07-01T00:00:00Z +%s gives 1719792000")
	assert.Equal(t, t0Ms, first)
	assert.Equal(t, t0Ms+2*60000, last, "two minutes after t0")
	assert.Equal(t, int64(4), count)

	info, err := s.SeriesInfo(ctx, ref.Name())
	require.NoError(t, err)
	assert.Equal(t, SeriesInfo{
		Name: "AHU-1 SAT", Kind: "temperature", UnitSI: "°C", SourceUnit: "°F",
		Count: 4, First: t0, Last: t0.Add(2 * time.Minute),
	}, info)
}

func TestStore_WriteSamples_Rewrite(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	ref := metrics.PointRef{Column: "AHU-1 RAT"}
	first := []ingest.Sample{{Time: t0, Value: 24}, {Time: t0.Add(time.Minute), Value: 24.5}}
	_, err := s.WriteSamples(ctx, ref.Name(), "", "°C", "°C", first)
	require.NoError(t, err)

	// Re-import: same times, one value corrected, one new time, and a
	// duplicate time within the batch where the later one must win.
	second := []ingest.Sample{
		{Time: t0, Value: 24},
		{Time: t0.Add(time.Minute), Value: 99},
		{Time: t0.Add(time.Minute), Value: 25.5},
		{Time: t0.Add(2 * time.Minute), Value: 26},
	}
	_, err = s.WriteSamples(ctx, ref.Name(), "", "°C", "°C", second)
	require.NoError(t, err)
	assert.Equal(t, []ingest.Sample{
		{Time: t0, Value: 24},
		{Time: t0.Add(time.Minute), Value: 25.5},
		{Time: t0.Add(2 * time.Minute), Value: 26},
	}, collect(t, s, ref, t0, t0.Add(time.Hour)))

	// Exactly the same file again: nothing changes.
	_, err = s.WriteSamples(ctx, ref.Name(), "", "°C", "°C", second)
	require.NoError(t, err)
	info, err := s.SeriesInfo(ctx, ref.Name())
	require.NoError(t, err)
	assert.Equal(t, 3, info.Count)
	list, err := s.ListSeries(ctx)
	require.NoError(t, err)
	assert.Len(t, list, 1, "one series, not one per import")
}

func TestStore_WriteSamples_Days(t *testing.T) {
	// t0 is 14:00 UTC, so minute 600 starts the next UTC day: sizes around
	// the day's end exercise one block, two blocks and their seam.
	for _, n := range []int{0, 1, 599, 600, 601, 3*1440 + 7} {
		t.Run("n="+strconv.Itoa(n), func(t *testing.T) {
			ctx := testCtx(t)
			s, path := newStore(t)
			in := make([]ingest.Sample, n)
			for i := range in {
				in[i] = ingest.Sample{Time: t0.Add(time.Duration(i) * time.Minute), Value: float64(i) / 4}
			}
			w, err := s.WriteSamples(ctx, "p", "", "", "", in)
			require.NoError(t, err)
			assert.Equal(t, n, w)
			got := collect(t, s, metrics.PointRef{Point: "p"}, t0, t0.Add(5*24*time.Hour))
			require.Len(t, got, n)
			for i, sm := range got {
				if !assert.Equal(t, in[i], sm, "sample %d", i) {
					break
				}
			}
			// One block per UTC day touched: the first 600 minutes are on
			// t0's day, every 1440 after on one more.
			days := 0
			if n > 0 {
				days = 1 + (n-600+1439)/1440
			}
			var blocks int
			require.NoError(t, plainDB(t, path).QueryRow("SELECT count(*) FROM sample_blocks").Scan(&blocks))
			assert.Equal(t, days, blocks)
		})
	}
}

// TestStore_WriteSamples_Merge writes into days that already hold samples:
// the stored samples stay, new times are added, and a new value at a
// stored time replaces it, in every day the write touches.
func TestStore_WriteSamples_Merge(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	ref := metrics.PointRef{Point: "p"}
	// Every other minute from 20:00 to 04:00 the next day, value 1.
	start := t0.Add(6 * time.Hour)
	var first []ingest.Sample
	for m := 0; m < 8*60; m += 2 {
		first = append(first, ingest.Sample{Time: start.Add(time.Duration(m) * time.Minute), Value: 1})
	}
	_, err := s.WriteSamples(ctx, "p", "", "", "", first)
	require.NoError(t, err)
	// Every third minute over the same span, value 2, written backwards.
	var second []ingest.Sample
	for m := 8*60 - 3; m >= 0; m -= 3 {
		second = append(second, ingest.Sample{Time: start.Add(time.Duration(m) * time.Minute), Value: 2})
	}
	_, err = s.WriteSamples(ctx, "p", "", "", "", second)
	require.NoError(t, err)

	got := collect(t, s, ref, start, start.Add(8*time.Hour))
	var want []ingest.Sample
	for m := 0; m < 8*60; m++ {
		switch {
		case m%3 == 0:
			want = append(want, ingest.Sample{Time: start.Add(time.Duration(m) * time.Minute), Value: 2})
		case m%2 == 0:
			want = append(want, ingest.Sample{Time: start.Add(time.Duration(m) * time.Minute), Value: 1})
		}
	}
	assert.Equal(t, want, got)
	info, err := s.SeriesInfo(ctx, "p")
	require.NoError(t, err)
	assert.Equal(t, len(want), info.Count)
	assert.Equal(t, start, info.First)
	assert.Equal(t, start.Add(8*time.Hour-2*time.Minute), info.Last, "minute 478, the last even one")
}

func TestStore_WriteSamples_Refused(t *testing.T) {
	tests := []struct {
		name    string
		series  string
		unitSI  string
		samples []ingest.Sample
		wantErr error
		wantMsg []string
	}{
		{
			name:    "NaN",
			series:  "AHU-1 SAT",
			unitSI:  "°C",
			samples: []ingest.Sample{{Time: t0, Value: 1}, {Time: t0.Add(time.Minute), Value: math.NaN()}, {Time: t0.Add(2 * time.Minute), Value: math.Inf(1)}},
			wantErr: ErrNotFinite,
			wantMsg: []string{`"AHU-1 SAT"`, "2024-07-01T14:01:00Z", "NaN", "2 of 3"},
		},
		{
			name:    "minus infinity",
			series:  "AHU-1 SAT",
			unitSI:  "°C",
			samples: []ingest.Sample{{Time: t0, Value: math.Inf(-1)}},
			wantErr: ErrNotFinite,
			wantMsg: []string{"2024-07-01T14:00:00Z", "-Inf"},
		},
		{
			name:    "other unit",
			series:  "AHU-1 SAT",
			unitSI:  "Pa",
			samples: []ingest.Sample{{Time: t0, Value: 1}},
			wantErr: ErrUnitMismatch,
			wantMsg: []string{`"°C"`, `"Pa"`},
		},
		{
			name:    "empty name",
			samples: []ingest.Sample{{Time: t0, Value: 1}},
			wantErr: ErrInvalid,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			ctx := testCtx(t)
			s, _ := newStore(t)
			before := []ingest.Sample{{Time: t0.Add(-time.Minute), Value: 7}}
			_, err := s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", before)
			require.NoError(t, err)

			n, err := s.WriteSamples(ctx, tt.series, "", tt.unitSI, "", tt.samples)
			require.Error(t, err)
			assert.ErrorIs(t, err, tt.wantErr)
			assert.Zero(t, n)
			for _, m := range tt.wantMsg {
				assert.Contains(t, err.Error(), m)
			}
			assert.Equal(t, before, collect(t, s, metrics.PointRef{Point: "AHU-1 SAT"}, t0.Add(-time.Hour), t0.Add(time.Hour)),
				"nothing of the refused batch is written")
		})
	}
}

func TestStore_ReadSeries_Window(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	ref := metrics.PointRef{Point: "p"}
	// Samples at 0, 1, 2 and 3 s past t0.
	var in []ingest.Sample
	for i := range 4 {
		in = append(in, ingest.Sample{Time: t0.Add(time.Duration(i) * time.Second), Value: float64(i)})
	}
	_, err := s.WriteSamples(ctx, "p", "", "", "", in)
	require.NoError(t, err)

	sec := func(d float64) time.Time { return t0.Add(time.Duration(d * float64(time.Second))) }
	tests := []struct {
		name     string
		from, to time.Time
		want     []float64 // values, which equal the seconds past t0
	}{
		{"whole", sec(0), sec(4), []float64{0, 1, 2, 3}},
		{"from inclusive, to exclusive", sec(1), sec(3), []float64{1, 2}},
		{"empty window", sec(2), sec(2), nil},
		{"reversed window", sec(3), sec(1), nil},
		{"sub-ms from excludes the ms before it", sec(1).Add(time.Microsecond), sec(4), []float64{2, 3}},
		{"sub-ms to includes its own ms", sec(0), sec(2).Add(time.Microsecond), []float64{0, 1, 2}},
		{"one ms before a sample excludes it", sec(0), sec(2).Add(-time.Millisecond), []float64{0, 1}},
		{"before the data", sec(-10), sec(0), nil},
		{"after the data", sec(4), sec(100), nil},
		{"bounds in another zone", sec(1).In(time.FixedZone("X", 5*3600+1800)), sec(3).In(time.FixedZone("Y", -7*3600)), []float64{1, 2}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			var got []float64
			for _, sm := range collect(t, s, ref, tt.from, tt.to) {
				got = append(got, sm.Value)
			}
			assert.Equal(t, tt.want, got)
		})
	}
}

func TestStore_ReadSeries_Errors(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	var in []ingest.Sample
	for i := range 1000 {
		in = append(in, ingest.Sample{Time: t0.Add(time.Duration(i) * time.Second), Value: float64(i)})
	}
	_, err := s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", in)
	require.NoError(t, err)

	t.Run("callback error stops the read", func(t *testing.T) {
		stop := errors.New("enough")
		calls := 0
		err := s.ReadSeries(ctx, metrics.PointRef{Point: "AHU-1 SAT"}, t0, t0.Add(time.Hour), func(ingest.Sample) error {
			calls++
			if calls == 3 {
				return stop
			}
			return nil
		})
		assert.ErrorIs(t, err, stop)
		assert.Equal(t, 3, calls)
		// The connection went back to the pool in a usable state.
		assert.Len(t, collect(t, s, metrics.PointRef{Point: "AHU-1 SAT"}, t0, t0.Add(time.Hour)), 1000)
	})

	t.Run("unknown series", func(t *testing.T) {
		ref := metrics.PointRef{Measurement: "ahu", Field: "sat", Tags: map[string]string{"unit": "AHU-9"}}
		err := s.ReadSeries(ctx, ref, t0, t0.Add(time.Hour), func(ingest.Sample) error {
			t.Error("callback called for an unknown series")
			return nil
		})
		require.ErrorIs(t, err, ErrUnknownSeries)
		assert.Contains(t, err.Error(), `"ahu.sat{unit=AHU-9}"`)
		assert.Contains(t, err.Error(), `dewline import`)

		_, err = s.SeriesInfo(ctx, "AHU-9 SAT")
		assert.ErrorIs(t, err, ErrUnknownSeries)
	})
}

func TestStore_ListSeries(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	_, err := s.WriteSamples(ctx, "b", "power", "kW", "W", []ingest.Sample{{Time: t0, Value: 1}, {Time: t0.Add(time.Hour), Value: 2}})
	require.NoError(t, err)
	_, err = s.WriteSamples(ctx, "a", "", "", "", nil)
	require.NoError(t, err)
	// A later write fills in the description and keeps what it leaves empty.
	_, err = s.WriteSamples(ctx, "a", "temperature", "°C", "", nil)
	require.NoError(t, err)
	_, err = s.WriteSamples(ctx, "b", "", "", "kW", nil)
	require.NoError(t, err)

	list, err := s.ListSeries(ctx)
	require.NoError(t, err)
	assert.Equal(t, []SeriesInfo{
		{Name: "a", Kind: "temperature", UnitSI: "°C"},
		{Name: "b", Kind: "power", UnitSI: "kW", SourceUnit: "kW", Count: 2, First: t0, Last: t0.Add(time.Hour)},
	}, list)
}

func TestStore_RecordImport(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	// sha256 of the empty string, from FIPS 180-2 test vectors (common
	// knowledge, e.g. `sha256sum /dev/null`).
	const emptySHA = "E3B0C44298FC1C149AFBF4C8996FB92427AE41E4649B934CA495991B7852B855"
	l := ImportLog{File: "exports/ahu1.csv", SHA256: emptySHA, RowsRead: 10, Accepted: 28, Rejected: 2,
		Started: t0, Finished: t0.Add(1500 * time.Millisecond)}
	require.NoError(t, s.RecordImport(ctx, l))
	require.NoError(t, s.RecordImport(ctx, l), "the same file may be imported again")

	got, err := s.ListImports(ctx)
	require.NoError(t, err)
	require.Len(t, got, 2)
	want := l
	want.ID, want.SHA256 = 1, strings.ToLower(emptySHA)
	assert.Equal(t, want, got[0])
	assert.Equal(t, int64(2), got[1].ID)

	bad := ImportLog{SHA256: "abc", RowsRead: -1, Started: t0, Finished: t0.Add(-time.Second)}
	err = s.RecordImport(ctx, bad)
	require.ErrorIs(t, err, ErrInvalid)
	for _, m := range []string{"file is empty", `sha256 "abc"`, "rows_read is negative (-1)", "finished"} {
		assert.Contains(t, err.Error(), m, "every problem is reported at once")
	}
}

// TestStore_WriteSamples_Atomic fails the last of several day blocks of a
// batch and checks that none of the batch stays.
func TestStore_WriteSamples_Atomic(t *testing.T) {
	ctx := testCtx(t)
	s, path := newStore(t)
	ref := metrics.PointRef{Point: "AHU-1 SAT"}
	old := []ingest.Sample{{Time: t0, Value: 1}}
	_, err := s.WriteSamples(ctx, ref.Name(), "", "°C", "", old)
	require.NoError(t, err)

	// Three days of minutes; the third day's block fails.
	in := make([]ingest.Sample, 3*1440)
	for i := range in {
		in[i] = ingest.Sample{Time: t0.Add(time.Duration(i) * time.Minute), Value: 2}
	}
	badDay := int64(1719792000000) + 3*86400000 // t0's day (date -u -d 2024-07-01 +%s) plus three
	_, err = plainDB(t, path).Exec(`CREATE TRIGGER inject BEFORE INSERT ON sample_blocks WHEN NEW.day_ms = ` +
		strconv.FormatInt(badDay, 10) + ` BEGIN SELECT RAISE(ABORT, 'injected sample failure'); END`)
	require.NoError(t, err)

	_, err = s.WriteSamples(ctx, ref.Name(), "", "°C", "", in)
	require.ErrorContains(t, err, "injected sample failure")
	assert.Equal(t, old, collect(t, s, ref, t0, t0.Add(time.Hour)), "the batch is all or nothing")
}

// TestStore_ReadSeries_CorruptBlock: a block damaged outside dewline is an
// error naming the series and the day, not wrong samples.
func TestStore_ReadSeries_CorruptBlock(t *testing.T) {
	ctx := testCtx(t)
	s, path := newStore(t)
	_, err := s.WriteSamples(ctx, "AHU-1 SAT", "", "°C", "", []ingest.Sample{{Time: t0, Value: 13}, {Time: t0.Add(time.Minute), Value: 14}})
	require.NoError(t, err)
	_, err = plainDB(t, path).Exec("UPDATE sample_blocks SET data = substr(data, 1, length(data) - 1)")
	require.NoError(t, err)
	err = s.ReadSeries(ctx, metrics.PointRef{Point: "AHU-1 SAT"}, t0, t0.Add(time.Hour), func(ingest.Sample) error { return nil })
	require.ErrorIs(t, err, errCorruptBlock)
	for _, m := range []string{`"AHU-1 SAT"`, "2024-07-01", "cut short"} {
		assert.Contains(t, err.Error(), m)
	}
}

// TestStore_WriteBatch writes several series in one transaction: a series
// named twice keeps the later value at a shared time, and a batch with one
// refused series writes none of its series.
func TestStore_WriteBatch(t *testing.T) {
	ctx := testCtx(t)
	s, _ := newStore(t)
	_, err := s.WriteSamples(ctx, "b", "", "Pa", "", []ingest.Sample{{Time: t0, Value: 100}})
	require.NoError(t, err)

	n, err := s.WriteBatch(ctx, []SeriesSamples{
		{Name: "a", UnitSI: "°C", Samples: []ingest.Sample{{Time: t0, Value: 1}, {Time: t0.Add(time.Minute), Value: 2}}},
		{Name: "b", UnitSI: "Pa", Samples: []ingest.Sample{{Time: t0.Add(time.Minute), Value: 101}}},
		{Name: "a", Samples: []ingest.Sample{{Time: t0.Add(time.Minute), Value: 3}, {Time: t0.Add(2 * time.Minute), Value: 4}}},
	})
	require.NoError(t, err)
	assert.Equal(t, 5, n)
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 1}, {Time: t0.Add(time.Minute), Value: 3}, {Time: t0.Add(2 * time.Minute), Value: 4}},
		collect(t, s, metrics.PointRef{Point: "a"}, t0, t0.Add(time.Hour)))
	assert.Equal(t, []ingest.Sample{{Time: t0, Value: 100}, {Time: t0.Add(time.Minute), Value: 101}},
		collect(t, s, metrics.PointRef{Point: "b"}, t0, t0.Add(time.Hour)))

	_, err = s.WriteBatch(ctx, []SeriesSamples{
		{Name: "a", UnitSI: "°C", Samples: []ingest.Sample{{Time: t0.Add(3 * time.Minute), Value: 5}}},
		{Name: "b", UnitSI: "°C", Samples: []ingest.Sample{{Time: t0.Add(3 * time.Minute), Value: 6}}},
	})
	require.ErrorIs(t, err, ErrUnitMismatch)
	assert.Contains(t, err.Error(), `series "b"`)
	assert.Len(t, collect(t, s, metrics.PointRef{Point: "a"}, t0, t0.Add(time.Hour)), 3, "nothing of the refused batch, not even a")
}
