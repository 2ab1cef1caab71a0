package influx

import (
	"context"
	"encoding/json"
	"errors"
	"net"
	"net/http"
	"net/url"
	"strings"
	"sync"

	influxdb2 "github.com/influxdata/influxdb-client-go/v2"
	"github.com/influxdata/influxdb-client-go/v2/api"
	ihttp "github.com/influxdata/influxdb-client-go/v2/api/http"
	ilog "github.com/influxdata/influxdb-client-go/v2/log"
)

// The client library logs through a package-wide logger that writes to the
// standard library's log package (stderr) unless it is nil. Every error it
// would log on the paths used here is also returned to us, and we return it
// to the caller, so its logger is switched off for the whole process.
func init() { ilog.Log = nil }

// Client reads and writes trend points on one InfluxDB server and bucket.
// It is safe for concurrent use.
type Client struct {
	opt      Options // with defaults
	url      string  // for messages: no credentials, no query
	client   influxdb2.Client
	http     *http.Client
	write    api.WriteAPIBlocking
	queryURL string
	secrets  *strings.Replacer

	closeOnce sync.Once

	batchQL int // the query language of ReadBatch (batchAuto: by the server's version)
	verMu   sync.Mutex
	version string // the server's, from /ping; "" until known
}

// New checks opt, fills in defaults and returns a client. It does not
// contact the server: call Ping or Ready for that.
func New(opt Options) (*Client, error) {
	u, err := opt.validate()
	if err != nil {
		return nil, err
	}
	opt = opt.withDefaults()

	// Our own transport and no http.Client timeout: each attempt gets its
	// own deadline from the retry loop, which also covers a result that
	// stops streaming half way (a whole-request timeout would cut long
	// reads short).
	transport := http.DefaultTransport.(*http.Transport).Clone()
	transport.MaxIdleConnsPerHost = 8
	// Compression saves bandwidth to a remote server but costs both ends
	// CPU; on loopback it made a week's read about a third slower.
	transport.DisableCompression = isLoopback(u.Hostname())
	hc := &http.Client{Transport: transport}

	lopt := influxdb2.DefaultOptions().
		SetHTTPClient(hc).
		SetApplicationName("dewline")
	c := &Client{
		opt:     opt,
		url:     redactURL(u),
		client:  influxdb2.NewClientWithOptions(opt.URL, opt.Token, lopt),
		http:    hc,
		secrets: secretReplacer(opt.Token),
	}
	c.write = c.client.WriteAPIBlocking(opt.Org, opt.Bucket)
	if c.queryURL, err = queryEndpoint(c.client.HTTPService().ServerAPIURL(), opt.Org); err != nil {
		return nil, err
	}
	return c, nil
}

// Options returns the options in force, defaults filled in. Print them
// freely: their String method hides the token.
func (c *Client) Options() Options { return c.opt }

// Close releases the client's connections. It is safe to call twice.
func (c *Client) Close() {
	c.closeOnce.Do(func() {
		c.client.Close()
		c.http.CloseIdleConnections()
	})
}

// Ping checks that the server answers (GET /ping, on 1.x and 2.x alike).
// It does not check the token or the bucket: Ready does.
func (c *Client) Ping(ctx context.Context) error {
	return c.get(ctx, "ping", "ping", http.StatusNoContent)
}

// Ready checks that the server is healthy (GET /health) and that the bucket
// can be queried with the token: a missing bucket gives ErrNoSuchBucket, a
// bad token ErrUnauthorized, a 1.x server without Flux ErrRejected with the
// server's hint.
func (c *Client) Ready(ctx context.Context) error {
	if err := c.get(ctx, "health", "health", http.StatusOK); err != nil {
		return err
	}
	flux := "from(bucket: " + fluxString(c.opt.Bucket) + ")\n  |> range(start: -1m)\n  |> limit(n: 1)"
	return c.run(ctx, flux, nil, func(*fluxCSV) (bool, error) { return false, nil })
}

// get sends GET path and expects status want.
func (c *Client) get(ctx context.Context, op, path string, want int) error {
	endpoint, err := url.JoinPath(c.client.ServerURL(), path)
	if err != nil {
		return err
	}
	return c.do(ctx, op, "", func(actx context.Context, _ func()) (bool, error) {
		req, err := http.NewRequestWithContext(actx, http.MethodGet, endpoint, nil)
		if err != nil {
			return false, err
		}
		perr := c.client.HTTPService().DoHTTPRequest(req, nil, func(resp *http.Response) error {
			defer resp.Body.Close()
			if resp.StatusCode != want {
				return &ihttp.Error{StatusCode: resp.StatusCode, Code: resp.Status, Message: "unexpected answer to " + path}
			}
			if path == "health" {
				var h struct{ Status, Message string }
				if err := json.NewDecoder(resp.Body).Decode(&h); err == nil && h.Status != "" && h.Status != "pass" {
					return &ihttp.Error{StatusCode: http.StatusServiceUnavailable, Code: "unhealthy", Message: "health " + h.Status + ": " + h.Message}
				}
			}
			return nil
		})
		if perr != nil {
			// The response callback's error comes back wrapped; unwrap it
			// so that its status code is seen.
			var inner *ihttp.Error
			if perr.StatusCode == 0 && errors.As(perr.Err, &inner) {
				return false, inner
			}
			return false, perr
		}
		return false, nil
	})
}

// isLoopback reports whether host names this machine.
func isLoopback(host string) bool {
	if strings.EqualFold(host, "localhost") {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// secretReplacer returns a replacer that hides the token in text, in the
// forms a server or proxy might echo it: as sent, JSON-escaped, URL-escaped,
// and (for a 1.x user:password token) the password alone.
func secretReplacer(token string) *strings.Replacer {
	if token == "" {
		return strings.NewReplacer()
	}
	forms := []string{token}
	if b, err := json.Marshal(token); err == nil {
		forms = append(forms, string(b[1:len(b)-1]))
	}
	forms = append(forms, url.QueryEscape(token), url.PathEscape(token))
	if _, pass, ok := strings.Cut(token, ":"); ok && len(pass) >= 4 {
		forms = append(forms, pass)
	}
	var pairs []string
	seen := map[string]bool{}
	for _, f := range forms {
		if f != "" && !seen[f] {
			seen[f] = true
			pairs = append(pairs, f, redacted)
		}
	}
	return strings.NewReplacer(pairs...)
}

// scrub returns s with every secret replaced.
func (c *Client) scrub(s string) string { return c.secrets.Replace(s) }

// scrubbedError carries a cleaned message and keeps the original reachable
// for errors.Is and errors.As (for example syscall.ECONNREFUSED).
type scrubbedError struct {
	msg string
	err error
}

func (e *scrubbedError) Error() string { return e.msg }
func (e *scrubbedError) Unwrap() error { return e.err }

// scrubError returns err with its text cleaned of secrets. A client library
// *http.Error is copied with its message cleaned and its response headers
// dropped, so callers can still read StatusCode and RetryAfter through
// errors.As.
func (c *Client) scrubError(err error) error {
	if err == nil {
		return nil
	}
	var he *ihttp.Error
	if errors.As(err, &he) {
		cp := &ihttp.Error{
			StatusCode: he.StatusCode,
			Code:       c.scrub(he.Code),
			Message:    c.scrub(he.Message),
			RetryAfter: he.RetryAfter,
		}
		if he.Err != nil {
			cp.Err = &scrubbedError{msg: c.scrub(he.Err.Error()), err: he.Err}
		}
		return cp
	}
	return &scrubbedError{msg: c.scrub(err.Error()), err: err}
}
