package importer

import (
	"bytes"
	"crypto/sha256"
	"io"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// The reader hashes every byte once, even when the parser seeks back and
// reads again, and refuses to read past its limit.
func TestHashingReader(t *testing.T) {
	data := bytes.Repeat([]byte("2026-07-01T00:00:00Z,AHU-1 SAT,55.1\n"), 100)
	want := sha256.Sum256(data)

	t.Run("seek back hashes nothing twice", func(t *testing.T) {
		cr := &hashingReader{r: bytes.NewReader(data), h: sha256.New(), max: 1 << 20, path: "x.csv"}
		r := seekingHashReader{cr}
		head := make([]byte, 500)
		_, err := io.ReadFull(r, head)
		require.NoError(t, err)
		_, err = r.Seek(0, io.SeekStart)
		require.NoError(t, err)
		_, err = io.Copy(io.Discard, r)
		require.NoError(t, err)
		assert.Equal(t, want[:], cr.h.Sum(nil))
		assert.Equal(t, int64(len(data)), cr.n)
	})
	t.Run("past the limit", func(t *testing.T) {
		cr := &hashingReader{r: bytes.NewReader(data), h: sha256.New(), max: 100, path: "x.csv"}
		_, err := io.Copy(io.Discard, cr)
		require.Error(t, err)
		assert.Contains(t, err.Error(), "raise --max-mib")
	})
	t.Run("exactly at the limit", func(t *testing.T) {
		cr := &hashingReader{r: bytes.NewReader(data), h: sha256.New(), max: int64(len(data)), path: "x.csv"}
		_, err := io.Copy(io.Discard, cr)
		require.NoError(t, err)
		assert.Equal(t, want[:], cr.h.Sum(nil))
	})
}
