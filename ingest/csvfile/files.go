package csvfile

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/dewline/dewline/ingest"
)

// Files reads several trend exports as one stream in time order: a k-way
// merge that holds one record per file. Each file must itself be in time
// order for the result to be (a long file sorted by point is not); records
// with equal times come in file order. Files is not safe for concurrent use.
type Files struct {
	readers []*Reader
	closers []io.Closer
	heads   []head // min-heap by time, then file index
	started bool
}

type head struct {
	rec ingest.Record
	idx int
}

// OpenFiles opens the files at paths with one Options for all of them. An
// error names the file it comes from; files opened before it are closed.
func OpenFiles(paths []string, opt Options) (*Files, error) {
	f := &Files{}
	for _, p := range paths {
		fh, err := os.Open(p)
		if err != nil {
			_ = f.Close()
			return nil, fmt.Errorf("open trend file: %w", err)
		}
		r, err := NewReader(fh, p, opt)
		if err != nil {
			_ = fh.Close()
			_ = f.Close()
			return nil, err
		}
		f.readers = append(f.readers, r)
		f.closers = append(f.closers, fh)
	}
	return f, nil
}

// Merge reads readers as one stream in time order, like OpenFiles. The
// caller closes what the readers read from.
func Merge(readers ...*Reader) *Files {
	return &Files{readers: readers}
}

// Next returns the earliest of the files' next records, or io.EOF when all
// are done. A file's read error stops the stream and names the file.
func (f *Files) Next() (ingest.Record, error) {
	if !f.started {
		f.started = true
		for i, r := range f.readers {
			rec, err := r.Next()
			if errors.Is(err, io.EOF) {
				continue
			}
			if err != nil {
				return ingest.Record{}, err
			}
			f.push(head{rec, i})
		}
	}
	if len(f.heads) == 0 {
		return ingest.Record{}, io.EOF
	}
	top := f.heads[0]
	rec, err := f.readers[top.idx].Next()
	switch {
	case err == nil:
		f.heads[0] = head{rec, top.idx}
		f.down(0)
	case errors.Is(err, io.EOF):
		last := len(f.heads) - 1
		f.heads[0] = f.heads[last]
		f.heads = f.heads[:last]
		if last > 0 {
			f.down(0)
		}
	default:
		return ingest.Record{}, err
	}
	return top.rec, nil
}

// Read fills dst with the next records in time order, like Next, and
// returns how many it wrote: n > 0 and no error, or 0 and the error that
// ends the stream (io.EOF at its end). One file is read straight into dst
// (see Reader.Read); several are merged record by record.
func (f *Files) Read(dst []ingest.Record) (int, error) {
	if len(f.readers) == 1 && !f.started {
		return f.readers[0].Read(dst)
	}
	n := 0
	for n < len(dst) {
		rec, err := f.Next()
		if err != nil {
			if n > 0 {
				return n, nil // the error comes again with the next call
			}
			return 0, err
		}
		dst[n] = rec
		n++
	}
	return n, nil
}

// Readers returns the readers in the order of the paths, for their Stats,
// Columns and Detected.
func (f *Files) Readers() []*Reader { return f.readers }

// Close closes the files OpenFiles opened.
func (f *Files) Close() error {
	var errs []error
	for _, c := range f.closers {
		errs = append(errs, c.Close())
	}
	f.closers = nil
	return errors.Join(errs...)
}

func (f *Files) less(a, b head) bool {
	if a.rec.Time.Equal(b.rec.Time) {
		return a.idx < b.idx
	}
	return a.rec.Time.Before(b.rec.Time)
}

func (f *Files) push(h head) {
	f.heads = append(f.heads, h)
	i := len(f.heads) - 1
	for i > 0 {
		p := (i - 1) / 2
		if !f.less(f.heads[i], f.heads[p]) {
			break
		}
		f.heads[i], f.heads[p] = f.heads[p], f.heads[i]
		i = p
	}
}

func (f *Files) down(i int) {
	n := len(f.heads)
	for {
		l := 2*i + 1
		if l >= n {
			return
		}
		m := l
		if r := l + 1; r < n && f.less(f.heads[r], f.heads[l]) {
			m = r
		}
		if !f.less(f.heads[m], f.heads[i]) {
			return
		}
		f.heads[i], f.heads[m] = f.heads[m], f.heads[i]
		i = m
	}
}

// ScanOrder reads each regular file of paths once, on its own, for
// ingest.ScanOrder: the span of the records of the series in ix over all
// the files, and the first record out of order in the first file that has
// one. Files read in order merge in order (a merge by time keeps each
// file's bound), so an analysis can stream them; it need not read a pipe
// twice: one that is not a regular file is left out (RecordHours checks
// its order as it streams).
func ScanOrder(ctx context.Context, paths []string, opt Options, ix ingest.PointIndex) (ingest.Order, error) {
	var all ingest.Order
	for _, path := range paths {
		if fi, err := os.Stat(path); err != nil || !fi.Mode().IsRegular() {
			continue // OpenFiles reports what is wrong with it
		}
		f, err := OpenFiles([]string{path}, opt)
		if err != nil {
			return all, err
		}
		o, err := ingest.ScanOrder(ctx, f, ix)
		f.Close()
		if err != nil {
			return all, err
		}
		if all.OutOfOrder == nil {
			all.OutOfOrder = o.OutOfOrder
		}
		if !o.First.IsZero() && (all.First.IsZero() || o.First.Before(all.First)) {
			all.First = o.First
		}
		if o.Last.After(all.Last) {
			all.Last = o.Last
		}
	}
	return all, nil
}
