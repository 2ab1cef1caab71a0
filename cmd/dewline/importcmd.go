package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"slices"
	"strings"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest/importer"
)

// unmatchedExamples is how many unmapped series names a summary shows.
const unmatchedExamples = importer.UnmatchedExamples

func runImport(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("import", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	maxMiB := fs.Int64("max-mib", importer.DefaultMaxMiB, "refuse an export larger than this many MiB (as read, before any gzip is unpacked); it bounds an endless pipe")
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
		if !slices.Contains(files, a) {
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
	ix, err := importer.Index(cfg)
	if err != nil {
		return err
	}
	st, err := openStore(ctx, cfg, false, e.log)
	if err != nil {
		return err
	}
	defer st.Close()

	var all []importer.Stats // printed on the way out, whatever happened
	defer func() {
		for _, s := range all {
			s.Write(e.stdout)
		}
	}()
	var failed []fileFailure // the others are still imported
	for _, path := range files {
		prog := telemetry.NewProgress("importing "+path, e.log)
		s, err := importer.File(ctx, path, importer.Options{Config: cfg, ConfigPath: *cfgPath, Store: st.Store, Index: ix,
			MaxBytes: *maxMiB << 20, Log: e.log, Progress: prog.Update})
		all = append(all, s)
		if err == nil {
			continue
		}
		// A failure of the store (a write or the import log refused) or
		// an interrupt stops the command: every later file would go to
		// the same store, or was asked not to be read. Any other failure
		// is the file's own (missing, unreadable, not an export,
		// truncated, too large, nothing stored): the next file may well
		// be good.
		var se *importer.StoreError
		if errors.As(err, &se) || ctx.Err() != nil {
			if len(failed) > 0 {
				return fmt.Errorf("%w\n%v", err, importFailures{failed: failed, of: len(files)})
			}
			return err
		}
		failed = append(failed, fileFailure{path: path, err: err})
	}
	if len(failed) > 0 {
		return importFailures{failed: failed, of: len(files)}
	}
	return nil
}

// fileFailure is a file that failed to import for a reason of its own.
type fileFailure struct {
	path string
	err  error
}

// importFailures is the end of an import in which some files failed: a
// line naming them, then each one's reason and fix.
type importFailures struct {
	failed []fileFailure
	of     int // files named
}

func (f importFailures) Error() string {
	var b strings.Builder
	names := make([]string, len(f.failed))
	for i, ff := range f.failed {
		names[i] = ff.path
	}
	fmt.Fprintf(&b, "%d of %d files not imported, or only in part: %s", len(f.failed), f.of, strings.Join(names, ", "))
	for _, ff := range f.failed {
		fmt.Fprintf(&b, "\n  %v", ff.err)
	}
	return b.String()
}
