package importer

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/store"
)

// batchSamples is how many samples of one series are written at a time.
const batchSamples = 8192

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
// batches per series. What was written before an error stays written
// (re-importing the file later upserts, never duplicates).
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
		return s, fmt.Errorf("import: %w", err)
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
	batches := map[string][]ingest.Sample{}
	s.Units = ingest.NewRowUnits(ix)
	flush := func(name string) error {
		b := batches[name]
		if len(b) == 0 {
			return nil
		}
		t := ix[name][0]
		if err := o.Store.WriteSamples(ctx, name, t, b); err != nil {
			return fmt.Errorf("import %s: write %s: %w", path, name, err)
		}
		s.Written += len(b)
		batches[name] = b[:0]
		return nil
	}
	prog := o.Progress
	if prog == nil {
		prog = func(int, int) {}
	}
	for n := 0; ; n++ {
		if n%65536 == 0 {
			if err := ctx.Err(); err != nil {
				return s, err
			}
			if size > 0 {
				prog(int(cr.n*1000/size), 1000)
			}
		}
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return s, err
		}
		s.Records++
		ts, ok := ix[rec.Series]
		if !ok {
			s.Unmatched.Add(rec.Series)
			continue
		}
		ru, ok, err := s.Units.Check(rec)
		if err != nil {
			return s, err
		}
		if !ok {
			continue // counted in s.Units
		}
		v := ru.ToSI(ts[0], rec.Value)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			s.NotFinite++
			continue
		}
		batches[rec.Series] = append(batches[rec.Series], ingest.Sample{Time: rec.Time, Value: v})
		if len(batches[rec.Series]) >= batchSamples {
			if err := flush(rec.Series); err != nil {
				return s, err
			}
		}
	}
	names := make([]string, 0, len(batches))
	for n := range batches {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		if err := flush(n); err != nil {
			return s, err
		}
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
			return s, err
		}
	}
	log.Info().Str("file", path).Int("rows", s.Rows).Int("written", s.Written).Int("rejected", s.CSV.RejectedTotal()).
		Dur("took_ms", time.Since(started)).Msg("imported")
	if s.Written == 0 {
		return s, nothingWritten(s, o.ConfigPath)
	}
	return s, nil
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
