package server

import (
	"context"
	"fmt"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/dashboards"
)

// SiteOf is the dashboard's view of a configuration.
func SiteOf(cfg *config.Config) *dashboards.Site {
	s := &dashboards.Site{ID: cfg.Site.ID, Name: cfg.Site.Name, Zone: cfg.Location, IP: cfg.Site.Units == "ip",
		Currency: cfg.Prices.Currency, PressurePa: cfg.PressurePa}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		name := a.Name
		if name == "" {
			name = a.ID
		}
		s.AirHandlers = append(s.AirHandlers, dashboards.AirHandler{ID: a.ID, Name: name, Spec: cfg.Spec(a)})
	}
	return s
}

// OpenedSite is one site's store as the command opened it for a portfolio.
type OpenedSite struct {
	Results dashboards.Results
	Ping    func(context.Context) error
	Close   func()
}

// PortfolioOf opens every site's store with open and builds the portfolio
// view over them; paths name the configurations in errors, label turns a
// site id into the one its results are tagged with. It returns the stores'
// pings and closeAll, which closes the stores; on an error they are
// closed already.
func PortfolioOf(cfgs []*config.Config, paths []string, open func(*config.Config) (OpenedSite, error),
	label func(string) string, log zerolog.Logger) (*dashboards.Portfolio, []func(context.Context) error, func(), error) {
	var opened []OpenedSite
	closeAll := func() {
		for _, st := range opened {
			st.Close()
		}
	}
	var sites []dashboards.PortfolioSite
	var pings []func(context.Context) error
	seen := map[string]string{}
	for i, cfg := range cfgs {
		if prev, ok := seen[cfg.Site.ID]; ok {
			closeAll()
			return nil, nil, nil, fmt.Errorf("%s and %s are both site %q: give each site its own site.id", prev, paths[i], cfg.Site.ID)
		}
		seen[cfg.Site.ID] = paths[i]
		st, err := open(cfg)
		if err != nil {
			closeAll()
			return nil, nil, nil, fmt.Errorf("site %s (%s): %w", cfg.Site.ID, paths[i], err)
		}
		opened = append(opened, st)
		site := SiteOf(cfg)
		site.ID = label(cfg.Site.ID)
		sites = append(sites, dashboards.PortfolioSite{Site: site, Results: st.Results})
		pings = append(pings, st.Ping)
	}
	pf, err := dashboards.NewPortfolio(dashboards.PortfolioOptions{Sites: sites, Log: log.With().Str("component", "dashboard").Logger()})
	if err != nil {
		closeAll()
		return nil, nil, nil, err
	}
	return pf, pings, closeAll, nil
}
