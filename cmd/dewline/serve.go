package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"net/http"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/server"
	"github.com/dewline/dewline/dashboards"
)

// siteFor is the dashboard's view of the configuration.
func siteFor(cfg *config.Config) *dashboards.Site { return server.SiteOf(cfg) }

// dashboardFor builds the dashboard over the configured store.
func dashboardFor(cfg *config.Config, st *stores, e *env) (*dashboards.Handler, error) {
	return dashboards.New(dashboards.Options{Site: siteFor(cfg), Results: st.results(time.Now),
		Log: e.log})
}

func runServe(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	var cfgPaths stringList
	fs.Var(&cfgPaths, "config", "configuration file, or a folder of them (*.yaml, *.yml); repeatable: several sites make a portfolio (required)")
	listen := fs.String("listen", "", "host:port to listen on (default: http.listen of the (first) configuration, 127.0.0.1:9470)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline serve --config FILE|FOLDER ... [--listen 127.0.0.1:9470]")
		fmt.Fprintln(fs.Output(), "Serves the dashboard over the results in the configured store, read-only; given several sites, the portfolio.")
		fs.PrintDefaults()
	}
	paths, cfgs, err := parseConfigs(fs, args, e.stdout, &cfgPaths)
	if err != nil {
		return err
	}
	addr := cfgs[0].HTTP.Listen
	if *listen != "" {
		addr = *listen
	}
	if len(cfgs) == 1 {
		return serveDashboard(ctx, e, cfgs[0], addr)
	}
	pf, pings, closeAll, err := portfolioFor(ctx, cfgs, paths, e)
	if err != nil {
		return err
	}
	defer closeAll()
	return servePages(ctx, e, cfgs[0], pf, pings, addr)
}

// parseConfigs parses a command's flags and loads every configuration its
// --config flags (given) name, files or folders of them.
func parseConfigs(fs *flag.FlagSet, args []string, w io.Writer, given *stringList) ([]string, []*config.Config, error) {
	if err := parseFlags(fs, args, w); err != nil {
		return nil, nil, err
	}
	paths, err := configPaths(*given)
	if err != nil {
		return nil, nil, err
	}
	cfgs := make([]*config.Config, 0, len(paths))
	for _, p := range paths {
		cfg, err := config.Load(p)
		if err != nil {
			return nil, nil, err
		}
		cfgs = append(cfgs, cfg)
	}
	return paths, cfgs, nil
}

// portfolioFor opens every site's store read-only and builds the
// portfolio view over them; closeAll closes the stores.
func portfolioFor(ctx context.Context, cfgs []*config.Config, paths []string, e *env) (*dashboards.Portfolio, []func(context.Context) error, func(), error) {
	open := func(cfg *config.Config) (server.OpenedSite, error) {
		st, err := openStore(ctx, cfg, true, e.log)
		if err != nil {
			return server.OpenedSite{}, err
		}
		return server.OpenedSite{Results: st.results(time.Now), Ping: st.Ping, Close: st.Close}, nil
	}
	return server.PortfolioOf(cfgs, paths, open, siteLabel, e.log)
}

// serveDashboard opens the site's store read-only and serves its dashboard
// with the agent's HTTP server (health, readiness, metrics, security
// headers, token) until ctx ends.
func serveDashboard(ctx context.Context, e *env, cfg *config.Config, addr string) error {
	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	pages, err := dashboardFor(cfg, st, e)
	if err != nil {
		return err
	}
	return servePages(ctx, e, cfg, pages, []func(context.Context) error{st.Ping}, addr)
}

// servePages serves pages (one site's dashboard or a portfolio) until ctx
// ends; cfg gives the token, pings the stores to ask.
func servePages(ctx context.Context, e *env, cfg *config.Config, pages http.Handler, pings []func(context.Context) error, addr string) error {
	return server.ServePages(ctx, server.PagesOptions{Listen: addr, TokenEnv: cfg.HTTP.TokenEnv, Pages: pages, Pings: pings,
		Log: e.log, Out: e.stdout})
}
