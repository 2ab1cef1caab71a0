package main

import (
	"context"
	"flag"
	"fmt"
	"slices"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest/importer"
)

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

	return importer.Files(ctx, files, importer.Options{Config: cfg, ConfigPath: *cfgPath, Store: st.Store, Index: ix, MaxBytes: *maxMiB << 20, Log: e.log},
		func(path string) func(int, int) { return telemetry.NewProgress("importing "+path, e.log).Update }, e.stdout, nil)
}
