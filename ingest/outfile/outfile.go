package outfile

import (
	"bufio"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// Mode is the permission of written files: readable by all, as reports and
// exports are meant to be shared.
const Mode fs.FileMode = 0o644

// File is an output file being written. Write to it, then Commit to put
// it in place, or Abort (always safe to defer) to drop it.
type File struct {
	path string
	tmp  *os.File
	done bool
}

// Create starts writing path. The folder must exist; nothing at path
// changes until Commit.
func Create(path string) (*File, error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*.tmp")
	if err != nil {
		return nil, fmt.Errorf("write %s: %w", path, err)
	}
	return &File{path: path, tmp: tmp}, nil
}

// Path is the destination.
func (f *File) Path() string { return f.path }

// Write writes to the temporary file.
func (f *File) Write(p []byte) (int, error) { return f.tmp.Write(p) }

// Commit syncs the temporary file and renames it over the destination. It
// returns the size written.
func (f *File) Commit() (int64, error) {
	if f.done {
		return 0, fmt.Errorf("write %s: %w", f.path, os.ErrClosed)
	}
	f.done = true
	fail := func(err error) (int64, error) {
		_ = f.tmp.Close()
		_ = os.Remove(f.tmp.Name())
		return 0, fmt.Errorf("write %s: %w", f.path, err)
	}
	if err := f.tmp.Chmod(Mode); err != nil {
		return fail(err)
	}
	if err := f.tmp.Sync(); err != nil {
		return fail(err)
	}
	info, err := f.tmp.Stat()
	if err != nil {
		return fail(err)
	}
	if err := f.tmp.Close(); err != nil {
		_ = os.Remove(f.tmp.Name())
		return 0, fmt.Errorf("write %s: %w", f.path, err)
	}
	if err := os.Rename(f.tmp.Name(), f.path); err != nil {
		_ = os.Remove(f.tmp.Name())
		return 0, fmt.Errorf("write %s: %w", f.path, err)
	}
	return info.Size(), nil
}

// Abort drops the temporary file; after Commit it does nothing.
func (f *File) Abort() {
	if f == nil || f.done {
		return
	}
	f.done = true
	_ = f.tmp.Close()
	_ = os.Remove(f.tmp.Name())
}

// Write writes path in one go: fill writes the content through a buffer;
// an error from it leaves path as it was.
func Write(path string, fill func(w *bufio.Writer) error) (int64, error) {
	f, err := Create(path)
	if err != nil {
		return 0, err
	}
	defer f.Abort()
	w := bufio.NewWriterSize(f, 1<<16)
	if err := fill(w); err != nil {
		return 0, fmt.Errorf("write %s: %w", path, err)
	}
	if err := w.Flush(); err != nil {
		return 0, fmt.Errorf("write %s: %w", path, err)
	}
	return f.Commit()
}

// WriteBytes writes b to path like Write.
func WriteBytes(path string, b []byte) error {
	_, err := Write(path, func(w *bufio.Writer) error { _, err := w.Write(b); return err })
	return err
}

// RefuseInputs returns an error when out names the same file as one of
// inputs (compared with os.SameFile, so through any path, symbolic link or
// hard link). Inputs that do not exist yet (a store not created) and an
// out that does not exist are no conflict. flag names the output flag for
// the message.
func RefuseInputs(flag, out string, inputs ...string) error {
	oi, err := os.Stat(out)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil
		}
		return fmt.Errorf("%s %s: %w", flag, out, err)
	}
	for _, in := range inputs {
		if in == "" {
			continue
		}
		ii, err := os.Stat(in)
		if err != nil {
			continue
		}
		if os.SameFile(oi, ii) {
			return &InputError{Flag: flag, Out: out, Input: in}
		}
	}
	return nil
}

// InputError is an output path that names an input.
type InputError struct {
	Flag, Out, Input string
}

func (e *InputError) Error() string {
	if e.Out == e.Input {
		return fmt.Sprintf("%s %s is also an input of this run; writing it would destroy it: choose another output path", e.Flag, e.Out)
	}
	return fmt.Sprintf("%s %s is the same file as the input %s; writing it would destroy it: choose another output path", e.Flag, e.Out, e.Input)
}
