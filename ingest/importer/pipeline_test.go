package importer

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
)

// testConfig is an invented air handler whose points are the columns of
// a wide export, all in SI units, so values are stored as written.
const testConfig = `version: 1
site: {timezone: UTC, altitude: 0m, units: si}
air_handlers:
  - id: AHU-T
    cooling: {kind: dx, rated_eer: 11}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_space_dewpoint: 13C}
    points:
      entering_temp: {column: MAT, unit: C}
      entering_rh: {column: MARH, unit: "%"}
      leaving_temp: {column: LAT, unit: C}
      supply_temp: {column: SAT, unit: C}
      supply_flow: {column: FLOW, unit: m3/s}
`

var testStart = time.Date(2025, 3, 1, 0, 0, 0, 0, time.UTC)

// writeExport writes a wide export of the five points, one line a minute;
// minute m (file line m+2, after the header) holds the value m in SAT.
func writeExport(t *testing.T, minutes int) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "export.csv")
	f, err := os.Create(path)
	require.NoError(t, err)
	w := bufio.NewWriter(f)
	fmt.Fprintln(w, "Time,MAT,MARH,LAT,SAT,FLOW,OTHER")
	for m := range minutes {
		fmt.Fprintf(w, "%s,24,50,12,%d,3.5,1\n", testStart.Add(time.Duration(m)*time.Minute).Format(time.RFC3339), m)
	}
	require.NoError(t, w.Flush())
	require.NoError(t, f.Close())
	return path
}

// fakeWriter keeps what it is given; the call numbered failAt (from 1)
// fails instead. batches says whether it takes batches.
type fakeWriter struct {
	failAt int
	calls  int
	stored map[string][]ingest.Sample
}

func (f *fakeWriter) WriteSamples(_ context.Context, series string, _ ingest.PointTarget, s []ingest.Sample) error {
	f.calls++
	if f.calls == f.failAt {
		return errors.New("disk full")
	}
	if f.stored == nil {
		f.stored = map[string][]ingest.Sample{}
	}
	f.stored[series] = append(f.stored[series], s...)
	return nil
}

type fakeBatchWriter struct{ fakeWriter }

func (f *fakeBatchWriter) WriteSampleBatch(_ context.Context, batch []store.SeriesSamples) error {
	f.calls++
	if f.calls == f.failAt {
		return errors.New("disk full")
	}
	if f.stored == nil {
		f.stored = map[string][]ingest.Sample{}
	}
	for _, b := range batch {
		f.stored[b.Series] = append(f.stored[b.Series], b.Samples...)
	}
	return nil
}

var _ store.BatchSampleWriter = (*fakeBatchWriter)(nil)

func importWith(t *testing.T, w store.SampleWriter, path string) (Stats, error) {
	t.Helper()
	cfg, err := config.Parse(strings.NewReader(testConfig), "test.yaml")
	require.NoError(t, err)
	ix, err := Index(cfg)
	require.NoError(t, err)
	return File(context.Background(), path, Options{Config: cfg, ConfigPath: "test.yaml", Store: w, Index: ix,
		MaxBytes: 1 << 30, Log: zerolog.Nop()})
}

// TestFile_Pipeline imports an export longer than a batch into a store that
// takes batches and one that takes a series at a time: every mapped value
// arrives, in file order, and the unmapped column is counted.
func TestFile_Pipeline(t *testing.T) {
	const minutes = 3 * batchValues / 5 // three batches' worth of five points
	path := writeExport(t, minutes)
	for _, w := range []interface {
		store.SampleWriter
		got() map[string][]ingest.Sample
	}{&fakeBatchWriter{}, &fakeWriter{}} {
		t.Run(fmt.Sprintf("%T", w), func(t *testing.T) {
			s, err := importWith(t, w, path)
			require.NoError(t, err)
			assert.Equal(t, 5*minutes, s.Written)
			assert.Equal(t, minutes, s.Unmatched.Values, "OTHER, one a line")
			got := w.got()
			require.Len(t, got, 5)
			sat := got["SAT"]
			require.Len(t, sat, minutes)
			for m, smp := range sat {
				if smp.Value != float64(m) || !smp.Time.Equal(testStart.Add(time.Duration(m)*time.Minute)) {
					t.Fatalf("SAT sample %d is %v at %s", m, smp.Value, smp.Time)
				}
			}
		})
	}
}

func (f *fakeWriter) got() map[string][]ingest.Sample { return f.stored }

// TestFile_WriteFails: the store fails part-way; the error says up to
// which line the file is stored, and exactly the values of those lines
// are stored, whichever way the store takes them.
func TestFile_WriteFails(t *testing.T) {
	const minutes = 3 * batchValues / 5
	path := writeExport(t, minutes)
	for _, tc := range []struct {
		name string
		w    interface {
			store.SampleWriter
			got() map[string][]ingest.Sample
		}
	}{
		{"batches", &fakeBatchWriter{fakeWriter{failAt: 2}}},
		{"series", &fakeWriter{failAt: 7}}, // the second series of the second batch
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := importWith(t, tc.w, path)
			require.Error(t, err)
			assert.Contains(t, err.Error(), "disk full")
			var se *StoreError
			assert.ErrorAs(t, err, &se, "a failure of the store, which stops the command")
			// The SAT values are the minutes: the last one stored names
			// the last whole line stored (minute m is line m+2).
			sat := tc.w.got()["SAT"]
			require.NotEmpty(t, sat)
			lastLine := int(sat[len(sat)-1].Value) + 2
			assert.Contains(t, err.Error(), fmt.Sprintf("up to line %d is stored", lastLine))
			for _, name := range []string{"MARH", "MAT", "LAT", "FLOW"} {
				assert.GreaterOrEqual(t, len(tc.w.got()[name]), lastLine-1, "%s: every value of the lines stored", name)
			}
		})
	}

	t.Run("series of the batch that failed", func(t *testing.T) {
		// Series go in name order (FLOW, LAT, MARH, MAT, SAT): the
		// seventh write is LAT's of the second batch, after FLOW's.
		w := &fakeWriter{failAt: 7}
		s, err := importWith(t, w, path)
		require.Error(t, err)
		lastLine := int(w.got()["SAT"][len(w.got()["SAT"])-1].Value) + 2
		past := len(w.got()["FLOW"]) - (lastLine - 1) // FLOW's values after the lines stored whole, one a line
		require.Positive(t, past)
		assert.Contains(t, err.Error(), fmt.Sprintf("up to line %d is stored; of lines %d to ", lastLine, lastLine+1))
		assert.Contains(t, err.Error(), fmt.Sprintf(`these series are stored whole: "FLOW" (%d values), the others only as far as the error says`, past))
		assert.Equal(t, 5*(lastLine-1)+past, s.Written)
	})

	t.Run("first batch", func(t *testing.T) {
		_, err := importWith(t, &fakeBatchWriter{fakeWriter{failAt: 1}}, path)
		require.Error(t, err)
		assert.Contains(t, err.Error(), "disk full")
		assert.Contains(t, err.Error(), "nothing of "+path+" was stored")
	})
}

// TestFile_WriteFailsInTheLastBatch: a store that takes a series at a
// time stores the first series of a file's only batch and refuses the
// second. The error says which series of which lines are stored, not
// "nothing", and the summary counts the rows read.
func TestFile_WriteFailsInTheLastBatch(t *testing.T) {
	const minutes = 100
	path := writeExport(t, minutes)
	w := &fakeWriter{failAt: 2}
	s, err := importWith(t, w, path)
	require.Error(t, err)
	var se *StoreError
	assert.ErrorAs(t, err, &se)
	require.Len(t, w.got(), 1)
	require.Len(t, w.got()["FLOW"], minutes, "the first series in name order is stored")
	assert.NotContains(t, err.Error(), "nothing of")
	assert.Contains(t, err.Error(), fmt.Sprintf(`(no line of %s is stored whole; of lines 2 to %d, these series are stored whole: "FLOW" (%d values), the others only as far as the error says; once it is fixed, import the file again`, path, minutes+1, minutes))
	assert.Equal(t, minutes, s.Rows, "the header is not a row")
	assert.Equal(t, minutes, s.Written)

	var out strings.Builder
	s.Write(&out)
	assert.Contains(t, out.String(), fmt.Sprintf("%s: %d rows read, %d values accepted, %d written to the store", path, minutes, 6*minutes, minutes))
}
