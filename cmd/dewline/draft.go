package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"time"

	"github.com/dewline/dewline/ingest/draft"
	"github.com/dewline/dewline/ingest/outfile"
)

// runDraft proposes a configuration from CSV exports or an InfluxDB bucket.
func runDraft(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("draft", flag.ContinueOnError)
	var inputs stringList
	fs.Var(&inputs, "input", "trend export (CSV) to read the points from; repeatable (files may also follow the flags)")
	out := fs.String("o", "", "write the configuration to this file (default: standard output)")
	force := fs.Bool("force", false, "with -o: replace a file that exists (it may be a configuration you edited)")
	site := fs.String("site", "", "the site's name")
	zone := fs.String("timezone", "", "the site's IANA time zone, e.g. America/Chicago (needed for exports with local times)")
	altitude := fs.String("altitude", "", "the site's elevation with its unit, e.g. 15m or 50ft")
	year := fs.Int("year", 0, "year of export dates written without one")
	dayFirst := fs.String("day-first", "", "yes or no, for dates like 04/07/2026 when the exports do not tell")
	decimalComma := fs.String("decimal-comma", "", "yes or no, when the exports do not tell")
	id := fs.String("id", "AHU-1", "air handler id when no point names one (a single unit's export)")
	influxURL := fs.String("influx-url", "", "read the points from this InfluxDB server instead of exports")
	bucket := fs.String("bucket", "", "with --influx-url: the 2.x bucket, or database/retention_policy for 1.8")
	org := fs.String("org", "", "with --influx-url: the 2.x organisation")
	tokenEnv := fs.String("token-env", "DEWLINE_INFLUX_TOKEN", "with --influx-url: environment variable holding the token (\"user:pass\" for 1.8; unset: no authentication)")
	since := fs.Duration("since", 30*24*time.Hour, "with --influx-url: how far back to look for series")
	toS := fs.String("to", "", "with --influx-url: end of the window (RFC 3339; default now)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline draft [flags] trends.csv ...\n       dewline draft [flags] --influx-url URL --bucket B")
		fs.PrintDefaults()
	}
	if err := parseFlagsFiles(fs, args, e.stdout); err != nil {
		return err
	}
	inputs = append(inputs, fs.Args()...)
	if (len(inputs) == 0) == (*influxURL == "") {
		return usagef("give either trend exports (files or --input) or --influx-url with --bucket")
	}
	if *out != "" {
		if err := outfile.RefuseInputs("-o", *out, inputs...); err != nil {
			return usagef("%v", err)
		}
		if _, err := os.Stat(*out); err == nil && !*force {
			return usagef("-o %s exists and may be a configuration you edited: give another file, or --force to replace it", *out)
		}
	}
	var loc *time.Location
	if *zone != "" {
		l, err := time.LoadLocation(*zone)
		if err != nil {
			return usagef("--timezone %q is not an IANA zone name such as America/Chicago", *zone)
		}
		loc = l
	}
	s := draft.Site{Name: *site, TimeZone: *zone, Altitude: *altitude, Year: *year}
	var points []draft.Point
	if *influxURL != "" {
		if *bucket == "" {
			return usagef("--influx-url needs --bucket")
		}
		var err error
		points, err = draft.ReadBucket(ctx, draft.Bucket{URL: *influxURL, Bucket: *bucket, Org: *org, TokenEnv: *tokenEnv,
			Since: *since, To: *toS}, &s)
		if err != nil {
			return draftUsage(err)
		}
	} else {
		var rd draft.Read
		var err error
		points, rd, err = draft.ReadExports(draft.Exports{Paths: inputs, Location: loc, Year: *year, DayFirst: *dayFirst,
			DecimalComma: *decimalComma}, &s)
		if err != nil {
			return draftUsage(err)
		}
		e.log.Info().Int("files", len(inputs)).Int("values", rd.Rows).Int("rejected", rd.Rejected).Int("points", len(points)).Msg("exports read")
	}
	if len(points) == 0 {
		return errors.New("no numeric series found; check the exports or the bucket and --since")
	}
	prop := draft.Propose(points, draft.Options{DefaultID: *id})
	if err := prop.WriteFile(*out, e.stdout, s); err != nil {
		return err
	}
	// The summary goes to standard error when the configuration goes to
	// standard output.
	sw := e.stderr
	if *out != "" {
		sw = e.stdout
	}
	return prop.WriteSummary(sw, len(points), *out)
}

// draftUsage reports a choice the draft cannot use as given as a usage
// mistake.
func draftUsage(err error) error {
	var ie *draft.InputError
	if errors.As(err, &ie) {
		return usagef("%s", err)
	}
	return err
}
