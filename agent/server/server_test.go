package server

import (
	"context"
	"encoding/base64"
	"encoding/json"
	"errors"
	"io"
	"net"
	"net/http"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/telemetry"

	"github.com/dewline/dewline/agent/telemetry/telemetrytest"

	"github.com/dewline/dewline/deploy/testkit"
)

// startServer starts a server on a free loopback port and stops it when the
// test ends.
func startServer(t *testing.T, opt Options) (*Server, string) {
	t.Helper()
	if opt.Listen == "" {
		opt.Listen = "127.0.0.1:0"
	}
	s, err := New(opt)
	require.NoError(t, err)
	require.NoError(t, s.Start())
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		assert.NoError(t, s.Shutdown(ctx))
	})
	return s, "http://" + s.Addr()
}

// get makes a request with an optional Authorization header.
func get(t *testing.T, method, url, auth string) (*http.Response, string) {
	t.Helper()
	req, err := http.NewRequest(method, url, nil)
	require.NoError(t, err)
	if auth != "" {
		req.Header.Set("Authorization", auth)
	}
	resp, err := http.DefaultClient.Do(req)
	require.NoError(t, err)
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	require.NoError(t, err)
	return resp, string(b)
}

func TestServer_Routes(t *testing.T) {
	tel := telemetry.New()
	pages := http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) { _, _ = io.WriteString(w, "dashboard") })
	_, base := startServer(t, Options{Telemetry: tel, Pages: pages, Log: zerolog.Nop()})

	resp, body := get(t, http.MethodGet, base+"/healthz", "")
	assert.Equal(t, http.StatusOK, resp.StatusCode)
	assert.Equal(t, "ok", strings.TrimSpace(body))

	// Not ready until the store has been checked.
	resp, body = get(t, http.MethodGet, base+"/readyz", "")
	assert.Equal(t, http.StatusServiceUnavailable, resp.StatusCode)
	assert.Equal(t, "application/json", resp.Header.Get("Content-Type"))
	var r telemetry.Readiness
	require.NoError(t, json.Unmarshal([]byte(body), &r))
	assert.Equal(t, telemetry.ReadinessUnready, r.Status)

	// Ready, with one air handler skipped: 200 and the air handler listed.
	tel.SetStoreUp(true, "")
	tel.SetConfigProblem("ahu-2", "no supply_flow point")
	resp, body = get(t, http.MethodGet, base+"/readyz", "")
	assert.Equal(t, http.StatusOK, resp.StatusCode)
	var raw map[string]any
	require.NoError(t, json.Unmarshal([]byte(body), &raw))
	assert.Equal(t, "degraded", raw["status"])
	assert.Equal(t, []any{map[string]any{"ahu": "ahu-2", "reason": "no supply_flow point"}}, raw["degraded_ahus"])

	// Store down: 503 with the reason.
	tel.SetStoreUp(false, "connection refused")
	resp, body = get(t, http.MethodGet, base+"/readyz", "")
	assert.Equal(t, http.StatusServiceUnavailable, resp.StatusCode)
	assert.Contains(t, body, "store down: connection refused")

	// Counters move on /metrics.
	before := telemetrytest.ParseExposition(t, func() string { _, b := get(t, http.MethodGet, base+"/metrics", ""); return b }())
	runs0, _ := telemetrytest.Sample(before, "dewline_runs_total")
	tel.RunStarted()
	tel.RunFinished(time.Second, nil)
	tel.HoursComputed("ahu-1", 4)
	resp, body = get(t, http.MethodGet, base+"/metrics", "")
	require.Equal(t, http.StatusOK, resp.StatusCode)
	after := telemetrytest.ParseExposition(t, body)
	runs1, ok := telemetrytest.Sample(after, "dewline_runs_total")
	require.True(t, ok)
	assert.Equal(t, runs0+1, runs1)
	hours, ok := telemetrytest.Sample(after, "dewline_hours_computed_total", "ahu", "ahu-1")
	require.True(t, ok)
	assert.Equal(t, 4.0, hours)
	up, _ := telemetrytest.Sample(after, "dewline_store_up")
	assert.Equal(t, 0.0, up)

	resp, body = get(t, http.MethodGet, base+"/", "")
	assert.Equal(t, http.StatusOK, resp.StatusCode)
	assert.Equal(t, "dashboard", body)

	resp, _ = get(t, http.MethodPost, base+"/healthz", "")
	assert.Equal(t, http.StatusMethodNotAllowed, resp.StatusCode)
}

func TestServer_NoPages(t *testing.T) {
	_, base := startServer(t, Options{Telemetry: telemetry.New(), Log: zerolog.Nop()})
	resp, _ := get(t, http.MethodGet, base+"/", "")
	assert.Equal(t, http.StatusNotFound, resp.StatusCode)
}

func TestServer_Auth(t *testing.T) {
	const token = "s3cret-token-for-tests"
	tel := telemetry.New()
	tel.SetStoreUp(true, "")
	pages := http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) { _, _ = io.WriteString(w, "dashboard") })
	_, base := startServer(t, Options{Telemetry: tel, BearerToken: token, Pages: pages, Log: zerolog.Nop()})

	tests := []struct {
		name      string
		path      string
		auth      string
		want      int
		challenge string // WWW-Authenticate expected on a 401
	}{
		{"healthz without token", "/healthz", "", http.StatusOK, ""},
		{"healthz with wrong token", "/healthz", "Bearer nope", http.StatusOK, ""},
		{"metrics without token", "/metrics", "", http.StatusUnauthorized, `Bearer realm="dewline"`},
		{"readyz without token (probes cannot send one)", "/readyz", "", http.StatusOK, ""},
		{"pages without token", "/", "", http.StatusUnauthorized, `Bearer realm="dewline"`},
		{"wrong token", "/metrics", "Bearer " + token + "x", http.StatusUnauthorized, `Bearer realm="dewline", error="invalid_token"`},
		{"prefix of token", "/metrics", "Bearer " + token[:5], http.StatusUnauthorized, `Bearer realm="dewline", error="invalid_token"`},
		{"empty bearer", "/metrics", "Bearer ", http.StatusUnauthorized, `Bearer realm="dewline"`},
		{"basic scheme, token not encoded", "/metrics", "Basic " + token, http.StatusUnauthorized, `Bearer realm="dewline"`},
		{"basic auth with the token as password", "/", "Basic " + base64.StdEncoding.EncodeToString([]byte("facility:"+token)), http.StatusOK, ""},
		{"basic auth with a wrong password", "/", "Basic " + base64.StdEncoding.EncodeToString([]byte(token+":x")), http.StatusUnauthorized, `Bearer realm="dewline", error="invalid_token"`},
		{"token without scheme", "/metrics", token, http.StatusUnauthorized, `Bearer realm="dewline"`},
		{"right token", "/metrics", "Bearer " + token, http.StatusOK, ""},
		{"scheme in lower case", "/metrics", "bearer " + token, http.StatusOK, ""},
		{"pages with token", "/", "Bearer " + token, http.StatusOK, ""},
		{"unclean healthz path", "/./healthz", "", http.StatusUnauthorized, `Bearer realm="dewline"`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			resp, body := get(t, http.MethodGet, base+tt.path, tt.auth)
			assert.Equal(t, tt.want, resp.StatusCode)
			assert.Equal(t, tt.challenge, resp.Header.Get("WWW-Authenticate"))
			assert.NotContains(t, body, token)
		})
	}

	// Without the token, readiness says its status and nothing more.
	tel.SetConfigProblem("AHU-9", "points missing in bucket secret-bucket")
	_, body := get(t, http.MethodGet, base+"/readyz", "")
	assert.JSONEq(t, `{"status":"degraded"}`, body)
	_, body = get(t, http.MethodGet, base+"/readyz", "Bearer "+token)
	assert.Contains(t, body, "secret-bucket")
	assert.Contains(t, body, "AHU-9")
}

func TestServer_Listen(t *testing.T) {
	tests := []struct {
		name   string
		listen string
		token  string
		ok     bool
	}{
		{"loopback v4", "127.0.0.1:0", "", true},
		{"loopback v6", "[::1]:0", "", true},
		{"localhost", "localhost:0", "", true},
		{"all interfaces", "0.0.0.0:9470", "", false},
		{"empty host", ":9470", "", false},
		{"all v6 interfaces", "[::]:9470", "", false},
		{"lan address", "192.0.2.10:9470", "", false},
		{"host name", "dewline.example:9470", "", false},
		{"all interfaces with token", "0.0.0.0:9470", "0123456789abcdef", true},
		{"lan address with token", "192.0.2.10:9470", "0123456789abcdef0123", true},
		{"all interfaces, short token", "0.0.0.0:9470", "t0ken", false},
		{"lan address, 15 characters", "192.0.2.10:9470", "0123456789abcde", false},
		{"loopback, short token", "127.0.0.1:0", "t0ken", true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			// Only built, never started: tests listen on loopback only.
			_, err := New(Options{Listen: tt.listen, BearerToken: tt.token, Telemetry: telemetry.New(), Log: zerolog.Nop()})
			if tt.ok {
				assert.NoError(t, err)
				return
			}
			require.Error(t, err)
			if tt.token == "" {
				assert.ErrorIs(t, err, ErrInsecureListen)
			} else {
				assert.ErrorIs(t, err, ErrWeakToken)
				assert.Contains(t, err.Error(), "at least 16 are needed beyond loopback")
				assert.NotContains(t, err.Error(), tt.token, "the token never shows")
			}
			assert.Contains(t, err.Error(), "http.token_env")
		})
	}

	bad := []struct{ name, listen string }{{"no port", "127.0.0.1"}, {"empty", ""}}
	for _, tt := range bad {
		t.Run(tt.name, func(t *testing.T) {
			_, err := New(Options{Listen: tt.listen, Telemetry: telemetry.New(), Log: zerolog.Nop()})
			require.Error(t, err)
			assert.Contains(t, err.Error(), "http.listen")
		})
	}

	t.Run("no telemetry", func(t *testing.T) {
		_, err := New(Options{Listen: "127.0.0.1:0", Log: zerolog.Nop()})
		assert.Error(t, err)
	})
}

func TestServer_StartBindError(t *testing.T) {
	taken, err := net.Listen("tcp", "127.0.0.1:0")
	require.NoError(t, err)
	defer taken.Close()
	s, err := New(Options{Listen: taken.Addr().String(), Telemetry: telemetry.New(), Log: zerolog.Nop()})
	require.NoError(t, err)
	err = s.Start()
	require.Error(t, err)
	assert.Contains(t, err.Error(), taken.Addr().String())
	assert.Empty(t, s.Addr())
	assert.NoError(t, s.Shutdown(context.Background()), "shutdown of a server that never started")
}

func TestServer_SecurityHeaders(t *testing.T) {
	const token = "hdr-token"
	pages := http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.URL.Path == "/static/app.css" {
			w.Header().Set("Cache-Control", "max-age=3600")
		}
		_, _ = io.WriteString(w, "page")
	})
	_, base := startServer(t, Options{Telemetry: telemetry.New(), BearerToken: token, Pages: pages, Log: zerolog.Nop()})

	tests := []struct {
		name  string
		path  string
		auth  string
		want  int
		cache string
	}{
		{"healthz", "/healthz", "", http.StatusOK, "no-store"},
		{"readyz", "/readyz", "Bearer " + token, http.StatusServiceUnavailable, "no-store"},
		{"metrics", "/metrics", "Bearer " + token, http.StatusOK, "no-store"},
		{"unauthorized", "/metrics", "", http.StatusUnauthorized, "no-store"},
		{"page", "/", "Bearer " + token, http.StatusOK, "no-store"},
		{"asset sets its own caching", "/static/app.css", "Bearer " + token, http.StatusOK, "max-age=3600"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			resp, _ := get(t, http.MethodGet, base+tt.path, tt.auth)
			require.Equal(t, tt.want, resp.StatusCode)
			h := resp.Header
			assert.Equal(t, "nosniff", h.Get("X-Content-Type-Options"))
			assert.Equal(t, "DENY", h.Get("X-Frame-Options"))
			assert.Equal(t, "no-referrer", h.Get("Referrer-Policy"))
			csp := h.Get("Content-Security-Policy")
			assert.Contains(t, csp, "default-src 'self'")
			assert.Contains(t, csp, "img-src 'self' data:")
			assert.Contains(t, csp, "frame-ancestors 'none'")
			assert.NotContains(t, csp, "unsafe-inline")
			assert.NotContains(t, csp, "unsafe-eval")
			assert.Equal(t, tt.cache, h.Get("Cache-Control"))
		})
	}
}

func TestServer_TokenNeverLogged(t *testing.T) {
	const token = "tok-7f3a9c-never-log-me"
	var logs testkit.SyncBuffer
	lg := zerolog.New(&logs).Level(zerolog.DebugLevel)
	_, base := startServer(t, Options{Telemetry: telemetry.New(), BearerToken: token, Log: lg})

	get(t, http.MethodGet, base+"/metrics", "Bearer "+token)
	get(t, http.MethodGet, base+"/metrics", "Bearer "+token+"-wrong")
	get(t, http.MethodGet, base+"/readyz?token="+token, "")
	get(t, http.MethodGet, base+"/healthz", "Bearer "+token)

	out := logs.String()
	// The request log is on, so the check below looks at real output.
	assert.Contains(t, out, `"path":"/metrics"`)
	assert.Contains(t, out, `"status":401`)
	assert.NotContains(t, out, token)
	assert.NotContains(t, out, "tok-7f3a9c")
	assert.NotContains(t, strings.ToLower(out), "authorization")
}

func TestServer_Shutdown(t *testing.T) {
	s, err := New(Options{Listen: "127.0.0.1:0", Telemetry: telemetry.New(), Log: zerolog.Nop()})
	require.NoError(t, err)
	require.NoError(t, s.Start())
	assert.Error(t, s.Start(), "second start")
	addr := s.Addr()
	resp, _ := get(t, http.MethodGet, "http://"+addr+"/healthz", "")
	assert.Equal(t, http.StatusOK, resp.StatusCode)

	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	require.NoError(t, s.Shutdown(ctx))
	c := &http.Client{Transport: &http.Transport{DisableKeepAlives: true}}
	_, err = c.Get("http://" + addr + "/healthz")
	require.Error(t, err)
	var opErr *net.OpError
	assert.True(t, errors.As(err, &opErr), "connection refused after shutdown: %v", err)
}

// TestServer_ShutdownDropsUnusedConnections: a connection that never sends
// a request (browsers open them ahead of need) does not hold a shutdown:
// net/http alone counts it busy until it is 5 s old, past this deadline.
func TestServer_ShutdownDropsUnusedConnections(t *testing.T) {
	s, err := New(Options{Listen: "127.0.0.1:0", Telemetry: telemetry.New(), Log: zerolog.Nop()})
	require.NoError(t, err)
	require.NoError(t, s.Start())
	idle, err := net.Dial("tcp", s.Addr())
	require.NoError(t, err)
	defer idle.Close()
	// The same server still finishes a request in flight when it has one:
	// a served request proves the unused connection was accepted first.
	resp, _ := get(t, http.MethodGet, "http://"+s.Addr()+"/healthz", "")
	assert.Equal(t, http.StatusOK, resp.StatusCode)

	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Second)
	defer cancel()
	require.NoError(t, s.Shutdown(ctx), "an unused connection must not hold the shutdown to its deadline")
	require.NoError(t, idle.SetReadDeadline(time.Now().Add(3*time.Second)))
	_, err = idle.Read(make([]byte, 1))
	assert.Error(t, err, "the unused connection is closed")
	var ne net.Error
	assert.False(t, errors.As(err, &ne) && ne.Timeout(), "closed by the server, not timed out: %v", err)
}

// TestServer_WrongTokensSlowDown: after five wrong tokens from one
// address each further wrong answer is held longer (250 ms, doubling, at
// most 5 s); a right token clears the count. The delays are read from the
// server's wait function, not timed.
func TestServer_WrongTokensSlowDown(t *testing.T) {
	const token = "s3cret-token-for-tests"
	pages := http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) { _, _ = io.WriteString(w, "dashboard") })
	srv, err := New(Options{Listen: "127.0.0.1:0", Telemetry: telemetry.New(), BearerToken: token, Pages: pages, Log: zerolog.Nop()})
	require.NoError(t, err)
	var mu sync.Mutex
	var waits []time.Duration
	srv.sleep = func(_ context.Context, d time.Duration) error {
		mu.Lock()
		waits = append(waits, d)
		mu.Unlock()
		return nil
	}
	got := func() []time.Duration {
		mu.Lock()
		defer mu.Unlock()
		return append([]time.Duration(nil), waits...)
	}
	require.NoError(t, srv.Start())
	t.Cleanup(func() { _ = srv.Shutdown(context.Background()) })
	base := "http://" + srv.Addr()
	for range 10 {
		resp, _ := get(t, http.MethodGet, base+"/", "Bearer wrong-token")
		assert.Equal(t, http.StatusUnauthorized, resp.StatusCode)
	}
	ms := time.Millisecond
	assert.Equal(t, []time.Duration{250 * ms, 500 * ms, 1000 * ms, 2000 * ms, 4000 * ms}, got())
	for range 3 {
		resp, _ := get(t, http.MethodGet, base+"/", "Bearer wrong-token")
		assert.Equal(t, http.StatusUnauthorized, resp.StatusCode)
	}
	assert.Equal(t, []time.Duration{5000 * ms, 5000 * ms, 5000 * ms}, got()[5:], "at most 5 s")

	resp, body := get(t, http.MethodGet, base+"/", "Bearer "+token)
	assert.Equal(t, http.StatusOK, resp.StatusCode, body)
	mu.Lock()
	waits = nil
	mu.Unlock()
	for range 6 {
		resp, _ := get(t, http.MethodGet, base+"/", "Bearer wrong-token")
		assert.Equal(t, http.StatusUnauthorized, resp.StatusCode)
	}
	assert.Equal(t, []time.Duration{250 * ms}, got(), "a right token cleared the count")
}
