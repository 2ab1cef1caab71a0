package importer

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"
)

// Files imports paths one after another with o (Progress is taken from
// progress for each file, when set) and writes each file's Stats to report
// on the way out, whatever happened. A file that fails for a reason of its
// own (missing, unreadable, not an export, truncated, too large, nothing
// stored) does not stop the others: they are imported, and the error at
// the end (a FilesError) names every file that failed with its reason and
// fix. A failure of the store (a write or the import log refused) or an
// interrupt stops at once: every later file would go to the same store,
// or was asked not to be read. skip, when set, tells failures that are no
// failure to the caller (the analysis of exports takes a file without any
// configured point as a stream would: it holds nothing to analyse).
func Files(ctx context.Context, paths []string, o Options, progress func(path string) func(done, total int), report io.Writer, skip func(error) bool) error {
	var all []Stats
	defer func() {
		for _, s := range all {
			s.Write(report)
		}
	}()
	var failed []FileError
	for _, path := range paths {
		if progress != nil {
			o.Progress = progress(path)
		}
		s, err := File(ctx, path, o)
		all = append(all, s)
		if err == nil || skip != nil && skip(err) {
			continue
		}
		var se *StoreError
		if errors.As(err, &se) || ctx.Err() != nil {
			if len(failed) > 0 {
				return fmt.Errorf("%w\n%v", err, &FilesError{Failed: failed, Of: len(paths)})
			}
			return err
		}
		failed = append(failed, FileError{Path: path, Err: err})
	}
	if len(failed) > 0 {
		return &FilesError{Failed: failed, Of: len(paths)}
	}
	return nil
}

// FileError is a file that failed to import for a reason of its own.
type FileError struct {
	Path string
	Err  error
}

// FilesError is the end of an import in which some files failed: a line
// naming them, then each one's reason and fix.
type FilesError struct {
	Failed []FileError
	Of     int // files named
}

func (f *FilesError) Error() string {
	var b strings.Builder
	names := make([]string, len(f.Failed))
	for i, ff := range f.Failed {
		names[i] = ff.Path
	}
	fmt.Fprintf(&b, "%d of %d files not imported, or only in part: %s", len(f.Failed), f.Of, strings.Join(names, ", "))
	for _, ff := range f.Failed {
		fmt.Fprintf(&b, "\n  %v", ff.Err)
	}
	return b.String()
}
