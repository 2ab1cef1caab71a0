package importer

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// readRecords is how many records one read of the export returns.
const readRecords = 1024

// DefaultMaxMiB bounds one import: 64 GiB, some fifty times a year of
// one-minute readings of 500 points in a wide export.
const DefaultMaxMiB = 64 << 10

// Stats counts one file's import.
type Stats struct {
	File      string
	Rows      int // data rows read
	Records   int // values read
	Written   int // values written to the store
	Unmatched ingest.Unmatched
	NotFinite int // values not finite after unit conversion
	Units     *ingest.RowUnits
	CSV       csvfile.Stats
	// Duplicates counts values that repeat their series' previous time
	// with another value: the later row is stored.
	Duplicates ingest.Duplicates
}

// Options are what one import needs besides the file.
type Options struct {
	Config     *config.Config
	ConfigPath string // named in the fixes of errors
	Store      store.SampleWriter
	Index      ingest.PointIndex
	MaxBytes   int64
	Log        zerolog.Logger
	// Progress, if set, is told the share of a regular file read, in
	// thousandths.
	Progress func(done, total int)
}

// NothingWrittenError is an import that stored no value; the command
// imports the other files and reports it at the end.
type NothingWrittenError struct{ msg string }

func (e *NothingWrittenError) Error() string { return e.msg }

// StoreError is an import stopped by the store itself: a write of samples,
// or of the import log, failed. Every other error of File is the file's
// own (it cannot be opened or read, is not a trend export, is too large,
// states a unit that does not fit) or the context's.
type StoreError struct{ Err error }

func (e *StoreError) Error() string { return e.Err.Error() }

func (e *StoreError) Unwrap() error { return e.Err }

// Index builds the point index of the configured air handlers.
func Index(cfg *config.Config) (ingest.PointIndex, error) {
	units := map[string]ingest.AirHandlerPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.AirHandlerPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	return ingest.NewPointIndex(units)
}

// File reads one export and writes its configured points to the store, in
// batches of whole lines, each written while the next is read. What was
// written before an error stays written, and the error says up to which
// line (re-importing the file later upserts, never duplicates).
//
// The file is read once: its SHA-256 (for the import log) is taken from
// the bytes the parser reads, so a pipe or /dev/stdin works, and reading
// stops with an error past MaxBytes, so an endless input cannot run on.
func File(ctx context.Context, path string, o Options) (Stats, error) {
	s := Stats{File: path}
	started := time.Now()
	log, ix, maxBytes := o.Log, o.Index, o.MaxBytes
	f, err := os.Open(path)
	if err != nil {
		return s, openError(path, err)
	}
	defer f.Close()
	size := int64(0)
	if fi, err := f.Stat(); err == nil && fi.Mode().IsRegular() {
		size = fi.Size()
	}
	if size > maxBytes {
		return s, fmt.Errorf("import %s: the file is %d MiB, more than --max-mib %d; split the export or raise --max-mib", path, size>>20, maxBytes>>20)
	}
	cr := &hashingReader{r: f, h: sha256.New(), max: maxBytes, path: path}
	var src io.Reader = cr
	if size > 0 {
		src = seekingHashReader{cr} // a regular file: the reader may scan ahead and seek back
	}
	r, err := csvfile.NewReader(src, path, o.Config.CSVOptions())
	if err != nil {
		return s, err
	}
	s.Units = ingest.NewRowUnits(ix)
	prog := o.Progress
	if prog == nil {
		prog = func(int, int) {}
	}
	// Reading and converting here, writing on the pipeline's goroutine.
	p := startPipeline(ctx, batchWriter(o.Store))
	cur := <-p.free
	stopped := func(err error) error {
		written, line, part, werr := p.finish(nil)
		s.Written = written
		s.CSV = r.Stats()
		s.Rows = s.CSV.Rows
		if werr != nil {
			err = &StoreError{Err: fmt.Errorf("import %s: %w", path, werr)}
		}
		return storedSoFar(path, line, part, err)
	}
	series := newSlots(ix)
	recs := make([]ingest.Record, readRecords)
	line, pos := -1, 0
	for reads := 0; ; reads++ {
		if reads%64 == 0 {
			if err := ctx.Err(); err != nil {
				return s, stopped(err)
			}
			if size > 0 {
				prog(int(cr.n*1000/size), 1000)
			}
		}
		k, err := r.Read(recs)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return s, stopped(err)
		}
		for i := range recs[:k] {
			rec := &recs[i]
			if rec.Line != line {
				line, pos = rec.Line, 0
				// A batch holds whole lines, so that an error can say
				// which lines are stored.
				if cur.values >= batchValues {
					cur = p.hand(cur)
					if p.failed.Load() {
						return s, stopped(nil)
					}
				}
			}
			sl := series.of(rec.Series, pos)
			pos++
			s.Records++
			if sl.ts == nil {
				s.Unmatched.Add(rec.Series)
				continue
			}
			// A row without a unit (a wide export) is in the configured
			// unit: what CheckTargets and RowUnit.ToSI give it, without
			// their round trip through a returned struct per value.
			var v float64
			if rec.Unit == "" {
				v = sl.ts[0].Unit.ToSI(rec.Value)
			} else {
				ru, ok, err := s.Units.CheckTargets(rec, sl.ts)
				if err != nil {
					return s, stopped(err)
				}
				if !ok {
					continue // counted in s.Units
				}
				v = ru.ToSI(sl.ts[0], rec.Value)
			}
			if math.IsNaN(v) || math.IsInf(v, 0) {
				s.NotFinite++
				continue
			}
			s.Duplicates.See(&sl.last, rec)
			cur.add(sl, rec.Line, ingest.Sample{Time: rec.Time, Value: v})
		}
	}
	written, line, part, err := p.finish(cur)
	s.Written = written
	s.CSV = r.Stats()
	s.Rows = s.CSV.Rows
	if err != nil {
		return s, storedSoFar(path, line, part, &StoreError{Err: fmt.Errorf("import %s: %w", path, err)})
	}
	if size > 0 {
		prog(1000, 1000)
	}
	// Whatever the parser left unread (nothing, normally) still counts
	// towards the hash and the limit.
	if _, err := io.Copy(io.Discard, cr); err != nil {
		return s, err
	}
	sum := hex.EncodeToString(cr.h.Sum(nil))
	s.CSV = r.Stats()
	s.Rows = s.CSV.Rows
	if il, ok := o.Store.(store.ImportLogger); ok {
		rejected := s.CSV.RejectedTotal() + s.NotFinite + s.Units.Rejected
		if err := il.RecordImport(ctx, store.ImportLog{File: path, SHA256: sum, RowsRead: s.Rows, Accepted: s.Written,
			Rejected: rejected, Started: started, Finished: time.Now()}); err != nil {
			return s, &StoreError{Err: fmt.Errorf("import %s: record it in the import log: %w", path, err)}
		}
	}
	log.Info().Str("file", path).Int("rows", s.Rows).Int("written", s.Written).Int("rejected", s.CSV.RejectedTotal()).
		Dur("took_ms", time.Since(started)).Msg("imported")
	if s.Written == 0 {
		return s, nothingWritten(s, o.ConfigPath)
	}
	return s, nil
}

// openError names the file that cannot be opened and what to do.
func openError(path string, err error) error {
	fix := "check that the file can be read"
	switch {
	case errors.Is(err, fs.ErrNotExist):
		fix = "check the path"
	case errors.Is(err, fs.ErrPermission):
		fix = "give the user running dewline read access to it"
	}
	return fmt.Errorf("import %s: %w; %s", path, err, fix)
}

// storedSeriesNamed is how many series of a batch stored in part an
// error names.
const storedSeriesNamed = 5

// storedSoFar adds to an import's error what of the file is stored: every
// value of the lines up to line (0: none), and the values of the series
// of the failed batch (lines part.from..part.to) stored before it failed.
func storedSoFar(path string, line int, part partial, err error) error {
	if line == 0 && len(part.series) == 0 {
		return fmt.Errorf("%w (nothing of %s was stored)", err, path)
	}
	var b strings.Builder
	if line == 0 {
		fmt.Fprintf(&b, "no line of %s is stored whole", path)
	} else {
		fmt.Fprintf(&b, "every value of %s up to line %d is stored", path, line)
	}
	if len(part.series) > 0 {
		named := make([]string, 0, storedSeriesNamed+1)
		rest, restValues := 0, 0
		for i, ss := range part.series {
			if i < storedSeriesNamed {
				named = append(named, fmt.Sprintf("%q (%s)", ss.name, metrics.Plural(ss.values, "value")))
			} else {
				rest++
				restValues += ss.values
			}
		}
		if rest > 0 {
			named = append(named, fmt.Sprintf("%d more series (%s)", rest, metrics.Plural(restValues, "value")))
		}
		fmt.Fprintf(&b, "; of lines %d to %d, these series are stored whole: %s, the others only as far as the error says", part.from, part.to, strings.Join(named, ", "))
	}
	return fmt.Errorf("%w (%s; once it is fixed, import the file again: stored samples are replaced, never duplicated)", err, b.String())
}

// nothingWritten explains an import that stored no value, with the fix.
func nothingWritten(s Stats, cfgPath string) error {
	what := fmt.Sprintf("%s: nothing was written to the store (%d rows read, %d values, %d rejected)",
		s.File, s.Rows, s.Records, s.CSV.RejectedTotal()+s.NotFinite+s.Units.Rejected)
	fix := "every value was refused; see the rejections above"
	switch {
	case s.Rows == 0:
		fix = "the file has a header but no data rows; export the trend log again"
	case s.Records == 0:
		fix = fmt.Sprintf("no value could be read; see the rejected rows above and correct the file, or exports: in %s", cfgPath)
	case s.Unmatched.Values > 0 && s.Records == s.Unmatched.Values:
		fix = fmt.Sprintf("none of the file's series is mapped to a point in %s; map them under air_handlers[].points (column: for wide exports, point: for long ones)", cfgPath)
	}
	return &NothingWrittenError{msg: what + ": " + fix}
}
