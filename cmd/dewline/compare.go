package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest/outfile"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/metrics/compare"
)

// runCompare compares the stored results of two periods around a sequence
// change (see package metrics/compare for the method).
func runCompare(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	beforeS := fs.String("before", "", "the period before the change, FROM..TO (required)")
	afterS := fs.String("after", "", "the period after the change, FROM..TO (required)")
	out := fs.String("o", "", "also write the comparison as one self-contained HTML file")
	asJSON := fs.Bool("json", false, "print the comparison as JSON (SI units) instead of the table")
	unitsS := fs.String("units", "", "units of the table and the HTML: si or ip (default: the site's)")
	minHours := fs.Int("min-hours", compare.DefaultMinHours, "hours a dew-point bin of the bin check needs in each period to be used")
	normalise := fs.String("normalise-to", "", "also report the savings normalised to the conditions of the before or the after period, or of a period FROM..TO of stored results")
	fs.Usage = func() {
		w := fs.Output()
		fmt.Fprintln(w, "usage: dewline compare --config FILE --before FROM..TO --after FROM..TO [-o compare.html] [--json] [--units si|ip] [--normalise-to before|after|FROM..TO] [--min-hours N]")
		fmt.Fprintln(w, "Measures what a change of a dehumidification sequence saved: a baseline model of the before period's hours")
		fmt.Fprintln(w, "(ASHRAE Guideline 14 / IPMVP Option B style) projected onto the after period, minus what was measured,")
		fmt.Fprintln(w, "with its fit statistics and uncertainty; the bin method on the entering dew point as a check.")
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
	case *normalise != "" && *normalise != "before" && *normalise != "after" && !strings.Contains(*normalise, ".."):
		return usagef("--normalise-to %q: use before, after, or a period FROM..TO such as 2025-07-01..2025-07-31", *normalise)
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
	opt := compare.Options{MinHours: *minHours, NormaliseTo: *normalise}
	var normal *dashboards.Period
	if strings.Contains(*normalise, "..") {
		p, err := parsePeriodFlag("--normalise-to", *normalise, cfg.Location)
		if err != nil {
			return err
		}
		normal, opt.NormaliseTo = &p, "period"
	}

	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	site := siteFor(cfg)
	display := dashboards.DisplayFor(*unitsS, site.IP)
	c, err := compareStored(ctx, site, st.results(time.Now), before, after, normal, opt)
	if err != nil {
		return err
	}

	// The HTML is rendered before anything is printed, so a failure
	// leaves no half output.
	var page bytes.Buffer
	if *out != "" {
		if err := dashboards.RenderCompare(&page, c, display, cfg.Location); err != nil {
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
		dashboards.WriteCompareText(e.stdout, c, display)
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

// compareStored reads each period's stored hours of the compared units
// once and compares them; normal, when not nil, is a third period whose
// conditions the savings are normalised to (opt.NormaliseTo "period").
func compareStored(ctx context.Context, site *dashboards.Site, res dashboards.Results, before, after dashboards.Period, normal *dashboards.Period, opt compare.Options) (*compare.Comparison, error) {
	in := compare.Input{Site: site.Name, Currency: site.Currency, Zone: site.Zone,
		Before: compare.Window{From: before.From, To: before.To, Label: before.Label},
		After:  compare.Window{From: after.From, To: after.To, Label: after.Label}, Options: opt}
	windows := []compare.Window{in.Before, in.After}
	if normal != nil {
		in.Normal = compare.Window{From: normal.From, To: normal.To, Label: normal.Label}
		windows = append(windows, in.Normal)
	}
	for _, u := range site.AirHandlers {
		in.AirHandlers = append(in.AirHandlers, compare.AirHandler{ID: u.ID, Name: u.Name, Spec: u.Spec})
	}
	a, err := compare.New(in)
	if err != nil {
		return nil, err
	}
	ahu := ""
	if units := a.AirHandlers(); len(units) == 1 {
		ahu = units[0].ID
	}
	for k, w := range windows {
		n := 0
		err := res.Hours(ctx, ahu, w.From, w.To, func(r *metrics.Record) error {
			a.Add(compare.Side(k), r)
			n++
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("read the %s period's hours: %w", [3]string{"before", "after", "--normalise-to"}[k], err)
		}
		if k == 2 && n == 0 {
			return nil, fmt.Errorf("--normalise-to %s: %w: no results are stored for it; run dewline analyze (or the agent) over it first, or choose a period with stored results", w.Label, compare.ErrNoHours)
		}
	}
	return a.Result()
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
	to, _, err := parseTo(name+" end", toS, loc)
	if err != nil {
		return dashboards.Period{}, err
	}
	if !to.After(from) {
		return dashboards.Period{}, usagef("%s %q: the end is not after the start; give the earlier one first", name, s)
	}
	return dashboards.PeriodBetween(from, to, loc), nil
}
