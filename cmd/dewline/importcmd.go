package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"hash"
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

// importBatch is how many samples of one series are written at a time.
const importBatch = 8192

// importStats counts one file's import.
type importStats struct {
	file      string
	rows      int
	records   int
	written   int
	unmatched ingest.Unmatched
	notFinite int
	units     *ingest.RowUnits
	csv       csvfile.Stats
}

func runImport(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("import", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	maxMiB := fs.Int64("max-mib", defaultMaxImportMiB, "refuse an export larger than this many MiB (as read, before any gzip is unpacked); it bounds an endless pipe")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline import --config FILE [--max-mib N] trends.csv [more.csv ...]  (/dev/stdin reads a pipe)")
		fs.PrintDefaults()
	}
	// Files come after the flags.
	valueFlag := map[string]bool{"--config": true, "-config": true, "--max-mib": true, "-max-mib": true}
	var files []string
	for i, a := range args {
		if len(a) > 0 && a[0] != '-' && (i == 0 || !valueFlag[args[i-1]]) {
			files = append(files, a)
		}
	}
	flagArgs := make([]string, 0, len(args))
	for _, a := range args {
		if !contains(files, a) {
			flagArgs = append(flagArgs, a)
		}
	}
	if err := parseFlags(fs, flagArgs, e.stdout); err != nil {
		return err
	}
	if *cfgPath == "" {
		return usagef("--config is required")
	}
	if len(files) == 0 {
		return usagef("name at least one trend export to import")
	}
	if *maxMiB <= 0 {
		return usagef("--max-mib %d: give a positive size in MiB", *maxMiB)
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return err
	}
	units := map[string]ingest.UnitPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.UnitPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	ix, err := ingest.NewPointIndex(units)
	if err != nil {
		return err
	}
	st, err := openStore(ctx, cfg, false, e.log)
	if err != nil {
		return err
	}
	defer st.Close()

	var all []importStats
	var empty []error // files that stored nothing: the others are still imported
	for _, path := range files {
		s, err := importFile(ctx, e.log, cfg, *cfgPath, st, ix, path, *maxMiB<<20)
		all = append(all, s)
		var ne *nothingWrittenError
		if errors.As(err, &ne) {
			empty = append(empty, err)
			continue
		}
		if err != nil {
			printImport(e.stdout, all)
			return err
		}
	}
	printImport(e.stdout, all)
	return errors.Join(empty...)
}

// nothingWrittenError is an import that stored no value.
type nothingWrittenError struct{ msg string }

func (e *nothingWrittenError) Error() string { return e.msg }

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// importFile reads one export and writes its configured points to the
// store, in batches per series. What was written before an error stays
// written (re-importing the file later upserts, never duplicates).
//
// The file is read once: its SHA-256 (for the import log) is taken from
// the bytes the parser reads, so a pipe or /dev/stdin works, and reading
// stops with an error past maxBytes, so an endless input cannot run on.
func importFile(ctx context.Context, log zerolog.Logger, cfg *config.Config, cfgPath string, st *stores, ix ingest.PointIndex, path string, maxBytes int64) (importStats, error) {
	s := importStats{file: path}
	started := time.Now()
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
	r, err := csvfile.NewReader(src, path, cfg.CSVOptions())
	if err != nil {
		return s, err
	}
	batches := map[string][]ingest.Sample{}
	s.units = ingest.NewRowUnits(ix)
	flush := func(name string) error {
		b := batches[name]
		if len(b) == 0 {
			return nil
		}
		t := ix[name][0]
		if err := st.WriteSamples(ctx, name, t, b); err != nil {
			return fmt.Errorf("import %s: write %s: %w", path, name, err)
		}
		s.written += len(b)
		batches[name] = b[:0]
		return nil
	}
	prog := newProgress("importing "+path, log)
	for n := 0; ; n++ {
		if n%65536 == 0 {
			if err := ctx.Err(); err != nil {
				return s, err
			}
			if size > 0 {
				prog.update(int(cr.n*1000/size), 1000)
			}
		}
		rec, err := r.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return s, err
		}
		s.records++
		ts, ok := ix[rec.Series]
		if !ok {
			s.unmatched.Add(rec.Series)
			continue
		}
		ru, ok, err := s.units.Check(rec)
		if err != nil {
			return s, err
		}
		if !ok {
			continue // counted in s.units
		}
		v := ru.ToSI(ts[0], rec.Value)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			s.notFinite++
			continue
		}
		batches[rec.Series] = append(batches[rec.Series], ingest.Sample{Time: rec.Time, Value: v})
		if len(batches[rec.Series]) >= importBatch {
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
		prog.update(1000, 1000)
	}
	// Whatever the parser left unread (nothing, normally) still counts
	// towards the hash and the limit.
	if _, err := io.Copy(io.Discard, cr); err != nil {
		return s, err
	}
	sum := hex.EncodeToString(cr.h.Sum(nil))
	s.csv = r.Stats()
	s.rows = s.csv.Rows
	if il, ok := st.Store.(store.ImportLogger); ok {
		rejected := s.csv.RejectedTotal() + s.notFinite + s.units.Rejected
		if err := il.RecordImport(ctx, store.ImportLog{File: path, SHA256: sum, RowsRead: s.rows, Accepted: s.written,
			Rejected: rejected, Started: started, Finished: time.Now()}); err != nil {
			return s, err
		}
	}
	log.Info().Str("file", path).Int("rows", s.rows).Int("written", s.written).Int("rejected", s.csv.RejectedTotal()).
		Dur("took_ms", time.Since(started)).Msg("imported")
	if s.written == 0 {
		return s, nothingWritten(s, cfgPath)
	}
	return s, nil
}

// nothingWritten explains an import that stored no value, with the fix.
func nothingWritten(s importStats, cfgPath string) error {
	what := fmt.Sprintf("%s: nothing was written to the store (%d rows read, %d values, %d rejected)",
		s.file, s.rows, s.records, s.csv.RejectedTotal()+s.notFinite+s.units.Rejected)
	fix := "every value was refused; see the rejections above"
	switch {
	case s.rows == 0:
		fix = "the file has a header but no data rows; export the trend log again"
	case s.records == 0:
		fix = fmt.Sprintf("no value could be read; see the rejected rows above and correct the file, or exports: in %s", cfgPath)
	case s.unmatched.Values > 0 && s.records == s.unmatched.Values:
		fix = fmt.Sprintf("none of the file's series is mapped to a point in %s; map them under air_handlers[].points (column: for wide exports, point: for long ones)", cfgPath)
	}
	return &nothingWrittenError{msg: what + ": " + fix}
}

func printImport(w io.Writer, all []importStats) {
	for _, s := range all {
		fmt.Fprintf(w, "%s: %d rows read, %d values accepted, %d written to the store\n", s.file, s.rows, s.records, s.written)
		if s.csv.Missing > 0 {
			fmt.Fprintf(w, "  %d empty or missing-value cells skipped\n", s.csv.Missing)
		}
		reasons := make([]string, 0, len(s.csv.Rejected))
		for r := range s.csv.Rejected {
			reasons = append(reasons, string(r))
		}
		sort.Strings(reasons)
		for _, r := range reasons {
			fmt.Fprintf(w, "  rejected, %s: %d\n", r, s.csv.Rejected[csvfile.Reason(r)])
		}
		for _, ex := range s.csv.Examples {
			fmt.Fprintf(w, "    e.g. %s\n", ex.String())
		}
		if s.notFinite > 0 {
			fmt.Fprintf(w, "  rejected, not a finite number after unit conversion: %d\n", s.notFinite)
		}
		printRowUnits(w, s.units)
		if d := s.csv.DST; d.Repeated > 0 || d.Skipped > 0 {
			fmt.Fprintf(w, "  daylight saving: %d rows in a repeated hour (%d read as the earlier offset, %d as the later); %d rows in a skipped hour rejected\n",
				d.Repeated, d.RepeatedEarlier, d.RepeatedLater, d.Skipped)
		}
		if u := s.unmatched.Summary(unmatchedExamples); u != "" {
			fmt.Fprintf(w, "  skipped: %s\n", u)
		}
	}
}

// printRowUnits reports the rows read in a unit their row states other
// than the configured one, and the rows refused for their unit.
func printRowUnits(w io.Writer, ru *ingest.RowUnits) {
	if ru == nil {
		return
	}
	if ru.Converted > 0 {
		fmt.Fprintf(w, "  converted from the unit their row states (not the configured one): %d\n", ru.Converted)
	}
	if ru.Rejected > 0 {
		fmt.Fprintf(w, "  rejected, unit not of the point's kind: %d\n", ru.Rejected)
		for _, ex := range ru.Examples {
			fmt.Fprintf(w, "    e.g. %s\n", ex.String())
		}
	}
}

// unmatchedExamples is how many unmapped series names a summary shows.
const unmatchedExamples = 5

// defaultMaxImportMiB bounds one import: 64 GiB, some fifty times a year
// of one-minute readings of 500 points in a wide export.
const defaultMaxImportMiB = 64 << 10

// hashingReader reads a file once for the parser: it hashes every byte
// the first time it is read (a seek back and a second read, as the reader's
// date-order scan does on a regular file, hash nothing twice), counts the
// bytes for progress and fails past max.
type hashingReader struct {
	r      io.Reader
	h      hash.Hash
	max    int64
	path   string
	pos    int64 // offset of the next byte read
	hashed int64 // bytes hashed: [0, hashed)
	n      int64 // furthest offset read, for progress
}

// errTooLarge is the error past the size limit.
func (c *hashingReader) errTooLarge() error {
	return fmt.Errorf("import %s: more than --max-mib %d MiB read (an endless pipe?); split the export or raise --max-mib", c.path, c.max>>20)
}

func (c *hashingReader) Read(p []byte) (int, error) {
	if c.pos >= c.max {
		// At the limit: only the end of the input may follow.
		var one [1]byte
		if n, err := c.r.Read(one[:]); n == 0 && err != nil {
			return 0, err
		}
		return 0, c.errTooLarge()
	}
	if int64(len(p)) > c.max-c.pos {
		p = p[:c.max-c.pos]
	}
	n, err := c.r.Read(p)
	if end := c.pos + int64(n); end > c.hashed {
		if c.pos > c.hashed {
			return n, fmt.Errorf("import %s: read skipped bytes %d..%d, the hash would miss them", c.path, c.hashed, c.pos)
		}
		c.h.Write(p[c.hashed-c.pos : n])
		c.hashed = end
	}
	c.pos += int64(n)
	c.n = max(c.n, c.pos)
	return n, err
}

// seekingHashReader is a hashingReader over a regular file, which may seek.
type seekingHashReader struct{ *hashingReader }

func (s seekingHashReader) Seek(offset int64, whence int) (int64, error) {
	sk, ok := s.r.(io.Seeker)
	if !ok {
		return 0, fmt.Errorf("import %s: not seekable", s.path)
	}
	pos, err := sk.Seek(offset, whence)
	if err == nil {
		s.pos = pos
	}
	return pos, err
}
