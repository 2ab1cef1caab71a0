package csvfile

import (
	"errors"
	"io"
	"path/filepath"
	"testing"

	"github.com/dewline/dewline/ingest"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestFiles_Merge(t *testing.T) {
	a, err := newString(t, "Time,A\n2026-07-14T13:00:00Z,1\n2026-07-14T13:02:00Z,3\n2026-07-14T13:04:00Z,5\n", Options{})
	require.NoError(t, err)
	b, err := newString(t, "Time,B\n2026-07-14T13:01:00Z,2\n2026-07-14T13:02:00Z,4\n", Options{})
	require.NoError(t, err)
	c, err := newString(t, "Time,C\n", Options{})
	require.NoError(t, err)
	f := Merge(a, c, b)
	var got []string
	for {
		rec, err := f.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(t, err)
		got = append(got, rec.Series+rec.Time.Format("04"))
	}
	assert.Equal(t, []string{"A00", "B01", "A02", "B02", "A04"}, got, "ties in file order")
	assert.NoError(t, f.Close())
}

func TestFiles_Open(t *testing.T) {
	ny := mustLoad(t, "America/New_York")
	paths := []string{filepath.Join(fixtures, "ridgeview-bad-rows.csv"), filepath.Join(fixtures, "ridgeview-unix-ms.tsv")}
	f, err := OpenFiles(paths, Options{Location: ny})
	require.NoError(t, err)
	defer func() { assert.NoError(t, f.Close()) }()
	var n int
	var last int64
	for {
		rec, err := f.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(t, err)
		require.GreaterOrEqual(t, rec.Time.UnixNano(), last, "time order")
		last = rec.Time.UnixNano()
		n++
	}
	assert.Equal(t, 10+7, n)
	require.Len(t, f.Readers(), 2)
	assert.Equal(t, 10, f.Readers()[0].Stats().Records)

	_, err = OpenFiles([]string{paths[0], filepath.Join(fixtures, "empty.csv")}, Options{Location: ny})
	assert.ErrorIs(t, err, ErrEmpty)
	_, err = OpenFiles([]string{filepath.Join(fixtures, "no-such-file.csv")}, Options{})
	assert.Error(t, err)
}

// Read gives the records Next gives, in the same order, for one file (read
// straight into the slice) and for several (merged).
func TestFiles_Read(t *testing.T) {
	open := func() []*Reader {
		a, err := newString(t, "Time,A\n2026-07-14T13:00:00Z,1\n2026-07-14T13:02:00Z,3\n2026-07-14T13:04:00Z,5\n", Options{})
		require.NoError(t, err)
		b, err := newString(t, "Time,B,C\n2026-07-14T13:01:00Z,2,7\n2026-07-14T13:02:00Z,4,8\n", Options{})
		require.NoError(t, err)
		return []*Reader{a, b}
	}
	key := func(rec ingest.Record) string { return rec.Series + rec.Time.Format("04") }
	for _, tc := range []struct {
		name  string
		files func() *Files
	}{
		{"one file", func() *Files { return Merge(open()[1]) }},
		{"several", func() *Files { return Merge(open()...) }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var want []string
			f := tc.files()
			for {
				rec, err := f.Next()
				if errors.Is(err, io.EOF) {
					break
				}
				require.NoError(t, err)
				want = append(want, key(rec))
			}
			var got []string
			f = tc.files()
			buf := make([]ingest.Record, 2)
			for {
				n, err := f.Read(buf)
				if errors.Is(err, io.EOF) {
					require.Zero(t, n)
					break
				}
				require.NoError(t, err)
				require.Positive(t, n)
				for _, rec := range buf[:n] {
					got = append(got, key(rec))
				}
			}
			assert.Equal(t, want, got)
			assert.NotEmpty(t, got)
		})
	}
}
