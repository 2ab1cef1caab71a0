package server

import (
	"context"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"log"
	"net"
	"net/http"
	"strings"
	"sync"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/agent/internal/wait"
	"github.com/dewline/dewline/agent/telemetry"
)

// ErrInsecureListen is returned by NewServer for an address other than
// loopback without a bearer token.
var ErrInsecureListen = errors.New("listening beyond loopback needs a bearer token")

// MinTokenLength is the shortest bearer token NewServer accepts for an
// address other than loopback (config.MinTokenLength).
const MinTokenLength = config.MinTokenLength

// ErrWeakToken is returned by NewServer for an address other than
// loopback with a token shorter than MinTokenLength.
var ErrWeakToken = errors.New("the bearer token is too short")

// Options configures the agent's HTTP endpoint.
type Options struct {
	// Listen is host:port; port 0 picks a free port (see Server.Addr).
	Listen string
	// BearerToken, when set, is required by every route but /healthz and
	// /readyz as "Authorization: Bearer <token>", or as the password of
	// basic auth (any user name) so that a browser can open the dashboard. It is
	// required for an address other than loopback. It is a secret: it never reaches logs or errors.
	BearerToken string
	// Telemetry backs /readyz and /metrics; required.
	Telemetry *telemetry.Telemetry
	// Pages is the dashboard, mounted at / when not nil.
	Pages http.Handler
	Log   zerolog.Logger
}

// Server is the agent's HTTP endpoint:
//
//	/healthz  liveness: 200 "ok" while the process serves; never needs the token
//	/readyz   readiness as JSON (Telemetry.Readiness): 200 when ready, degraded
//	          air handlers listed in the body; 503 when the store is down or
//	          unchecked or the last run failed
//	/metrics  the Prometheus exposition of Telemetry
//	/         the dashboard, when ServerOptions.Pages is set
//
// Every response carries security headers (no sniffing, no framing, no
// referrer, a same-origin Content-Security-Policy) and, unless the page sets
// its own, Cache-Control: no-store.
type Server struct {
	opt     Options
	log     zerolog.Logger
	srv     *http.Server
	tokenH  [sha256.Size]byte // hash of the token, compared in constant time
	mu      sync.Mutex
	ln      net.Listener
	served  chan struct{} // closed when Serve returns
	started bool

	connMu  sync.Mutex
	unused  map[net.Conn]struct{} // connections that have not sent a byte of a request yet
	closing bool                  // Shutdown has begun: a new connection is closed at once

	fails *authFailures                                    // wrong tokens by client address
	sleep func(ctx context.Context, d time.Duration) error // the delay of a wrong token's answer; replaced in tests
}

// Wrong tokens from one client address are answered later and later: the
// first authFreeFailures at once, then after authFirstDelay, doubling up
// to authMaxDelay. A right token, or authForget without a wrong one,
// clears the count. At most authMaxClients addresses are tracked; past
// that the oldest counts are dropped (common practice, no source).
const (
	authFreeFailures = 5
	authFirstDelay   = 250 * time.Millisecond
	authMaxDelay     = 5 * time.Second
	authForget       = 10 * time.Minute
	authMaxClients   = 4096
)

type authFailures struct {
	mu   sync.Mutex
	byIP map[string]*failCount
}

type failCount struct {
	n    int
	last time.Time
}

// fail counts a wrong token from ip and returns how long to hold its answer.
func (a *authFailures) fail(ip string, now time.Time) time.Duration {
	a.mu.Lock()
	defer a.mu.Unlock()
	c, ok := a.byIP[ip]
	if !ok || now.Sub(c.last) > authForget {
		if !ok && len(a.byIP) >= authMaxClients {
			a.forgetOldest()
		}
		c = &failCount{}
		a.byIP[ip] = c
	}
	c.n++
	c.last = now
	if c.n <= authFreeFailures {
		return 0
	}
	d := authFirstDelay << min(c.n-authFreeFailures-1, 16)
	return min(d, authMaxDelay)
}

// ok clears ip's count after a right token.
func (a *authFailures) ok(ip string) {
	a.mu.Lock()
	delete(a.byIP, ip)
	a.mu.Unlock()
}

func (a *authFailures) forgetOldest() {
	var oldest string
	var at time.Time
	for ip, c := range a.byIP {
		if oldest == "" || c.last.Before(at) {
			oldest, at = ip, c.last
		}
	}
	delete(a.byIP, oldest)
}

// clientIP is the address of the request's peer, without the port.
func clientIP(r *http.Request) string {
	host, _, err := net.SplitHostPort(r.RemoteAddr)
	if err != nil {
		return r.RemoteAddr
	}
	return host
}

// Server timeouts: the endpoint serves small pages to a browser or a
// scraper, so slow clients are cut off early.
const (
	serverReadHeaderTimeout = 5 * time.Second
	serverReadTimeout       = 10 * time.Second
	serverWriteTimeout      = 30 * time.Second
	serverIdleTimeout       = 60 * time.Second
	serverMaxHeaderBytes    = 16 << 10
)

// contentSecurityPolicy allows the dashboard its own scripts, styles, images
// (and data: images for inline charts) and nothing from elsewhere; it may
// not be framed, nor post forms elsewhere.
const contentSecurityPolicy = "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; " +
	"object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'"

// New checks the options and builds the server; Start listens.
func New(opt Options) (*Server, error) {
	if opt.Telemetry == nil {
		return nil, errors.New("http server: telemetry is required")
	}
	host, _, err := net.SplitHostPort(opt.Listen)
	if err != nil {
		return nil, fmt.Errorf("http.listen %q: want host:port, e.g. 127.0.0.1:9470: %w", opt.Listen, err)
	}
	if opt.BearerToken == "" && !isLoopback(host) {
		return nil, fmt.Errorf("http.listen %q: %w: set http.token_env to an environment variable holding a token, or listen on 127.0.0.1", opt.Listen, ErrInsecureListen)
	}
	if n := len([]rune(opt.BearerToken)); n > 0 && n < MinTokenLength && !isLoopback(host) {
		return nil, fmt.Errorf("http.listen %q: %w: the variable named by http.token_env holds %d characters, at least %d are needed beyond loopback; e.g. openssl rand -hex 32",
			opt.Listen, ErrWeakToken, n, MinTokenLength)
	}
	s := &Server{opt: opt, log: opt.Log.With().Str("component", "http").Logger(),
		fails: &authFailures{byIP: map[string]*failCount{}}, sleep: wait.Sleep,
		unused: map[net.Conn]struct{}{}}
	if opt.BearerToken != "" {
		s.tokenH = sha256.Sum256([]byte(opt.BearerToken))
	}
	s.srv = &http.Server{
		Handler:           s.handler(),
		ReadHeaderTimeout: serverReadHeaderTimeout,
		ReadTimeout:       serverReadTimeout,
		WriteTimeout:      serverWriteTimeout,
		IdleTimeout:       serverIdleTimeout,
		MaxHeaderBytes:    serverMaxHeaderBytes,
		ErrorLog:          log.New(serverErrorLog{s.log}, "", 0),
		ConnState:         s.trackUnused,
	}
	return s, nil
}

// isLoopback reports whether host names only loopback interfaces
// (config.IsLoopback).
func isLoopback(host string) bool { return config.IsLoopback(host) }

// Start listens and serves in the background. It returns at once, with the
// error when the address cannot be bound.
func (s *Server) Start() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.started {
		return errors.New("http server: already started")
	}
	ln, err := net.Listen("tcp", s.opt.Listen)
	if err != nil {
		return fmt.Errorf("http server: listen on %s: %w", s.opt.Listen, err)
	}
	s.ln, s.started, s.served = ln, true, make(chan struct{})
	go func() {
		defer close(s.served)
		if err := s.srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
			s.log.Error().Err(err).Msg("http server stopped")
		}
	}()
	s.log.Info().Str("addr", ln.Addr().String()).Bool("auth", s.opt.BearerToken != "").Msg("http server listening")
	return nil
}

// Addr returns the address the server listens on, or "" before Start.
func (s *Server) Addr() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.ln == nil {
		return ""
	}
	return s.ln.Addr().String()
}

// trackUnused keeps the connections that have not begun a request.
// net/http's Shutdown counts such a connection as busy until it is five
// seconds old, and browsers open them ahead of need (a page load leaves one
// or two behind), so a shutdown right after a page load would wait out its
// whole deadline for requests that never come.
func (s *Server) trackUnused(c net.Conn, state http.ConnState) {
	s.connMu.Lock()
	defer s.connMu.Unlock()
	if state != http.StateNew {
		delete(s.unused, c)
		return
	}
	if s.closing {
		_ = c.Close()
		return
	}
	s.unused[c] = struct{}{}
}

// dropUnused closes the connections that have not begun a request, and
// every one accepted from now on.
func (s *Server) dropUnused() {
	s.connMu.Lock()
	defer s.connMu.Unlock()
	s.closing = true
	for c := range s.unused {
		_ = c.Close()
		delete(s.unused, c)
	}
}

// Shutdown stops accepting connections, closes the ones that have not begun
// a request, waits for requests in flight until ctx ends, and waits for the
// serving goroutine. It is a no-op before Start.
func (s *Server) Shutdown(ctx context.Context) error {
	s.mu.Lock()
	started, served := s.started, s.served
	s.mu.Unlock()
	if !started {
		return nil
	}
	s.dropUnused()
	err := s.srv.Shutdown(ctx)
	if err != nil {
		_ = s.srv.Close() // the deadline passed: drop the rest
	}
	select {
	case <-served:
	case <-ctx.Done():
	}
	if err != nil {
		return fmt.Errorf("http server: shut down: %w", err)
	}
	return nil
}

func (s *Server) handler() http.Handler {
	mux := http.NewServeMux()
	mux.Handle("/healthz", onlyGet(http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		_, _ = w.Write([]byte("ok\n"))
	})))
	mux.Handle("/readyz", onlyGet(http.HandlerFunc(s.readyz)))
	mux.Handle("/metrics", onlyGet(s.opt.Telemetry.Handler()))
	if s.opt.Pages != nil {
		mux.Handle("/", s.opt.Pages)
	}
	return s.secure(s.logRequests(s.authorize(mux)))
}

func (s *Server) readyz(w http.ResponseWriter, req *http.Request) {
	r := s.opt.Telemetry.Readiness()
	var body []byte
	var err error
	if public, _ := req.Context().Value(publicKey{}).(bool); public {
		body, err = json.Marshal(map[string]string{"status": r.Status})
	} else {
		body, err = json.Marshal(r)
	}
	if err != nil { // plain strings and bools: cannot happen
		http.Error(w, "encode readiness", http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "application/json")
	if r.Status == telemetry.ReadinessUnready {
		w.WriteHeader(http.StatusServiceUnavailable)
	}
	_, _ = w.Write(append(body, '\n'))
}

// onlyGet answers 405 to methods other than GET and HEAD.
func onlyGet(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.Method != http.MethodGet && r.Method != http.MethodHead {
			w.Header().Set("Allow", "GET, HEAD")
			http.Error(w, "method not allowed", http.StatusMethodNotAllowed)
			return
		}
		h.ServeHTTP(w, r)
	})
}

// secure sets the security headers on every response. Cache-Control is set
// first so a page that may be cached (a static asset of the dashboard) can
// replace it.
func (s *Server) secure(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		hd := w.Header()
		hd.Set("X-Content-Type-Options", "nosniff")
		hd.Set("X-Frame-Options", "DENY")
		hd.Set("Referrer-Policy", "no-referrer")
		hd.Set("Content-Security-Policy", contentSecurityPolicy)
		hd.Set("Cross-Origin-Opener-Policy", "same-origin")
		hd.Set("Cross-Origin-Resource-Policy", "same-origin")
		hd.Set("Cache-Control", "no-store")
		h.ServeHTTP(w, r)
	})
}

// authorize requires the bearer token on every path but /healthz, when a
// token is set. The presented token and the expected one are hashed before
// the constant-time compare so that neither their contents nor their
// lengths show in the timing.
func (s *Server) authorize(h http.Handler) http.Handler {
	if s.opt.BearerToken == "" {
		return h
	}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.URL.Path == "/healthz" {
			h.ServeHTTP(w, r)
			return
		}
		if r.URL.Path == "/readyz" {
			// Open to probes, which send no token; without one the body
			// says only the status, not the reasons (store errors, units).
			if !s.tokenMatches(r) {
				r = r.WithContext(context.WithValue(r.Context(), publicKey{}, true))
			}
			h.ServeHTTP(w, r)
			return
		}
		if presentedToken(r) == "" {
			challenge(w)
			http.Error(w, "unauthorized: send Authorization: Bearer <token> (or basic auth with the token as the password)", http.StatusUnauthorized)
			return
		}
		if !s.tokenMatches(r) {
			if d := s.fails.fail(clientIP(r), time.Now()); d > 0 {
				_ = s.sleep(r.Context(), d) // a client that hangs up ends the wait
			}
			w.Header().Add("WWW-Authenticate", `Bearer realm="dewline", error="invalid_token"`)
			w.Header().Add("WWW-Authenticate", `Basic realm="dewline", charset="UTF-8"`)
			http.Error(w, "unauthorized: wrong token", http.StatusUnauthorized)
			return
		}
		s.fails.ok(clientIP(r))
		h.ServeHTTP(w, r)
	})
}

// publicKey marks a request that came without the token.
type publicKey struct{}

// presentedToken is the token r carries: a bearer token, or the password
// of basic auth (a browser cannot send a bearer token when it opens a
// page; basic auth with any user name and the token as the password does
// the same job). Empty when there is none.
func presentedToken(r *http.Request) string {
	scheme, rest, found := strings.Cut(r.Header.Get("Authorization"), " ")
	switch {
	case found && strings.EqualFold(scheme, "Bearer"):
		return strings.TrimSpace(rest)
	case found && strings.EqualFold(scheme, "Basic"):
		if _, pw, ok := r.BasicAuth(); ok {
			return pw
		}
	}
	return ""
}

// tokenMatches reports whether r carries the token. The presented token
// and the expected one are hashed before the constant-time compare so
// that neither their contents nor their lengths show in the timing.
func (s *Server) tokenMatches(r *http.Request) bool {
	presented := presentedToken(r)
	got := sha256.Sum256([]byte(presented))
	return presented != "" && subtle.ConstantTimeCompare(got[:], s.tokenH[:]) == 1
}

// challenge names both ways in: the bearer token for programs, basic auth
// for a browser's login prompt.
func challenge(w http.ResponseWriter) {
	w.Header().Add("WWW-Authenticate", `Bearer realm="dewline"`)
	w.Header().Add("WWW-Authenticate", `Basic realm="dewline", charset="UTF-8"`)
}

// logRequests logs each request at debug level: method, path, status,
// size, duration and peer. It logs no header (Authorization least of all)
// and no query string.
func (s *Server) logRequests(h http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if s.log.GetLevel() > zerolog.DebugLevel {
			h.ServeHTTP(w, r)
			return
		}
		start := time.Now()
		rec := &statusRecorder{ResponseWriter: w, status: http.StatusOK}
		h.ServeHTTP(rec, r)
		s.log.Debug().
			Str("method", r.Method).
			Str("path", r.URL.Path).
			Int("status", rec.status).
			Int64("bytes", rec.bytes).
			Dur("duration_ms", time.Since(start)).
			Str("remote", r.RemoteAddr).
			Msg("http request")
	})
}

// statusRecorder notes the status and size of a response.
type statusRecorder struct {
	http.ResponseWriter
	status int
	bytes  int64
	wrote  bool
}

func (r *statusRecorder) WriteHeader(code int) {
	if !r.wrote {
		r.status, r.wrote = code, true
	}
	r.ResponseWriter.WriteHeader(code)
}

func (r *statusRecorder) Write(b []byte) (int, error) {
	r.wrote = true
	n, err := r.ResponseWriter.Write(b)
	r.bytes += int64(n)
	return n, err
}

// Unwrap lets http.ResponseController reach the underlying writer.
func (r *statusRecorder) Unwrap() http.ResponseWriter { return r.ResponseWriter }

// serverErrorLog sends net/http's own messages (bad handshakes, accept
// errors) to the component logger at warn level.
type serverErrorLog struct{ log zerolog.Logger }

func (l serverErrorLog) Write(p []byte) (int, error) {
	l.log.Warn().Str("detail", strings.TrimSpace(string(p))).Msg("http server problem")
	return len(p), nil
}
