package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"

	"github.com/dewline/dewline/agent/server"

	"github.com/dewline/dewline/agent/telemetry"

	"github.com/dewline/dewline/agent/webhook"
)

func runRun(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	var cfgPaths stringList
	fs.Var(&cfgPaths, "config", "configuration file, or a folder of them (*.yaml, *.yml); repeatable with --once or --dry-run, for several sites (required)")
	once := fs.Bool("once", false, "compute the pending hours and exit")
	dry := fs.Bool("dry-run", false, "print what would be written (InfluxDB line protocol) and write nothing; implies --once")
	shardS := fs.String("shard", "", "take only this replica's share of the air handlers (of all the sites given), i/n (0 <= i < n), or a StatefulSet pod name and n, e.g. dewline-2/3")
	grace := fs.Duration("grace", 30*time.Second, "on shutdown, how long the run in flight may take to finish")
	asOf := fs.String("as-of", "", "with --once or --dry-run: compute as if the time were T (site time or RFC 3339), to re-run a past day")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline run --config FILE|FOLDER ... [--once | --dry-run [--as-of T]] [--shard i/n] [--grace 30s]")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	paths, err := configPaths(cfgPaths)
	if err != nil {
		return err
	}
	if len(paths) > 1 && !*once && !*dry {
		return usagef("several sites (%d configurations) go with --once or --dry-run; the long-running agent takes one site: start one per site, or run \"dewline run --once\" on the schedule", len(paths))
	}
	if *asOf != "" && !*once && !*dry {
		return usagef("--as-of goes with --once or --dry-run")
	}
	var shard agent.Shard
	if *shardS != "" {
		if shard, err = parseShard(*shardS); err != nil {
			return err
		}
	}
	// Every site's configuration is read before any runs, so that one
	// broken file stops nothing half way.
	type site struct {
		path   string
		cfg    *config.Config
		broken map[string]*config.Error
		owned  []string
	}
	var sites []site
	seen := map[string]string{}
	total := 0
	for _, p := range paths {
		cfg, broken, err := config.LoadPartial(p)
		if err != nil {
			return err
		}
		if prev, ok := seen[cfg.Site.ID]; ok {
			return fmt.Errorf("%s and %s are both site %q: give each site its own site.id", prev, p, cfg.Site.ID)
		}
		seen[cfg.Site.ID] = p
		// Every secret the configuration names is looked up now, also for
		// --once, which needs none of the agent's: a missing one fails
		// here, not after the long-running agent has started its endpoint.
		if err := cfg.CheckSecrets(); err != nil {
			if !*dry {
				return fmt.Errorf("%s: %w (\"dewline check --config %s\" lists every setting)", p, err, p)
			}
			e.log.Warn().Err(err).Str("site", cfg.Site.ID).Msg("dry run: a secret the agent needs is missing")
		}
		owned := shard.Owned(cfg)
		total += len(owned)
		sites = append(sites, site{path: p, cfg: cfg, broken: broken, owned: owned})
	}
	if total == 0 { // not an error: a replica left empty by the hash split stays up (agent.Runner.Serve)
		e.log.Warn().Str("shard", *shardS).Str("fix", agent.NothingOwnedFix).Msg(agent.NothingOwned)
	}
	if len(sites) == 1 && (total > 0 || !*once && !*dry) {
		return runSite(ctx, e, sites[0].cfg, sites[0].broken, sites[0].owned, runFlags{once: *once, dry: *dry, asOf: *asOf, shard: *shardS, grace: *grace, path: sites[0].path}, "")
	}
	var failed []string
	for _, s := range sites {
		if len(s.owned) == 0 {
			fmt.Fprintf(e.stdout, "%s: no air handler in this shard\n", siteLabel(s.cfg.Site.ID))
			continue
		}
		err := runSite(ctx, e, s.cfg, s.broken, s.owned, runFlags{once: *once, dry: *dry, asOf: *asOf, shard: *shardS, grace: *grace, path: s.path}, siteLabel(s.cfg.Site.ID)+" ")
		if err != nil {
			if ctx.Err() != nil {
				return err
			}
			e.log.Error().Err(err).Str("site", s.cfg.Site.ID).Msg("site failed")
			failed = append(failed, siteLabel(s.cfg.Site.ID))
		}
	}
	if len(failed) > 0 {
		return fmt.Errorf("%d site(s) failed: %s", len(failed), strings.Join(failed, ", "))
	}
	return nil
}

// runFlags are run's flags that runSite uses, and the site's file.
type runFlags struct {
	once, dry         bool
	asOf, shard, path string
	grace             time.Duration
}

// runSite runs one site's agent over its owned air handlers; prefix starts
// each line of the --once summary (the site, when several run).
func runSite(ctx context.Context, e *env, cfg *config.Config, broken map[string]*config.Error, owned []string, f runFlags, prefix string) error {
	once, dry, asOf, shardS, grace := &f.once, &f.dry, &f.asOf, &f.shard, &f.grace
	// Each part names its component once: the HTTP server and the webhook
	// sender add theirs to base, the run loop's is "agent".
	base := e.log.With().Str("site", cfg.Site.ID).Logger()
	log := base.With().Str("component", "agent").Logger()

	st, err := openStore(ctx, cfg, false, log)
	if err != nil {
		return err
	}
	defer st.Close()
	rs, err := st.Agent(ctx)
	if err != nil {
		return err
	}
	defer rs.Close()
	units := map[string]ingest.AirHandlerPoints{}
	for _, id := range owned {
		a, _ := cfg.AirHandler(id)
		units[id] = ingest.AirHandlerPoints{Points: a.PointMap(), Stale: cfg.StaleLimits(a)}
	}
	tel := telemetry.New()
	// The store is up once it answers (the embedded file answers once open).
	pctx, cancel := context.WithTimeout(ctx, 5*time.Second)
	if err := st.Ping(pctx); err != nil {
		tel.SetStoreUp(false, err.Error())
		log.Warn().Err(err).Msg("the store does not answer yet; runs will retry")
	} else {
		tel.SetStoreUp(true, "")
	}
	cancel()
	for id, ce := range broken {
		log.Error().Str("ahu", id).Str("problems", ce.Error()).Msg("air handler left out: its configuration is broken")
		tel.SetConfigProblem(id, "configuration: "+ce.Error())
	}
	// The backend itself, not its wrapper: StoreHours finds a batch reader
	// (ingest.BatchReader) by type assertion.
	source := &ingest.StoreHours{Reader: st.Store, AirHandlers: units, Step: cfg.Grid.Step, IsMissing: st.IsMissing,
		OnRead: tel.PointsRead,
		OnMissing: func(ahu string, role metrics.Role, point string) {
			log.Warn().Str("ahu", ahu).Str("role", string(role)).Str("point", point).Msg("point has no data in the store")
			tel.SetConfigProblem(ahu, fmt.Sprintf("%s: point %q has no data in the store", role, point))
		}}
	runner := &agent.Runner{
		Cfg:        cfg,
		Source:     source,
		Store:      rs,
		Obs:        tel,
		Log:        log,
		AHUs:       owned,
		StoreDown:  st.IsOutage,
		ConfigPath: f.path,
	}
	if *asOf != "" {
		t, err := parseTime(*asOf, cfg.Location)
		if err != nil {
			return usagef("--as-of: %v", err)
		}
		runner.Clock = func() time.Time { return t }
	}
	log.Info().Strs("ahus", owned).Str("shard", *shardS).Msg("air handlers owned")
	if *dry {
		runner.Store = dryRun(rs, e.stdout, cfg)
		_, err := runner.RunOnce(ctx)
		return err
	}
	if *once {
		rep, err := runner.RunOnce(ctx)
		if rep == nil {
			return err
		}
		for _, a := range rep.AHUs {
			fmt.Fprintf(e.stdout, "%s%s: %d hours, %s, %d alerts opened, %d closed\n", prefix, a.AHU, a.Hours, a.CheckpointText(), a.Opened, a.Closed)
			if a.Err != nil {
				fmt.Fprintf(e.stdout, "  failed: %v\n", a.Err)
			}
		}
		if err != nil {
			return err
		}
		if f := rep.Failed(); len(f) > 0 {
			return fmt.Errorf("%d air handler(s) failed", len(f))
		}
		return nil
	}

	// The long-running agent: HTTP endpoint, webhook, schedule.
	token, err := config.SecretFromEnv("http.token_env", cfg.HTTP.TokenEnv)
	if err != nil {
		return err
	}
	pages, err := dashboardFor(cfg, st, e)
	if err != nil {
		return err
	}
	srv, err := server.New(server.Options{Listen: cfg.HTTP.Listen, BearerToken: token, Telemetry: tel, Pages: pages,
		Log: base})
	if err != nil {
		return err
	}
	runner.MarkIdle() // before the endpoint answers its first probe
	if err := srv.Start(); err != nil {
		return err
	}
	log.Info().Str("addr", srv.Addr()).Msg("http endpoint listening")
	if pc, ok := st.Store.(store.PointChecker); ok {
		// The long-running agent looks its points up once, after its
		// endpoint is up so that probes see it alive meanwhile; "dewline
		// check --store" does the same on demand.
		agent.CheckPoints(ctx, pc, st.IsMissing, cfg, owned, tel.SetConfigProblem, log)
	}
	var sender *webhook.Sender
	if w := cfg.Webhook; w != nil {
		secret, err := config.SecretFromEnv("webhook.secret_env", w.SecretEnv)
		if err != nil {
			return err
		}
		sender, err = webhook.New(webhook.Options{URL: w.URL, Secret: secret, Timeout: w.Timeout, MaxAge: w.MaxAge,
			Store: rs, Telemetry: tel, Log: base})
		if err != nil {
			return err
		}
		runner.Delivered = sender.Kick
	}
	done := make(chan error, 1)
	if sender != nil {
		go func() { done <- sender.Run(ctx) }()
	}
	serveErr := runner.Serve(ctx, *grace)
	if sender != nil {
		if err := <-done; err != nil && !errors.Is(err, context.Canceled) {
			log.Error().Err(err).Msg("webhook stopped")
		}
	}
	shutdownCtx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
	defer cancel()
	if err := srv.Shutdown(shutdownCtx); err != nil {
		log.Warn().Err(err).Msg("http shutdown")
	}
	return serveErr
}

// parseShard reads the --shard flag (agent.ParseShard); a mistake is a
// usage error.
func parseShard(s string) (agent.Shard, error) {
	sh, err := agent.ParseShard(s)
	if err != nil {
		return agent.Shard{}, usagef("--%v", err)
	}
	return sh, nil
}

// configPaths expands the --config values: a file is itself, a folder its
// *.yaml and *.yml files in name order.
func configPaths(given []string) ([]string, error) {
	if len(given) == 0 {
		return nil, usagef("--config is required")
	}
	var out []string
	for _, p := range given {
		fi, err := os.Stat(p)
		if err != nil {
			return nil, fmt.Errorf("configuration %s: %w", p, err)
		}
		if !fi.IsDir() {
			out = append(out, p)
			continue
		}
		var found []string
		for _, pat := range []string{"*.yaml", "*.yml"} {
			m, err := filepath.Glob(filepath.Join(p, pat))
			if err != nil {
				return nil, err
			}
			found = append(found, m...)
		}
		if len(found) == 0 {
			return nil, fmt.Errorf("configuration folder %s holds no *.yaml or *.yml file", p)
		}
		sort.Strings(found)
		out = append(out, found...)
	}
	return out, nil
}
