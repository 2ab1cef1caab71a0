package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/internal/outfile"
)

// runCompare compares the stored results of two periods around a sequence
// change, normalised for the entering-air humidity load (see
// dashboards.Compare for the method).
func runCompare(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	beforeS := fs.String("before", "", "the period before the change, FROM..TO (required)")
	afterS := fs.String("after", "", "the period after the change, FROM..TO (required)")
	out := fs.String("o", "", "also write the comparison as one self-contained HTML file")
	asJSON := fs.Bool("json", false, "print the comparison as JSON (SI units) instead of the table")
	unitsS := fs.String("units", "", "units of the table and the HTML: si or ip (default: the site's)")
	minHours := fs.Int("min-hours", dashboards.DefaultCompareMinHours, "hours a dew-point bin needs in each period to be used")
	fs.Usage = func() {
		w := fs.Output()
		fmt.Fprintln(w, "usage: dewline compare --config FILE --before FROM..TO --after FROM..TO [-o compare.html] [--json] [--units si|ip] [--min-hours N]")
		fmt.Fprintln(w, "Compares the stored hourly results of two periods around a change of a dehumidification sequence,")
		fmt.Fprintln(w, "normalised for the humidity of the entering air (bin method on the entering dew point).")
		fmt.Fprintln(w, "FROM and TO are dates (2026-06-01, whole days in site time, TO included) or times")
		fmt.Fprintln(w, "(2026-06-01T06:00 in site time, or RFC 3339 such as 2026-06-01T11:00:00Z; TO excluded).")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	switch {
	case *beforeS == "":
		return usagef("--before is required: give the period before the change, e.g. --before 2026-06-01..2026-06-14")
	case *afterS == "":
		return usagef("--after is required: give the period after the change, e.g. --after 2026-07-01..2026-07-14")
	case *unitsS != "" && *unitsS != "si" && *unitsS != "ip":
		return usagef("--units %q: use si or ip", *unitsS)
	case *minHours < 2:
		return usagef("--min-hours %d: use 2 or more (a bin needs two hours in each period to show its spread)", *minHours)
	}
	if *out != "" {
		if st, err := os.Stat(filepath.Dir(*out)); err != nil || !st.IsDir() {
			return usagef("-o %s: the folder %s does not exist; create it or choose another path", *out, filepath.Dir(*out))
		}
	}
	cfg, err := loadConfig(*cfgPath)
	if err != nil {
		return err
	}
	if err := outfile.RefuseInputs("-o", *out, *cfgPath, cfg.StorePath(), cfg.StatePath()); err != nil {
		return usagef("%v", err)
	}
	before, err := parsePeriodFlag("--before", *beforeS, cfg.Location)
	if err != nil {
		return err
	}
	after, err := parsePeriodFlag("--after", *afterS, cfg.Location)
	if err != nil {
		return err
	}
	if before.From.Before(after.To) && after.From.Before(before.To) {
		return usagef("--before %s and --after %s overlap: choose periods that share no hour", *beforeS, *afterS)
	}

	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	site := siteFor(cfg)
	display := dashboards.DisplayFor(*unitsS, site.IP)
	c, err := dashboards.Compare(ctx, site, st.results(time.Now), before, after, dashboards.CompareOptions{MinHours: *minHours})
	if err != nil {
		return err
	}

	// The HTML is rendered before anything is printed, so a failure
	// leaves no half output.
	var page bytes.Buffer
	if *out != "" {
		if err := dashboards.RenderCompare(&page, c, display); err != nil {
			return err
		}
	}
	if *asJSON {
		enc := json.NewEncoder(e.stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(c); err != nil {
			return fmt.Errorf("write the JSON: %w", err)
		}
	} else {
		printComparison(e.stdout, c, display)
	}
	if *out != "" {
		if err := outfile.WriteBytes(*out, page.Bytes()); err != nil {
			return fmt.Errorf("-o: %w", err)
		}
		e.log.Info().Str("path", *out).Int("bytes", page.Len()).Msg("comparison written")
		if !*asJSON {
			fmt.Fprintf(e.stdout, "\nHTML: %s\n", *out)
		}
	}
	return nil
}

// parsePeriodFlag reads FROM..TO. A date is a whole local day (TO's day
// included); a time is an instant (TO excluded).
func parsePeriodFlag(name, s string, loc *time.Location) (dashboards.Period, error) {
	fromS, toS, ok := strings.Cut(s, "..")
	if !ok || fromS == "" || toS == "" || strings.Contains(toS, "..") {
		return dashboards.Period{}, usagef("%s %q: give FROM..TO, e.g. 2026-06-01..2026-06-14 (dates in site time, the last day included) or RFC 3339 times", name, s)
	}
	from, err := parseTime(fromS, loc)
	if err != nil {
		return dashboards.Period{}, usagef("%s: start %v", name, err)
	}
	var to time.Time
	if day, err := time.ParseInLocation("2006-01-02", toS, loc); err == nil {
		// The whole last day: up to the start of the next one.
		to, err = parseTime(day.AddDate(0, 0, 1).Format("2006-01-02"), loc)
		if err != nil {
			return dashboards.Period{}, usagef("%s: end %v", name, err)
		}
	} else if to, err = parseTime(toS, loc); err != nil {
		return dashboards.Period{}, usagef("%s: end %v", name, err)
	}
	if !to.After(from) {
		return dashboards.Period{}, usagef("%s %q: the end is not after the start; give the earlier one first", name, s)
	}
	return dashboards.PeriodBetween(from, to, loc), nil
}

// printComparison writes the comparison as text: the periods, the table,
// the warnings, the method and the caution.
func printComparison(w io.Writer, c *dashboards.Comparison, d dashboards.Display) {
	site := c.Site
	if site == "" {
		site = "site"
	}
	fmt.Fprintf(w, "%s: before %s, after %s\n", site, c.Before.Label, c.After.Label)
	fmt.Fprintf(w, "hours stored: before %d, after %d; usable (entering dew point, enough coverage): before %d, after %d\n\n",
		c.Total.HoursBefore.Stored, c.Total.HoursAfter.Stored, c.Total.HoursBefore.Usable, c.Total.HoursAfter.Usable)
	header, rows := c.CompareTable(d)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, strings.Join(header, "\t"))
	for _, r := range rows {
		fmt.Fprintln(tw, strings.Join(r, "\t"))
	}
	_ = tw.Flush()
	if len(c.Warnings) > 0 {
		fmt.Fprintln(w, "\nwarnings:")
		for _, s := range c.Warnings {
			fmt.Fprintln(w, "  - "+s)
		}
	}
	width := fmt.Sprintf("%g K", float64(c.BinK))
	if d.IP {
		width += fmt.Sprintf(" (%g °F)", d.Delta(float64(c.BinK)))
	}
	fmt.Fprintf(w, "\nmethod: %s Bins %s wide; a bin is used with at least %d hours in each period.\n", c.Method, width, c.MinHours)
	fmt.Fprintln(w, "± meas.: from the hourly 95 % half-widths; ± sampling: from the spread within the bins (consecutive hours are not independent, so it understates).")
	fmt.Fprintln(w, "\n"+dashboards.CompareCaution)
}
