package outfile

import (
	"bufio"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestWrite_FailureKeepsThePreviousFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.csv")
	require.NoError(t, os.WriteFile(path, []byte("previous\n"), 0o600))
	_, err := Write(path, func(w *bufio.Writer) error {
		_, _ = w.WriteString("half of the new")
		return errors.New("the run failed")
	})
	require.Error(t, err)
	got, err := os.ReadFile(path)
	require.NoError(t, err)
	assert.Equal(t, "previous\n", string(got))
	entries, err := os.ReadDir(dir)
	require.NoError(t, err)
	assert.Len(t, entries, 1, "no temporary file left behind")

	n, err := Write(path, func(w *bufio.Writer) error { _, err := w.WriteString("new\n"); return err })
	require.NoError(t, err)
	assert.Equal(t, int64(4), n)
	got, err = os.ReadFile(path)
	require.NoError(t, err)
	assert.Equal(t, "new\n", string(got))
	info, err := os.Stat(path)
	require.NoError(t, err)
	assert.Equal(t, Mode, info.Mode().Perm())
}

func TestFile_AbortAfterCommitIsHarmless(t *testing.T) {
	path := filepath.Join(t.TempDir(), "r.html")
	f, err := Create(path)
	require.NoError(t, err)
	_, err = f.Write([]byte("x"))
	require.NoError(t, err)
	_, err = f.Commit()
	require.NoError(t, err)
	f.Abort()
	got, err := os.ReadFile(path)
	require.NoError(t, err)
	assert.Equal(t, "x", string(got))
	_, err = f.Commit()
	assert.ErrorIs(t, err, os.ErrClosed)
}

func TestRefuseInputs(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "export.csv")
	require.NoError(t, os.WriteFile(in, []byte("data"), 0o600))
	link := filepath.Join(dir, "link.csv")
	require.NoError(t, os.Symlink(in, link))
	sub := filepath.Join(dir, "sub")
	require.NoError(t, os.Mkdir(sub, 0o755))
	tests := []struct {
		name string
		out  string
		bad  bool
	}{
		{"same path", in, true},
		{"through a symbolic link", link, true},
		{"through dot-dot", filepath.Join(sub, "..", "export.csv"), true},
		{"another file", filepath.Join(dir, "hourly.csv"), false},
		{"empty", "", false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := RefuseInputs("--out", tt.out, "", filepath.Join(dir, "missing.db"), in)
			if !tt.bad {
				assert.NoError(t, err)
				return
			}
			var ie *InputError
			require.ErrorAs(t, err, &ie)
			assert.Contains(t, err.Error(), "choose another output path")
		})
	}
}
