package main

import (
	"context"
	"flag"
	"fmt"
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
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	paths, err := configPaths(cfgPaths)
	if err != nil {
		return err
	}
	var cfgs []*config.Config
	for _, p := range paths {
		cfg, err := config.Load(p)
		if err != nil {
			return err
		}
		cfgs = append(cfgs, cfg)
	}
	addr := cfgs[0].HTTP.Listen
	if *listen != "" {
		addr = *listen
	}
	if len(cfgs) == 1 {
		st, err := openStore(ctx, cfgs[0], true, e.log)
		if err != nil {
			return err
		}
		defer st.Close()
		return serveDashboard(ctx, e, cfgs[0], st, addr)
	}
	pf, pings, closeAll, err := portfolioFor(ctx, cfgs, paths, e)
	if err != nil {
		return err
	}
	defer closeAll()
	return servePages(ctx, e, cfgs[0], pf, pings, addr)
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

// serveDashboard serves the dashboard with the agent's HTTP server (health,
// readiness, metrics, security headers, token) until ctx ends.
func serveDashboard(ctx context.Context, e *env, cfg *config.Config, st *stores, addr string) error {
	pages, err := dashboardFor(cfg, st, e)
	if err != nil {
		return err
	}
	return servePages(ctx, e, cfg, pages, []func(context.Context) error{st.Ping}, addr)
}

// servePages serves pages (one site's dashboard or a portfolio) until ctx
// ends; cfg gives the token, pings the stores to ask.
func servePages(ctx context.Context, e *env, cfg *config.Config, pages http.Handler, pings []func(context.Context) error, addr string) error {
	token, err := config.SecretFromEnv("http.token_env", cfg.HTTP.TokenEnv)
	if err != nil {
		return err
	}
	return server.ServePages(ctx, server.PagesOptions{Listen: addr, BearerToken: token, Pages: pages, Pings: pings,
		Log: e.log, Out: e.stdout})
}
