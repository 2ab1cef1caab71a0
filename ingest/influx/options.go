package influx

import (
	"encoding/json"
	"fmt"
	"log/slog"
	"net/url"
	"strings"
	"time"
)

// Defaults that New fills in for zero Options fields.
const (
	DefaultTimeout   = 30 * time.Second
	DefaultRetries   = 3
	DefaultRetryWait = 500 * time.Millisecond
	DefaultBatchSize = 5000

	// maxRetryWait caps the exponential backoff between attempts.
	maxRetryWait = 30 * time.Second
	// maxRetryAfter caps how long a server's Retry-After header may make
	// one wait last.
	maxRetryAfter = 5 * time.Minute
)

// Options says which InfluxDB server to use and how patiently.
//
// InfluxDB 2.x and Cloud: URL, Org, Bucket and an API Token.
// InfluxDB 1.8 and later 1.x (Flux enabled): URL, Bucket "database/retention
// policy" (or just "database" for its default policy), Token "user:password"
// or empty when authentication is off; Org is ignored.
type Options struct {
	URL    string // server address, e.g. http://localhost:8086; no credentials in it
	Org    string // organisation (2.x); ignored by 1.x
	Bucket string // bucket (2.x) or "database/retention policy" (1.x)

	// Token is the API token (2.x) or "user:password" (1.x). It is a
	// secret: String, GoString, MarshalJSON and LogValue print it as
	// "[redacted]", and the client strips it from every error it returns.
	Token string

	// Timeout bounds each request: the wait for the response headers, and
	// then any pause while a query result streams in. Default 30s.
	Timeout time.Duration
	// Retries is how many times a failed request is tried again (default
	// 3; negative for none). Connection failures, timeouts, HTTP 429 and
	// 5xx are retried; other 4xx answers and query errors are not.
	Retries int
	// RetryWait is the wait before the first retry (default 500ms). Each
	// further wait doubles, up to 30s, and is jittered to between half and
	// all of that; a server's Retry-After is honoured up to 5 minutes.
	RetryWait time.Duration
	// BatchSize is how many points one write request carries (default 5000).
	BatchSize int
}

// withDefaults returns o with zero fields set to their defaults.
func (o Options) withDefaults() Options {
	if o.Timeout == 0 {
		o.Timeout = DefaultTimeout
	}
	switch {
	case o.Retries == 0:
		o.Retries = DefaultRetries
	case o.Retries < 0:
		o.Retries = 0
	}
	if o.RetryWait == 0 {
		o.RetryWait = DefaultRetryWait
	}
	if o.BatchSize == 0 {
		o.BatchSize = DefaultBatchSize
	}
	return o
}

// OptionsError lists every problem found in Options.
type OptionsError struct {
	Problems []string // each "option: what is wrong; what to do"
}

func (e *OptionsError) Error() string {
	return "influx options: " + strings.Join(e.Problems, "; ")
}

// validate checks o and returns an *OptionsError naming every bad option,
// and the parsed URL.
func (o Options) validate() (*url.URL, error) {
	var problems []string
	add := func(format string, args ...any) { problems = append(problems, fmt.Sprintf(format, args...)) }

	u, err := url.Parse(o.URL)
	switch {
	case strings.TrimSpace(o.URL) == "":
		add("url is empty; set it to the server address, e.g. http://localhost:8086")
	case err != nil:
		// url.Parse errors quote the input, which may hold credentials.
		add("url %q does not parse; write it as http://host:8086", redactURLString(o.URL))
	case u.User != nil:
		add("url %q carries credentials; remove them from the url and set the token instead (user:password on InfluxDB 1.x)", redactURL(u))
	case u.Scheme != "http" && u.Scheme != "https":
		add("url %q has scheme %q; use http:// or https://, e.g. http://localhost:8086", redactURL(u), u.Scheme)
	case u.Host == "":
		add("url %q has no host; write it as http://host:8086", redactURL(u))
	case u.RawQuery != "" || u.Fragment != "":
		add("url %q has a query or fragment; give only scheme, host, port and an optional path", redactURL(u))
	}
	if strings.TrimSpace(o.Bucket) == "" {
		add(`bucket is empty; set it to the bucket (InfluxDB 2.x) or "database/retention policy" (1.x, e.g. "telegraf/autogen")`)
	}
	if o.Timeout < 0 {
		add("timeout %s is negative; use a positive duration such as 30s (0 means the default)", o.Timeout)
	}
	if o.RetryWait < 0 {
		add("retry wait %s is negative; use a positive duration such as 500ms (0 means the default)", o.RetryWait)
	}
	if o.BatchSize < 0 {
		add("batch size %d is negative; use a positive number of points such as 5000 (0 means the default)", o.BatchSize)
	}
	if len(problems) > 0 {
		return nil, &OptionsError{Problems: problems}
	}
	return u, nil
}

const redacted = "[redacted]"

// redactedToken is how the token is shown: empty stays empty so that "no
// token" remains visible, anything else is hidden.
func (o Options) redactedToken() string {
	if o.Token == "" {
		return ""
	}
	return redacted
}

// String prints the options with the token hidden.
func (o Options) String() string {
	return fmt.Sprintf("influx.Options{URL: %q, Org: %q, Bucket: %q, Token: %q, Timeout: %s, Retries: %d, RetryWait: %s, BatchSize: %d}",
		redactURLString(o.URL), o.Org, o.Bucket, o.redactedToken(), o.Timeout, o.Retries, o.RetryWait, o.BatchSize)
}

// GoString is String, so that %#v hides the token too.
func (o Options) GoString() string { return o.String() }

// LogValue hides the token from log/slog.
func (o Options) LogValue() slog.Value {
	return slog.GroupValue(
		slog.String("url", redactURLString(o.URL)),
		slog.String("org", o.Org),
		slog.String("bucket", o.Bucket),
		slog.String("token", o.redactedToken()),
		slog.Duration("timeout", o.Timeout),
		slog.Int("retries", o.Retries),
		slog.Duration("retry_wait", o.RetryWait),
		slog.Int("batch_size", o.BatchSize),
	)
}

// MarshalJSON hides the token from JSON encoders, zerolog's Interface
// among them.
func (o Options) MarshalJSON() ([]byte, error) {
	return json.Marshal(struct {
		URL       string `json:"url"`
		Org       string `json:"org,omitempty"`
		Bucket    string `json:"bucket"`
		Token     string `json:"token,omitempty"`
		Timeout   string `json:"timeout"`
		Retries   int    `json:"retries"`
		RetryWait string `json:"retry_wait"`
		BatchSize int    `json:"batch_size"`
	}{redactURLString(o.URL), o.Org, o.Bucket, o.redactedToken(), o.Timeout.String(), o.Retries, o.RetryWait.String(), o.BatchSize})
}

// redactURLString shows a URL without its password and query.
func redactURLString(s string) string {
	u, err := url.Parse(s)
	if err != nil {
		if i := strings.LastIndex(s, "@"); i >= 0 {
			return redacted + "@" + s[i+1:]
		}
		return s
	}
	return redactURL(u)
}

func redactURL(u *url.URL) string {
	c := *u
	if c.User != nil {
		c.User = url.User("redacted")
	}
	c.RawQuery = ""
	c.Fragment = ""
	return c.String()
}
