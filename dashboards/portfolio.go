package dashboards

import (
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"time"

	"github.com/rs/zerolog"
)

// PortfolioSite is one site of a portfolio: its configuration and where
// its results are read.
type PortfolioSite struct {
	Site    *Site // Site.ID names it in paths and must be unique
	Results Results
}

// PortfolioOptions configures the portfolio view.
type PortfolioOptions struct {
	Sites []PortfolioSite
	Now   func() time.Time // default time.Now
	Log   zerolog.Logger
}

// Portfolio serves several sites at once:
//
//	/                      every air handler of every site ranked by avoidable cost, and the site totals
//	/alerts                the alerts of every site, filterable by site (site=ID)
//	/sites/{id}/...        the site's own pages and API, as Handler serves them
//	/api/v1/portfolio      the overview's figures
//	/api/v1/alerts         the alerts, each with its site (site=ID filters)
//	/static/...            the stylesheet
//
// Each site's figures are for the period the query names in the site's
// own zone (period=day|week|month|custom, from, to, units), as its own
// pages would show them. Sums across sites add money only in one
// currency: the site totals stay per site.
type Portfolio struct {
	opt      PortfolioOptions
	handlers []*Handler
	byID     map[string]*Handler
	mux      *http.ServeMux
	tmpl     *template.Template
}

// NewPortfolio builds the portfolio view.
func NewPortfolio(opt PortfolioOptions) (*Portfolio, error) {
	if len(opt.Sites) == 0 {
		return nil, errors.New("portfolio: no site")
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	t, err := template.New("").Funcs(funcs).ParseFS(assets, "templates/layout.html", "templates/portfolio.html", "templates/error.html")
	if err != nil {
		return nil, fmt.Errorf("portfolio templates: %w", err)
	}
	p := &Portfolio{opt: opt, tmpl: t, mux: http.NewServeMux(), byID: map[string]*Handler{}}
	for _, s := range opt.Sites {
		if s.Site == nil || s.Site.ID == "" {
			return nil, errors.New("portfolio: every site needs an id (site.id)")
		}
		if p.byID[s.Site.ID] != nil {
			return nil, fmt.Errorf("portfolio: site %q is given twice; give each site its own site.id", s.Site.ID)
		}
		if s.Site.ID == "." || s.Site.ID == ".." {
			return nil, fmt.Errorf("portfolio: site id %q cannot name a path segment; give the site another site.id", s.Site.ID)
		}
		h, err := New(Options{Site: s.Site, Results: s.Results, Now: opt.Now, Log: opt.Log, Base: SitePath(s.Site.ID)})
		if err != nil {
			return nil, fmt.Errorf("site %s: %w", s.Site.ID, err)
		}
		p.handlers = append(p.handlers, h)
		p.byID[s.Site.ID] = h
	}
	// One route for every site, looked up by its id: the id is one path
	// segment, percent-encoded in links (a space, "*", "/" or "%" in an
	// id, as site names hold), which a route per site written from the
	// encoded id would never match, and which the site's handler must
	// get back as encoded to find unit ids holding a "/".
	p.mux.HandleFunc("/sites/{site}", p.siteRoot)
	p.mux.HandleFunc("/sites/{site}/{rest...}", p.site)
	first := p.handlers[0]
	p.mux.Handle("GET /static/", first)
	p.mux.Handle("GET /favicon.ico", first)
	p.mux.HandleFunc("GET /{$}", p.page(p.overviewPage))
	p.mux.HandleFunc("GET /alerts", p.page(p.alertsPage))
	p.mux.HandleFunc("GET /api/v1/portfolio", p.api(p.apiOverview))
	p.mux.HandleFunc("GET /api/v1/alerts", p.api(p.apiAlerts))
	return p, nil
}

func (p *Portfolio) ServeHTTP(w http.ResponseWriter, r *http.Request) { p.mux.ServeHTTP(w, r) }

// SitePath is the path of a site's pages in a portfolio, without the
// trailing slash: /sites/ and the id percent-encoded as one segment.
func SitePath(id string) string { return "/sites/" + url.PathEscape(id) }

// siteRoot sends /sites/{id} to the site's overview, /sites/{id}/, with
// the id encoded as it came (the mux's own redirect would decode a "/").
func (p *Portfolio) siteRoot(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("site")
	if p.byID[id] == nil {
		http.Error(w, fmt.Sprintf("no site %q in the portfolio", id), http.StatusNotFound)
		return
	}
	to := SitePath(id) + "/"
	if r.URL.RawQuery != "" {
		to += "?" + r.URL.RawQuery
	}
	http.Redirect(w, r, to, http.StatusMovedPermanently)
}

// site hands a request under /sites/{id}/ to that site's handler, with
// the path below the site's, still encoded where the request encoded it.
func (p *Portfolio) site(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("site")
	h := p.byID[id]
	if h == nil {
		http.Error(w, fmt.Sprintf("no site %q in the portfolio", id), http.StatusNotFound)
		return
	}
	// The mux split the escaped path at its slashes: the site's segment
	// ends at the first one after /sites/.
	esc := strings.TrimPrefix(r.URL.EscapedPath(), "/sites/")
	rest := esc[strings.IndexByte(esc, '/'):]
	path, err := url.PathUnescape(rest)
	if err != nil {
		http.Error(w, "bad path: "+err.Error(), http.StatusBadRequest)
		return
	}
	r2 := new(http.Request)
	*r2 = *r
	r2.URL = new(url.URL)
	*r2.URL = *r.URL
	r2.URL.Path, r2.URL.RawPath = path, rest
	h.ServeHTTP(w, r2)
}

func (p *Portfolio) page(fn func(http.ResponseWriter, *http.Request) error) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if err := fn(w, r); err != nil {
			p.handlers[0].fail(w, r, err, false)
		}
	}
}

func (p *Portfolio) api(fn func(http.ResponseWriter, *http.Request) error) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if err := fn(w, r); err != nil {
			p.handlers[0].fail(w, r, err, true)
		}
	}
}

// SiteTotal is one site on the portfolio overview.
type SiteTotal struct {
	ID          string `json:"id"`
	Name        string `json:"name"`
	Currency    string `json:"currency"`
	Period      Period `json:"period"`
	Total       Totals `json:"total"`
	AirHandlers int    `json:"air_handlers"`
	OpenAlerts  int    `json:"open_alerts"`
	Path        string `json:"path"` // the site's pages
}

// PortfolioAirHandler is one air handler on the portfolio overview.
type PortfolioAirHandler struct {
	AirHandlerRow
	SiteID   string `json:"site_id"`
	SiteName string `json:"site_name"`
	Currency string `json:"currency"`
	Path     string `json:"path"` // its page
}

// PortfolioOverview is the overview of every site.
type PortfolioOverview struct {
	Sites       []SiteTotal           `json:"sites"`
	AirHandlers []PortfolioAirHandler `json:"units"` // every air handler, most avoidable cost first; rank across all
}

// BuildPortfolio sums each site's overview for the request's period (in
// the site's zone) and ranks every air handler of every site by avoidable
// cost.
func (p *Portfolio) BuildPortfolio(r *http.Request) (*PortfolioOverview, request, error) {
	var out PortfolioOverview
	var first request
	for i, h := range p.handlers {
		req, err := h.parse(r)
		if err != nil {
			return nil, req, fmt.Errorf("site %s: %w", h.opt.Site.ID, err)
		}
		if i == 0 {
			first = req
		}
		ov, err := BuildOverview(r.Context(), h.opt.Site, h.opt.Results, req.Period)
		if err != nil {
			return nil, req, fmt.Errorf("site %s: %w", h.opt.Site.ID, err)
		}
		st := SiteTotal{ID: h.opt.Site.ID, Name: h.opt.Site.Name, Currency: ov.Currency, Period: ov.Period, Total: ov.Total,
			AirHandlers: len(ov.AirHandlers), Path: h.opt.Base + "/"}
		for _, u := range ov.AirHandlers {
			st.OpenAlerts += u.OpenAlerts
			out.AirHandlers = append(out.AirHandlers, PortfolioAirHandler{AirHandlerRow: u, SiteID: st.ID, SiteName: st.Name, Currency: ov.Currency,
				Path: h.opt.Base + airHandlerPath(u.ID)})
		}
		out.Sites = append(out.Sites, st)
	}
	key := func(v Num) float64 {
		if f := float64(v); f == f {
			return f
		}
		return -1 // no figure: last
	}
	slices.SortStableFunc(out.AirHandlers, func(a, b PortfolioAirHandler) int {
		return cmp.Compare(key(b.Totals.CostAvoidable), key(a.Totals.CostAvoidable))
	})
	for i := range out.AirHandlers {
		out.AirHandlers[i].Rank = i + 1
	}
	return &out, first, nil
}

func (p *Portfolio) portfolioPage(r *http.Request, req request, title, nav string) page {
	h := p.handlers[0]
	pg := h.newPage(r, req, title, nav)
	pg.Base = ""
	pg.Site = &Site{Name: fmt.Sprintf("portfolio of %d sites", len(p.handlers)), IP: h.opt.Site.IP}
	return pg
}

func (p *Portfolio) overviewPage(w http.ResponseWriter, r *http.Request) error {
	ov, req, err := p.BuildPortfolio(r)
	if err != nil {
		return err
	}
	p.render(w, "portfolio.html", map[string]any{"P": p.portfolioPage(r, req, "Portfolio", "overview"), "O": ov})
	return nil
}

func (p *Portfolio) apiOverview(w http.ResponseWriter, r *http.Request) error {
	ov, _, err := p.BuildPortfolio(r)
	if err != nil {
		return err
	}
	writeJSON(w, http.StatusOK, ov)
	return nil
}

// PortfolioAlert is an alert with its site.
type PortfolioAlert struct {
	AlertRow
	SiteID   string `json:"site_id"`
	SiteName string `json:"site_name"`
	Currency string `json:"currency"`
	Path     string `json:"-"`
}

// alerts reads the alerts of the sites the request's site filter names
// (all when empty), each site for the period in its own zone, most money
// at stake first.
func (p *Portfolio) alerts(r *http.Request) ([]PortfolioAlert, request, error) {
	site := r.URL.Query().Get("site")
	var out []PortfolioAlert
	var first request
	found := site == ""
	for i, h := range p.handlers {
		if site != "" && h.opt.Site.ID != site {
			continue
		}
		found = true
		req, _, alerts, err := h.alerts(r)
		if err != nil {
			return nil, req, fmt.Errorf("site %s: %w", h.opt.Site.ID, err)
		}
		if i == 0 || first.Query == nil {
			first = req
		}
		for _, a := range alertRows(alerts, h.opt.Site, req.asOf) {
			out = append(out, PortfolioAlert{AlertRow: a, SiteID: h.opt.Site.ID, SiteName: h.opt.Site.Name,
				Currency: h.opt.Site.Currency, Path: h.opt.Base + airHandlerPath(a.AHU)})
		}
	}
	if !found {
		return nil, first, errBadRequest{fmt.Sprintf("site %q is not in the portfolio", site)}
	}
	slices.SortStableFunc(out, func(a, b PortfolioAlert) int { return cmp.Compare(b.Money, a.Money) })
	return out, first, nil
}

func (p *Portfolio) alertsPage(w http.ResponseWriter, r *http.Request) error {
	alerts, req, err := p.alerts(r)
	if err != nil {
		return err
	}
	sites := make([]*Site, 0, len(p.handlers))
	for _, h := range p.handlers {
		sites = append(sites, h.opt.Site)
	}
	p.render(w, "portfolio_alerts.html", map[string]any{"P": p.portfolioPage(r, req, "Alerts", "alerts"), "Alerts": alerts,
		"Sites": sites, "Site": r.URL.Query().Get("site"), "State": r.URL.Query().Get("state")})
	return nil
}

func (p *Portfolio) apiAlerts(w http.ResponseWriter, r *http.Request) error {
	alerts, _, err := p.alerts(r)
	if err != nil {
		return err
	}
	type out struct {
		Alert
		SiteID         string `json:"site_id"`
		EnergyKWh      Num    `json:"energy_kwh"`
		Money          Num    `json:"money"`
		Currency       string `json:"currency"`
		AirHandlerName string `json:"unit_name"`
	}
	list := make([]out, 0, len(alerts))
	for _, a := range alerts {
		list = append(list, out{Alert: a.Alert, SiteID: a.SiteID, EnergyKWh: Num(a.EnergyKWh), Money: Num(a.Money), Currency: a.Currency, AirHandlerName: a.AirHandlerName})
	}
	writeJSON(w, http.StatusOK, map[string]any{"alerts": list})
	return nil
}

// render executes a page into a buffer first, as Handler.render does.
func (p *Portfolio) render(w http.ResponseWriter, name string, data any) {
	var buf bytes.Buffer
	if err := p.tmpl.ExecuteTemplate(&buf, name, data); err != nil {
		p.opt.Log.Error().Err(err).Str("template", name).Msg("rendering a page failed")
		http.Error(w, "rendering the page failed; see the log", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	_, _ = w.Write(buf.Bytes())
}

// airHandlerPath is the path of a unit's page within its site's pages.
func airHandlerPath(id string) string { return "/units/" + url.PathEscape(id) }
