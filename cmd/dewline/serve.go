package main

import (
	"context"
	"flag"
	"fmt"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/dashboards"

	"github.com/dewline/dewline/agent/server"

	"github.com/dewline/dewline/agent/telemetry"
)

// siteFor is the dashboard's view of the configuration.
func siteFor(cfg *config.Config) *dashboards.Site {
	s := &dashboards.Site{Name: cfg.Site.Name, Zone: cfg.Location, IP: cfg.Site.Units == "ip",
		Currency: cfg.Prices.Currency, PressurePa: cfg.PressurePa}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		name := a.Name
		if name == "" {
			name = a.ID
		}
		s.Units = append(s.Units, dashboards.Unit{ID: a.ID, Name: name, Spec: cfg.Unit(a)})
	}
	return s
}

// dashboardFor builds the dashboard over the configured store.
func dashboardFor(cfg *config.Config, st *stores, e *env) (*dashboards.Handler, error) {
	return dashboards.New(dashboards.Options{Site: siteFor(cfg), Results: st.results(time.Now),
		Log: e.log})
}

func runServe(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.String("config", "", "configuration file (required)")
	listen := fs.String("listen", "", "host:port to listen on (default: http.listen of the configuration, 127.0.0.1:9470)")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline serve --config FILE [--listen 127.0.0.1:9470]")
		fmt.Fprintln(fs.Output(), "Serves the dashboard over the results in the configured store, read-only.")
		fs.PrintDefaults()
	}
	cfg, err := parseWithConfig(fs, args, e.stdout)
	if err != nil {
		return err
	}
	st, err := openStore(ctx, cfg, true, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	addr := cfg.HTTP.Listen
	if *listen != "" {
		addr = *listen
	}
	return serveDashboard(ctx, e, cfg, st, addr)
}

// storeProbeEvery is how often serve checks that its store still answers.
const storeProbeEvery = 5 * time.Second

func errText(err error) string {
	if err == nil {
		return ""
	}
	return err.Error()
}

// serveDashboard serves the dashboard with the agent's HTTP server (health,
// readiness, metrics, security headers, token) until ctx ends.
func serveDashboard(ctx context.Context, e *env, cfg *config.Config, st *stores, addr string) error {
	pages, err := dashboardFor(cfg, st, e)
	if err != nil {
		return err
	}
	token, err := config.SecretFromEnv("http.token_env", cfg.HTTP.TokenEnv)
	if err != nil {
		return err
	}
	tel := telemetry.NewTelemetry()
	// /readyz follows the store: checked now and every storeProbeEvery.
	probe := func() error {
		pctx, cancel := context.WithTimeout(ctx, 5*time.Second)
		defer cancel()
		return st.Ping(pctx)
	}
	up := true
	report := func(err error) {
		tel.SetStoreUp(err == nil, errText(err))
		switch {
		case err != nil && up:
			e.log.Warn().Err(err).Msg("the store does not answer; /readyz says so until it does")
		case err == nil && !up:
			e.log.Info().Msg("the store answers again")
		}
		up = err == nil
	}
	report(probe())
	probed := make(chan struct{})
	loopCtx, stopProbe := context.WithCancel(ctx)
	go func() {
		defer close(probed)
		tick := time.NewTicker(storeProbeEvery)
		defer tick.Stop()
		for {
			select {
			case <-loopCtx.Done():
				return
			case <-tick.C:
				report(probe())
			}
		}
	}()
	defer func() { stopProbe(); <-probed }()
	log := e.log // the server adds its component
	srv, err := server.NewServer(server.ServerOptions{Listen: addr, BearerToken: token, Telemetry: tel, Pages: pages, Log: log})
	if err != nil {
		return err
	}
	if err := srv.Start(); err != nil {
		return err
	}
	url := "http://" + srv.Addr() + "/"
	log.Info().Str("url", url).Msg("dashboard listening")
	fmt.Fprintf(e.stdout, "dashboard: %s (Ctrl-C to stop)\n", url)
	<-ctx.Done()
	sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	return srv.Shutdown(sctx)
}
