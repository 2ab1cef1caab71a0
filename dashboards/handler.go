package dashboards

import (
	"bytes"
	"context"
	"embed"
	"encoding/json"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"net/http"
	"net/url"
	"slices"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

//go:embed templates/*.html static/*
var assets embed.FS

// pageTemplates are the dashboard's own templates (the report and the
// comparison have theirs).
var pageTemplates = []string{"templates/layout.html", "templates/overview.html", "templates/unit.html",
	"templates/chart.html", "templates/alerts.html", "templates/error.html"}

// Options configures the dashboard.
type Options struct {
	Site    *Site
	Results Results
	Now     func() time.Time // default time.Now
	Log     zerolog.Logger
	// Base is the path the handler is mounted under, without a trailing
	// slash ("/sites/north" in a portfolio, which strips it before the
	// handler sees the request); the pages' links start with it. Empty
	// when the handler serves the root.
	Base string
}

// Handler serves the dashboard pages and their JSON API:
//
//	/                          overview: units ranked by avoidable cost
//	/units/{id}                one air handler: energy, temperatures, water, EER, alerts
//	/units/{id}/chart          its hours on a psychrometric chart
//	/alerts                    open and recent alerts, filterable
//	/static/...                the stylesheet
//	/api/v1/site               the site and its units
//	/api/v1/overview           the overview's figures
//	/api/v1/units/{id}/hours   one unit's hourly columns
//	/api/v1/units/{id}/states  one unit's hourly air states (SI)
//	/api/v1/alerts             alerts
//
// Pages and API take period=day|week|month|custom (with from, to as
// YYYY-MM-DD, inclusive) and units=si|ip. Everything is served from the
// binary; the pages need no script and no outside resource.
type Handler struct {
	opt  Options
	mux  *http.ServeMux
	tmpl *template.Template
	log  zerolog.Logger
}

// New builds the handler.
func New(opt Options) (*Handler, error) {
	if opt.Site == nil || opt.Results == nil {
		return nil, errors.New("dashboard: a site and a results source are required")
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	if opt.Site.Zone == nil {
		opt.Site.Zone = time.UTC
	}
	t, err := template.New("").Funcs(funcs).ParseFS(assets, pageTemplates...)
	if err != nil {
		return nil, fmt.Errorf("dashboard templates: %w", err)
	}
	h := &Handler{opt: opt, tmpl: t, log: opt.Log.With().Str("component", "dashboard").Logger()}
	static, _ := fs.Sub(assets, "static")
	mux := http.NewServeMux()
	mux.Handle("GET /static/", cacheable(http.StripPrefix("/static/", http.FileServerFS(static))))
	mux.Handle("GET /favicon.ico", cacheable(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		// Browsers ask for it whatever the page links: the same drop.
		w.Header().Set("Content-Type", "image/svg+xml")
		http.ServeFileFS(w, r, assets, "static/favicon.svg")
	})))
	mux.HandleFunc("GET /{$}", h.page(h.overviewPage))
	mux.HandleFunc("GET /units/{id}", h.page(h.airHandlerPage))
	mux.HandleFunc("GET /units/{id}/chart", h.page(h.chartPage))
	mux.HandleFunc("GET /alerts", h.page(h.alertsPage))
	mux.HandleFunc("GET /api/v1/site", h.api(h.apiSite))
	mux.HandleFunc("GET /api/v1/overview", h.api(h.apiOverview))
	mux.HandleFunc("GET /api/v1/units/{id}/hours", h.api(h.apiHours))
	mux.HandleFunc("GET /api/v1/units/{id}/states", h.api(h.apiStates))
	mux.HandleFunc("GET /api/v1/alerts", h.api(h.apiAlerts))
	h.mux = mux
	return h, nil
}

func (h *Handler) ServeHTTP(w http.ResponseWriter, r *http.Request) { h.mux.ServeHTTP(w, r) }

// page and api turn a handler's error into the answer fail gives: an error
// page, or a JSON error.
func (h *Handler) page(fn func(http.ResponseWriter, *http.Request) error) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if err := fn(w, r); err != nil {
			h.fail(w, r, err, false)
		}
	}
}

func (h *Handler) api(fn func(http.ResponseWriter, *http.Request) error) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		if err := fn(w, r); err != nil {
			h.fail(w, r, err, true)
		}
	}
}

// cacheable lets the browser keep static assets for a day.
func cacheable(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Cache-Control", "public, max-age=86400")
		next.ServeHTTP(w, r)
	})
}

// request is what every page and API call reads from the query.
type request struct {
	Period  Period
	display Display
	Query   url.Values
	empty   bool      // nothing stored yet
	asOf    time.Time // the end of the last stored hour, or now if earlier
}

// errBadRequest marks a mistake in the query (400), as opposed to a store
// failure (503).
type errBadRequest struct{ msg string }

func (e errBadRequest) Error() string { return e.msg }

func (h *Handler) parse(r *http.Request) (request, error) {
	q := r.URL.Query()
	req := request{Query: q, display: DisplayFor(q.Get("units"), h.opt.Site.IP)}
	if u := q.Get("units"); u != "" && u != "si" && u != "ip" {
		return req, errBadRequest{fmt.Sprintf("units %q: use si or ip", u)}
	}
	_, last, ok, err := h.opt.Results.Span(r.Context())
	if err != nil {
		return req, err
	}
	req.asOf = h.opt.Now()
	if !ok {
		last, req.empty = req.asOf, true
	} else if end := last.Add(time.Hour); end.Before(req.asOf) {
		// An ongoing alert has lasted until the last hour with results,
		// not until now: a site whose data stopped shows its own time.
		req.asOf = end
	}
	p, err := ResolvePeriod(q.Get("period"), q.Get("from"), q.Get("to"), h.opt.Site.Zone, last)
	if err != nil {
		return req, errBadRequest{err.Error()}
	}
	req.Period = p
	return req, nil
}

// fail answers an error: 400 for a bad query, 404 for an unknown unit,
// 503 when the store fails. Store errors are logged; the page names the
// store and what to check.
func (h *Handler) fail(w http.ResponseWriter, r *http.Request, err error, api bool) {
	status, msg := http.StatusServiceUnavailable, "the results store did not answer: "+err.Error()+" (check that the store is up and reachable, then reload)"
	var br errBadRequest
	var nf errNotFound
	switch {
	case errors.As(err, &br):
		status, msg = http.StatusBadRequest, br.msg
	case errors.As(err, &nf):
		status, msg = http.StatusNotFound, nf.Error()
	case errors.Is(err, context.Canceled):
		return
	default:
		h.log.Error().Err(err).Str("path", r.URL.Path).Msg("dashboard request failed")
	}
	if api {
		writeJSON(w, status, map[string]string{"error": msg})
		return
	}
	w.WriteHeader(status)
	h.render(w, "error.html", map[string]any{"Site": h.opt.Site, "Status": status, "Message": msg, "Nav": ""})
}

type errNotFound struct{ id string }

func (e errNotFound) Error() string {
	return fmt.Sprintf("no air handler %q in the configuration", e.id)
}

func (h *Handler) airHandler(r *http.Request) (AirHandler, error) {
	id := r.PathValue("id")
	u, ok := h.opt.Site.AirHandler(id)
	if !ok {
		return AirHandler{}, errNotFound{id}
	}
	return u, nil
}

// airHandlerRequest is the unit named in the path and the query's period and units.
func (h *Handler) airHandlerRequest(r *http.Request) (AirHandler, request, error) {
	u, err := h.airHandler(r)
	if err != nil {
		return u, request{}, err
	}
	req, err := h.parse(r)
	return u, req, err
}

// answerJSON writes what an API call built, as JSON with status 200, or
// returns the error of building it: answerJSON(w)(BuildOverview(...)).
func answerJSON(w http.ResponseWriter) func(v any, err error) error {
	return func(v any, err error) error {
		if err != nil {
			return err
		}
		writeJSON(w, http.StatusOK, v)
		return nil
	}
}

func writeJSON(w http.ResponseWriter, status int, v any) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetEscapeHTML(true)
	if err := enc.Encode(v); err != nil {
		http.Error(w, `{"error":"encoding the answer failed"}`, http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "application/json; charset=utf-8")
	w.WriteHeader(status)
	_, _ = w.Write(buf.Bytes())
}

// render executes a page template into a buffer first, so a failure
// mid-page never sends half a page.
func (h *Handler) render(w http.ResponseWriter, name string, data any) {
	var buf bytes.Buffer
	if err := h.tmpl.ExecuteTemplate(&buf, name, data); err != nil {
		h.log.Error().Err(err).Str("template", name).Msg("rendering a page failed")
		http.Error(w, "rendering the page failed; see the log", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	_, _ = w.Write(buf.Bytes())
}

// --- API ---

// SiteInfo is /api/v1/site.
type SiteInfo struct {
	ID         string           `json:"id,omitempty"` // site.id
	Name       string           `json:"name"`
	Zone       string           `json:"timezone"`
	Units      string           `json:"units"` // the site's display units
	Currency   string           `json:"currency"`
	PressurePa Num              `json:"pressure_pa"`
	AHUs       []AirHandlerInfo `json:"air_handlers"`
	First      *time.Time       `json:"first_hour,omitempty"`
	Last       *time.Time       `json:"last_hour,omitempty"`
}

// AirHandlerInfo is one air handler in SiteInfo.
type AirHandlerInfo struct {
	ID     string `json:"id"`
	Name   string `json:"name"`
	Reheat string `json:"reheat"`
}

func (h *Handler) apiSite(w http.ResponseWriter, r *http.Request) error {
	s := h.opt.Site
	info := SiteInfo{ID: s.ID, Name: s.Name, Zone: s.Zone.String(), Units: Display{IP: s.IP}.Name(), Currency: s.Currency, PressurePa: Num(s.PressurePa)}
	for _, u := range s.AirHandlers {
		ui := AirHandlerInfo{ID: u.ID, Name: u.Name}
		if u.Spec != nil {
			ui.Reheat = reheatName(u.Spec.Reheat)
		}
		info.AHUs = append(info.AHUs, ui)
	}
	first, last, ok, err := h.opt.Results.Span(r.Context())
	if err != nil {
		return err
	}
	if ok {
		info.First, info.Last = &first, &last
	}
	writeJSON(w, http.StatusOK, info)
	return nil
}

func (h *Handler) apiOverview(w http.ResponseWriter, r *http.Request) error {
	req, err := h.parse(r)
	if err != nil {
		return err
	}
	return answerJSON(w)(BuildOverview(r.Context(), h.opt.Site, h.opt.Results, req.Period))
}

func (h *Handler) apiHours(w http.ResponseWriter, r *http.Request) error {
	u, req, err := h.airHandlerRequest(r)
	if err != nil {
		return err
	}
	return answerJSON(w)(BuildAirHandlerHours(r.Context(), u, h.opt.Results, req.Period, req.display))
}

func (h *Handler) apiStates(w http.ResponseWriter, r *http.Request) error {
	u, req, err := h.airHandlerRequest(r)
	if err != nil {
		return err
	}
	st, err := AirHandlerStates(r.Context(), u, h.opt.Results, req.Period, h.pressure(u))
	if err != nil {
		return err
	}
	writeJSON(w, http.StatusOK, map[string]any{"id": u.ID, "period": req.Period, "pressure_pa": Num(h.pressure(u)), "hours": st})
	return nil
}

func (h *Handler) pressure(u AirHandler) float64 {
	if u.Spec != nil && u.Spec.PressurePa > 0 {
		return u.Spec.PressurePa
	}
	if h.opt.Site.PressurePa > 0 {
		return h.opt.Site.PressurePa
	}
	return 101325
}

// alertQuery reads unit, kind and state filters; alerts overlapping the
// period are listed.
func (h *Handler) alertQuery(req request) (AlertQuery, error) {
	q := AlertQuery{AHU: req.Query.Get("unit"), Kind: req.Query.Get("kind"), State: req.Query.Get("state"),
		From: req.Period.From, To: req.Period.To}
	if q.State != "" && !slices.Contains([]string{"pending", "open", "closed"}, q.State) {
		return q, errBadRequest{fmt.Sprintf("state %q: use pending, open or closed", q.State)}
	}
	if q.AHU != "" {
		if _, ok := h.opt.Site.AirHandler(q.AHU); !ok {
			return q, errNotFound{q.AHU}
		}
	}
	return q, nil
}

// alerts reads the request's alerts: those overlapping its period that
// match its unit, kind and state filters.
func (h *Handler) alerts(r *http.Request) (request, AlertQuery, []Alert, error) {
	req, err := h.parse(r)
	if err != nil {
		return req, AlertQuery{}, nil, err
	}
	q, err := h.alertQuery(req)
	if err != nil {
		return req, q, nil, err
	}
	alerts, err := h.opt.Results.Alerts(r.Context(), q)
	return req, q, alerts, err
}

func (h *Handler) apiAlerts(w http.ResponseWriter, r *http.Request) error {
	req, _, alerts, err := h.alerts(r)
	if err != nil {
		return err
	}
	type out struct {
		Alert
		EnergyKWh      Num    `json:"energy_kwh"`
		Money          Num    `json:"money"`
		Hours          Num    `json:"duration_h"`
		AirHandlerName string `json:"unit_name"`
	}
	now := req.asOf
	list := make([]out, 0, len(alerts))
	for _, a := range alerts {
		u, _ := h.opt.Site.AirHandler(a.AHU)
		list = append(list, out{Alert: a, EnergyKWh: Num(a.EnergyKWh), Money: Num(a.Money), Hours: Num(a.Duration(now).Hours()), AirHandlerName: u.Name})
	}
	writeJSON(w, http.StatusOK, map[string]any{"site_id": h.opt.Site.ID, "period": req.Period, "currency": h.opt.Site.Currency, "alerts": list})
	return nil
}

// --- pages ---

// page is what every page template gets.
type page struct {
	Base    string // Options.Base: prefixed to every link
	Site    *Site
	Req     request
	Title   string
	Nav     string // which tab is current
	Path    string // the request's path, percent-encoded (a unit id may hold a "/")
	Display Display
	Empty   bool
}

// Link builds a URL to path (a path of this site's pages) keeping the
// period and units, with changes.
func (p page) Link(path string, kv ...string) string {
	path = p.Base + path
	q := url.Values{}
	for _, k := range []string{"period", "from", "to", "units"} {
		if v := p.Req.Query.Get(k); v != "" {
			q.Set(k, v)
		}
	}
	for i := 0; i+1 < len(kv); i += 2 {
		if kv[i+1] == "" {
			q.Del(kv[i])
		} else {
			q.Set(kv[i], kv[i+1])
		}
	}
	if len(q) == 0 {
		return path
	}
	return path + "?" + q.Encode()
}

// UnitsLink is the current page in the other display units.
func (p page) UnitsLink(name string) string {
	q := url.Values{}
	for k, v := range p.Req.Query {
		q[k] = v
	}
	q.Set("units", name)
	return p.Base + p.Path + "?" + q.Encode()
}

func (h *Handler) newPage(r *http.Request, req request, title, nav string) page {
	return page{Base: h.opt.Base, Site: h.opt.Site, Req: req, Title: title, Nav: nav, Path: r.URL.EscapedPath(), Display: req.display, Empty: req.empty}
}

func (h *Handler) overviewPage(w http.ResponseWriter, r *http.Request) error {
	req, err := h.parse(r)
	if err != nil {
		return err
	}
	ov, err := BuildOverview(r.Context(), h.opt.Site, h.opt.Results, req.Period)
	if err != nil {
		return err
	}
	sparks := make(map[string]template.HTML, len(ov.AirHandlers))
	bars := make(map[string]template.HTML, len(ov.AirHandlers))
	for _, u := range ov.AirHandlers {
		sparks[u.ID] = sparkSVG(u.Daily)
		bars[u.ID] = shareBar(u.Share)
	}
	h.render(w, "overview.html", map[string]any{"P": h.newPage(r, req, "Overview", "overview"), "O": ov, "Sparks": sparks, "Bars": bars})
	return nil
}

func (h *Handler) airHandlerPage(w http.ResponseWriter, r *http.Request) error {
	u, req, err := h.airHandlerRequest(r)
	if err != nil {
		return err
	}
	uh, err := BuildAirHandlerHours(r.Context(), u, h.opt.Results, req.Period, req.display)
	if err != nil {
		return err
	}
	alerts, err := h.opt.Results.Alerts(r.Context(), AlertQuery{AHU: u.ID, From: req.Period.From, To: req.Period.To})
	if err != nil {
		return err
	}
	slices.Reverse(alerts) // newest first
	charts, err := airHandlerCharts(uh, req.display, h.opt.Site.Zone)
	if err != nil {
		return err
	}
	h.render(w, "unit.html", map[string]any{"P": h.newPage(r, req, u.Name, "unit"), "U": u, "H": uh, "Charts": charts,
		"Alerts": alertRows(alerts, h.opt.Site, req.asOf)})
	return nil
}

func (h *Handler) chartPage(w http.ResponseWriter, r *http.Request) error {
	u, req, err := h.airHandlerRequest(r)
	if err != nil {
		return err
	}
	lines := req.Query.Get("lines")
	if lines == "" {
		lines = "enthalpy"
	}
	if lines != "enthalpy" && lines != "wetbulb" {
		return errBadRequest{fmt.Sprintf("lines %q: use enthalpy or wetbulb", lines)}
	}
	st, err := AirHandlerStates(r.Context(), u, h.opt.Results, req.Period, h.pressure(u))
	if err != nil {
		return err
	}
	svg, err := psyChartSVG(u, st, h.pressure(u), req.display, lines)
	if err != nil {
		return err
	}
	h.render(w, "chart.html", map[string]any{"P": h.newPage(r, req, u.Name+" — psychrometric chart", "unit"), "U": u,
		"Chart": svg, "States": len(st), "Lines": lines, "Pressure": pressureText(h.pressure(u), req.display)})
	return nil
}

func (h *Handler) alertsPage(w http.ResponseWriter, r *http.Request) error {
	req, q, alerts, err := h.alerts(r)
	if err != nil {
		return err
	}
	slices.Reverse(alerts)
	// The kinds offered in the filter: those of any alert in the period.
	all, err := h.opt.Results.Alerts(r.Context(), AlertQuery{From: req.Period.From, To: req.Period.To})
	if err != nil {
		return err
	}
	var kinds []string
	for _, a := range all {
		if !slices.Contains(kinds, a.Kind) {
			kinds = append(kinds, a.Kind)
		}
	}
	slices.Sort(kinds)
	if q.Kind != "" && !slices.Contains(kinds, q.Kind) {
		kinds = append(kinds, q.Kind)
	}
	h.render(w, "alerts.html", map[string]any{"P": h.newPage(r, req, "Alerts", "alerts"), "Q": q, "Kinds": kinds,
		"Alerts": alertRows(alerts, h.opt.Site, req.asOf)})
	return nil
}

// pressureText is a barometric pressure in the display's unit.
func pressureText(pa float64, d Display) string {
	if d.IP {
		return fmtFixed(psychro.PaToPsi(pa), 3) + " psia"
	}
	return fmtFixed(pa/1000, 3) + " kPa"
}

// AlertRow is an alert as a table shows it.
type AlertRow struct {
	Alert
	AirHandlerName string
	Duration       string
	Ongoing        bool
}

func alertRows(alerts []Alert, s *Site, now time.Time) []AlertRow {
	out := make([]AlertRow, 0, len(alerts))
	for _, a := range alerts {
		u, _ := s.AirHandler(a.AHU)
		out = append(out, AlertRow{Alert: a, AirHandlerName: u.Name, Duration: fmtDuration(a.Duration(now)), Ongoing: a.End.IsZero()})
	}
	return out
}

var funcs = template.FuncMap{
	"qty":        fmtQty,
	"money":      fmtMoney,
	"pct":        fmtPct,
	"fixed":      fmtFixed,
	"n":          func(v Num) float64 { return float64(v) },
	"local":      func(t time.Time, z *time.Location) string { return t.In(z).Format("2006-01-02 15:04") },
	"kindLabel":  func(k string) string { return strings.ReplaceAll(k, "_", " ") },
	"alertLabel": AlertLabel,
	"temp":       func(d Display, c float64) string { return fmtFixed(d.Temp(c), 1) },
	"water":      func(d Display, kg Num) string { return fmtQty(d.Water(float64(kg))) },
	"sub":        func(a, b Num) Num { return a - b },
	"unitPath":   airHandlerPath,
	"chartPath":  func(id string) string { return "/units/" + url.PathEscape(id) + "/chart" },
}

// AlertLabel is how pages and the report name an alert kind: words in
// sentence case ("reheat_not_needed" reads "Reheat not needed"), as
// metrics.AlertLabel says everywhere.
func AlertLabel(kind string) string { return metrics.AlertLabel(kind) }
