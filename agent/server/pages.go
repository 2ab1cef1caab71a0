package server

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/telemetry"
)

// StoreProbeEvery is how often ServePages checks that its stores still
// answer.
const StoreProbeEvery = 5 * time.Second

// PagesOptions configures ServePages.
type PagesOptions struct {
	Listen string
	// TokenEnv names the environment variable holding the bearer token
	// (http.token_env; ServerOptions.BearerToken).
	TokenEnv string
	Pages    http.Handler // one site's dashboard or a portfolio
	// Pings ask the stores behind the pages whether they answer; /readyz
	// follows them.
	Pings []func(context.Context) error
	Log   zerolog.Logger
	// Out is told the dashboard's address once it listens.
	Out io.Writer
}

// ServePages serves the pages with the agent's HTTP server (health,
// readiness, metrics, security headers, token) until ctx ends, probing the
// stores now and every StoreProbeEvery.
func ServePages(ctx context.Context, o PagesOptions) error {
	token, err := config.SecretFromEnv("http.token_env", o.TokenEnv)
	if err != nil {
		return err
	}
	tel := telemetry.New()
	probe := func() error {
		pctx, cancel := context.WithTimeout(ctx, 5*time.Second)
		defer cancel()
		for _, ping := range o.Pings {
			if err := ping(pctx); err != nil {
				return err
			}
		}
		return nil
	}
	up := true
	report := func(err error) {
		text := ""
		if err != nil {
			text = err.Error()
		}
		tel.SetStoreUp(err == nil, text)
		switch {
		case err != nil && up:
			o.Log.Warn().Err(err).Msg("the store does not answer; /readyz says so until it does")
		case err == nil && !up:
			o.Log.Info().Msg("the store answers again")
		}
		up = err == nil
	}
	report(probe())
	probed := make(chan struct{})
	loopCtx, stopProbe := context.WithCancel(ctx)
	go func() {
		defer close(probed)
		tick := time.NewTicker(StoreProbeEvery)
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
	srv, err := New(Options{Listen: o.Listen, BearerToken: token, Telemetry: tel, Pages: o.Pages, Log: o.Log})
	if err != nil {
		return err
	}
	if err := srv.Start(); err != nil {
		return err
	}
	url := "http://" + srv.Addr() + "/"
	o.Log.Info().Str("url", url).Msg("dashboard listening")
	if o.Out != nil {
		fmt.Fprintf(o.Out, "dashboard: %s (Ctrl-C to stop)\n", url)
	}
	<-ctx.Done()
	sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	return srv.Shutdown(sctx)
}
