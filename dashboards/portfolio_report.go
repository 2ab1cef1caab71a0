package dashboards

import (
	"bufio"
	"cmp"
	"fmt"
	"html/template"
	"io"
	"math"
	"slices"
	"time"
)

var portfolioReportTemplate = template.Must(template.New("").ParseFS(reportAssets, "templates/report_head.html", "templates/portfolio_report.html"))

// PortfolioReportSite is one site's report in a portfolio report, and
// where its own report file is (relative to the summary).
type PortfolioReportSite struct {
	Report *Report
	Href   string
}

type prSite struct {
	ID, Name, Href, Period, Currency   string
	AirHandlers                        int
	CostAvoidable, AnnualCostAvoidable string
	RawCostAvoidable                   string
}

type prFinding struct {
	Rank                                         int
	SiteID, Site, Href, AirHandler, AirHandlerID string
	CostAvoidable, Currency, Finding, Raw        string
}

type prView struct {
	CSS       template.CSS
	Generated string
	Sites     []prSite
	Findings  []prFinding
}

// PageTitle is the title of the summary's page (templates/report_head.html).
func (prView) PageTitle() string { return "Portfolio · dehumidification and reheat energy" }

// WritePortfolioReport writes the summary of several sites' reports as one
// self-contained HTML file: each site's totals with a link to its own
// report, and every air handler's finding ranked by avoidable cost across
// all the sites (each in its site's currency and period).
func WritePortfolioReport(w io.Writer, sites []PortfolioReportSite, generated time.Time) error {
	if len(sites) == 0 {
		return fmt.Errorf("portfolio report: no site")
	}
	css, err := reportAssets.ReadFile("templates/report.css")
	if err != nil {
		return err
	}
	v := prView{CSS: template.CSS(string(css)), Generated: generated.UTC().Format("2006-01-02 15:04 UTC")}
	type finding struct {
		f    prFinding
		cost float64
	}
	var all []finding
	for _, s := range sites {
		r := s.Report
		t := r.Overview.Total
		v.Sites = append(v.Sites, prSite{ID: r.Site.ID, Name: r.Site.Name, Href: s.Href, Period: r.Period.Label, Currency: r.Site.Currency,
			AirHandlers: len(r.AirHandlers), CostAvoidable: fmtMoney(float64(t.CostAvoidable)), AnnualCostAvoidable: fmtMoney(r.Annual.CostAvoidable),
			RawCostAvoidable: raw(float64(t.CostAvoidable))})
		for _, ur := range r.AirHandlers {
			c := float64(ur.Row.Totals.CostAvoidable)
			all = append(all, finding{f: prFinding{SiteID: r.Site.ID, Site: r.Site.Name, Href: s.Href, AirHandler: ur.AirHandler.Name, AirHandlerID: ur.AirHandler.ID,
				CostAvoidable: fmtMoney(c), Currency: r.Site.Currency, Finding: ur.Finding, Raw: raw(c)}, cost: c})
		}
	}
	key := func(c float64) float64 {
		if math.IsNaN(c) {
			return -1
		}
		return c
	}
	slices.SortStableFunc(all, func(a, b finding) int { return cmp.Compare(key(b.cost), key(a.cost)) })
	for i, f := range all {
		f.f.Rank = i + 1
		v.Findings = append(v.Findings, f.f)
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	if err := portfolioReportTemplate.ExecuteTemplate(bw, "portfolio_report.html", v); err != nil {
		return fmt.Errorf("portfolio report: render: %w", err)
	}
	return bw.Flush()
}
