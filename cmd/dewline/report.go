package main

import (
	"bufio"
	"context"
	"flag"
	"fmt"
	"math"
	"net/url"
	"path/filepath"
	"regexp"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/dashboards/pdf"
	"github.com/dewline/dewline/ingest/outfile"
)

// reportDays is the default length of a report: the last 30 days with results.
const reportDays = 30

func runReport(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	var cfgPaths stringList
	fs.Var(&cfgPaths, "config", "configuration file, or a folder of them; several sites make a portfolio report: -o is its summary, each site's report is written beside it (required)")
	fromS := fs.String("from", "", "start of the period: a day (2026-07-01) or a time; default: 30 days before --to")
	toS := fs.String("to", "", "end of the period: the last day, included (2026-07-31), or a time, excluded; default: the last day with results")
	var out string
	fs.StringVar(&out, "o", "report.html", "the HTML file to write")
	fs.StringVar(&out, "out", "report.html", "same as -o")
	wantPDF := fs.Bool("pdf", false, "also print the report to PDF with headless Chromium (next to the HTML, or --pdf-out)")
	pdfOut := fs.String("pdf-out", "", "the PDF file to write (implies --pdf; default: the HTML file's name with .pdf)")
	units := fs.String("units", "", "display units, si or ip (default: site.units of the configuration)")
	paper := fs.String("paper", "", "paper size, a4 or letter (default: letter for ip, a4 for si)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline report --config FILE [--from T] [--to T] [-o report.html] [--pdf [--pdf-out report.pdf]] [--units si|ip] [--paper a4|letter]")
		fmt.Fprintln(fs.Output(), "Writes a self-contained HTML report of the stored results for a building owner: findings ranked")
		fmt.Fprintln(fs.Output(), "by avoidable cost, an annualised estimate, candidate measures, each air handler's charts and")
		fmt.Fprintln(fs.Output(), "alerts, the method, assumptions, data quality, uncertainty and cautions. Reads the store only.")
		fmt.Fprintln(fs.Output(), "Period bounds: "+periodRule+".")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	if *units != "" && *units != "si" && *units != "ip" {
		return usagef("--units %q: use si or ip", *units)
	}
	if *paper != "" && *paper != "a4" && *paper != "letter" {
		return usagef("--paper %q: use a4 or letter", *paper)
	}
	if out == "" {
		return usagef("-o: give the HTML file to write, e.g. -o report.html")
	}
	if *pdfOut != "" {
		*wantPDF = true
	}
	paths, err := configPaths(cfgPaths)
	if err != nil {
		return err
	}
	rf := reportFlags{from: *fromS, to: *toS, units: *units, paper: *paper, out: out, pdfOut: *pdfOut}
	if len(paths) > 1 {
		if *wantPDF {
			return usagef("--pdf takes one site; print each site's report on its own")
		}
		rf.portfolio = true
		return writePortfolioReport(ctx, e, paths, out, rf)
	}
	cfgPath := &paths[0]
	rep, period, site, log, err := buildSiteReport(ctx, e, *cfgPath, rf)
	if err != nil {
		return err
	}
	n, err := outfile.Write(out, func(w *bufio.Writer) error { return rep.WriteHTML(w) })
	if err != nil {
		return err
	}
	total := rep.Overview.Total
	log.Info().Str("path", out).Int64("bytes", n).Int("hours", total.Hours).
		Float64("cost_avoidable", float64(total.CostAvoidable)).Msg("report written")
	fmt.Fprintln(e.stdout, out)
	if !*wantPDF {
		return nil
	}
	dst := *pdfOut
	if dst == "" {
		dst = strings.TrimSuffix(out, filepath.Ext(out)) + ".pdf"
	}
	title := period.Label
	if site.Name != "" {
		title = site.Name + " · " + title
	}
	buf, err := pdf.Print(ctx, out, title, log)
	if err != nil {
		return err
	}
	if _, err := outfile.Write(dst, func(w *bufio.Writer) error { _, err := w.Write(buf); return err }); err != nil {
		return err
	}
	pages := pdf.Pages(buf)
	log.Info().Str("path", dst).Int("pages", pages).Msg("report printed to PDF")
	fmt.Fprintln(e.stdout, dst)
	return nil
}

// reportFlags are report's flags that apply to each site, and the output
// files, which may name none of a site's inputs.
type reportFlags struct {
	from, to, units, paper, out, pdfOut string
	portfolio                           bool // one of several sites: a site without results is warned about, not refused
}

// buildSiteReport reads one site's results for the period its flags name
// (in the site's zone) and computes its report.
func buildSiteReport(ctx context.Context, e *env, cfgPath string, rf reportFlags) (rep *dashboards.Report, period dashboards.Period, site *dashboards.Site, log zerolog.Logger, err error) {
	log = e.log
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		return nil, period, nil, log, err
	}
	inputs := []string{cfgPath, cfg.StorePath(), cfg.StatePath()}
	if err := outfile.RefuseInputs("-o", rf.out, inputs...); err != nil {
		return nil, period, nil, log, usagef("%v", err)
	}
	if err := outfile.RefuseInputs("--pdf-out", rf.pdfOut, append(inputs, rf.out)...); err != nil {
		return nil, period, nil, log, usagef("%v", err)
	}
	loc := cfg.Location
	var from, to time.Time
	if rf.from != "" {
		if from, err = parseFrom("--from", rf.from, loc); err != nil {
			return nil, period, nil, log, err
		}
	}
	if rf.to != "" {
		if to, _, err = parseTo("--to", rf.to, loc); err != nil {
			return nil, period, nil, log, err
		}
	}

	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return nil, period, nil, log, err
	}
	defer st.Close()
	res := st.results(time.Now)
	if from.IsZero() || to.IsZero() {
		first, last, ok, err := res.Span(ctx)
		if err != nil {
			return nil, period, nil, log, fmt.Errorf("read the span of the stored results: %w", err)
		}
		if !ok {
			return nil, period, nil, log, fmt.Errorf("the store holds no results yet: run \"dewline analyze\" or the agent first, or check store: in %s", cfgPath)
		}
		if to.IsZero() {
			to = localMidnight(last.In(loc)).AddDate(0, 0, 1)
		}
		if from.IsZero() {
			from = to.AddDate(0, 0, -reportDays)
			if f := localMidnight(first.In(loc)); rf.to == "" && f.After(from) && f.Before(to) {
				from = f // the last 30 days with results, not days before the first
			}
		}
	}
	if !to.After(from) {
		return nil, period, nil, log, usagef("--to must be after --from")
	}
	if to.Sub(from) > 400*24*time.Hour {
		return nil, period, nil, log, usagef("--from %s to --to %s is longer than 400 days: choose a shorter period", from.Format(time.DateOnly), to.Format(time.DateOnly))
	}
	period = dashboards.PeriodBetween(from, to, loc)

	site = siteFor(cfg)
	if site.Name == "" {
		site.Name = cfg.Site.ID
	}
	display := dashboards.DisplayFor(rf.units, site.IP)
	log = e.log.With().Str("from", from.UTC().Format(time.RFC3339)).Str("to", to.UTC().Format(time.RFC3339)).Logger()
	log.Info().Int("ahus", len(site.AirHandlers)).Str("units", display.Name()).Msg("report: reading results")
	prog := telemetry.NewProgress("report", log)
	opt := dashboards.ReportOptions{
		Display:   display,
		Generated: time.Now(),
		Paper:     rf.paper,
		Source:    st.Describe(),
		Trended:   cfg.TrendedRoles(),
		Notes:     dashboards.SetupNotes(cfg.Site.Pressure, cfg.Site.Altitude, cfg.Grid.Step),
		Progress:  prog.Update,
	}
	rep, err = dashboards.BuildReport(ctx, site, res, period, opt)
	if err != nil {
		return nil, period, nil, log, fmt.Errorf("build the report: %w", err)
	}
	// A period without results is not a clean bill of health: refuse it,
	// as compare does, and warn when results cover only part of it.
	if err := reportCoverage(ctx, res, rep.Overview.Total.Hours, len(site.AirHandlers), period, log); err != nil {
		if !rf.portfolio {
			return nil, period, nil, log, fmt.Errorf("%s: %w", cfgPath, err)
		}
		// In a portfolio the other sites still report; this one is named.
		log.Warn().Str("site", cfg.Site.ID).Msg(err.Error())
	}
	return rep, period, site, log, nil
}

// reportMinShare is the share of a period's air handler-hours with results
// below which report warns that its figures cover only part of the period
// (common practice, no source: a tenth missing already moves an annual figure).
const reportMinShare = 0.9

// reportCoverage refuses a period without any stored hour and logs a
// warning when the hours with results cover less than reportMinShare of
// the period's air handler-hours.
func reportCoverage(ctx context.Context, res dashboards.Results, hours, units int, period dashboards.Period, log zerolog.Logger) error {
	if hours == 0 {
		span := ""
		if first, last, ok, err := res.Span(ctx); err == nil && ok {
			span = fmt.Sprintf("; the store holds results from %s to %s", first.In(period.From.Location()).Format(time.DateOnly), last.In(period.From.Location()).Format(time.DateOnly))
		}
		return fmt.Errorf("no results are stored for %s, so the report would show no avoidable cost for lack of data: run \"dewline analyze\" (or the agent) over the period first, or choose a period with results with --from/--to%s", period.Label, span)
	}
	expected := float64(units) * period.Hours()
	if share := float64(hours) / expected; expected > 0 && share < reportMinShare {
		log.Warn().Int("hours", hours).Float64("expected_hours", expected).Float64("share", math.Round(share*1000)/1000).
			Msgf("report: results cover only %.0f %% of the period's air handler-hours; its figures count the hours without results as nothing", share*100)
	}
	return nil
}

func localMidnight(t time.Time) time.Time {
	y, m, d := t.Date()
	return time.Date(y, m, d, 0, 0, 0, 0, t.Location())
}

// fileSafe matches what a site id may not put in a file name.
var fileSafe = regexp.MustCompile(`[^A-Za-z0-9._-]+`)

// writePortfolioReport writes each site's report beside out (its name with
// the site id) and the portfolio summary at out.
func writePortfolioReport(ctx context.Context, e *env, paths []string, out string, rf reportFlags) error {
	stem := strings.TrimSuffix(out, filepath.Ext(out))
	var sites []dashboards.PortfolioReportSite
	seen, taken := map[string]string{}, map[string]bool{}
	for _, p := range paths {
		rep, _, site, log, err := buildSiteReport(ctx, e, p, rf)
		if err != nil {
			return fmt.Errorf("%s: %w", p, err)
		}
		site.ID = siteLabel(site.ID)
		if prev, ok := seen[site.ID]; ok {
			return fmt.Errorf("%s and %s are both site %q: give each site its own site.id", prev, p, site.ID)
		}
		seen[site.ID] = p
		// Ids alike but for what fileSafe replaces, or case: a file each.
		name := stem + "-" + fileSafe.ReplaceAllString(site.ID, "_")
		file := name + ".html"
		for n := 2; taken[strings.ToLower(file)]; n++ {
			file = fmt.Sprintf("%s-%d.html", name, n)
		}
		taken[strings.ToLower(file)] = true
		n, err := outfile.Write(file, func(w *bufio.Writer) error { return rep.WriteHTML(w) })
		if err != nil {
			return err
		}
		log.Info().Str("path", file).Int64("bytes", n).Msg("site report written")
		fmt.Fprintln(e.stdout, file)
		sites = append(sites, dashboards.PortfolioReportSite{Report: rep, Href: strings.ReplaceAll(url.PathEscape(filepath.Base(file)), ":", "%3A")})
	}
	if _, err := outfile.Write(out, func(w *bufio.Writer) error {
		return dashboards.WritePortfolioReport(w, sites, time.Now())
	}); err != nil {
		return err
	}
	fmt.Fprintln(e.stdout, out)
	return nil
}
