package influx

import (
	"errors"
	"fmt"
	"regexp"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Sentinel errors, matched with errors.Is. Request failures come as a
// *RequestError whose Kind is one of the first six; each of those has a
// Timeout method, as net.Error has, true for ErrTimeout only, and it is the
// first one errors.As finds in a RequestError: the agent takes a read
// that timed out as an outage and stops its run's reads.
var (
	// ErrTimeout: the server did not answer, or stopped sending a result,
	// within Options.Timeout on every attempt.
	ErrTimeout error = &requestKind{"request timed out", true}
	// ErrUnreachable: no connection to the server (refused, unknown host,
	// reset) on every attempt.
	ErrUnreachable error = &requestKind{"server unreachable", false}
	// ErrServer: the server kept answering 429 or 5xx.
	ErrServer error = &requestKind{"server error", false}
	// ErrRejected: the server refused the request (4xx other than those
	// below) or reported an error in the query; it is not retried.
	ErrRejected error = &requestKind{"request rejected", false}
	// ErrUnauthorized: HTTP 401 or 403; the token is missing or wrong.
	ErrUnauthorized error = &requestKind{"not authorized", false}
	// ErrNoSuchBucket: the bucket (2.x) or database or retention policy
	// (1.x) does not exist.
	ErrNoSuchBucket error = &requestKind{"no such bucket", false}

	// ErrNoSuchPoint: no series in the bucket matches a point's
	// measurement, field and tags at any time (CheckPoint).
	ErrNoSuchPoint = errors.New("no such point")
	// ErrAmbiguousPoint: a point matches more than one series, because
	// its tags leave out one that tells them apart.
	ErrAmbiguousPoint = errors.New("point matches more than one series")
	// ErrInvalidPoint: a point reference or a point to write cannot be
	// used as given (bad unit, reserved or unrepresentable name, NaN).
	ErrInvalidPoint = errors.New("invalid point")
)

// RequestError describes a request that failed, after any retries. Its text
// and fields never contain the token. errors.Is matches Kind; errors.As
// reaches the client library's *http.Error (status, Retry-After) of the
// last attempt, with the message cleaned of secrets.
type RequestError struct {
	Op         string        // "query", "write", "ping", "health"
	URL        string        // server URL, without credentials
	Bucket     string        // bucket the request was for ("" for ping and health)
	Attempts   int           // attempts made
	Timeout    time.Duration // per-request timeout in force
	StatusCode int           // HTTP status of the last answer, 0 when none came
	Message    string        // the server's message or the transport error
	Kind       error         // ErrTimeout, ErrUnreachable, ErrServer, ErrRejected, ErrUnauthorized or ErrNoSuchBucket
	err        error         // last underlying error, cleaned of secrets
}

func (e *RequestError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "influx %s %s: ", e.Op, e.URL)
	switch e.Kind {
	case ErrTimeout:
		fmt.Fprintf(&b, "timed out after %s (timeout %s each)", metrics.Plural(e.Attempts, "attempt"), e.Timeout)
		if e.Message != "" {
			fmt.Fprintf(&b, ": %s", e.Message)
		}
	case ErrUnreachable:
		fmt.Fprintf(&b, "cannot reach the server after %s: %s; check that InfluxDB is running at %s and that the url option is right",
			metrics.Plural(e.Attempts, "attempt"), e.Message, e.URL)
	case ErrNoSuchBucket:
		create := "CREATE DATABASE " + database(e.Bucket)
		if db, rp, ok := strings.Cut(e.Bucket, "/"); ok && rp != "" && missingRP.MatchString(e.Message) {
			create = fmt.Sprintf("CREATE RETENTION POLICY %s ON %s DURATION INF REPLICATION 1", quoteQL(rp), quoteQL(db))
		}
		fmt.Fprintf(&b, "bucket %q does not exist (server said: %s); create it (InfluxDB 1.x: %s) or fix the bucket option",
			e.Bucket, e.status(), create)
	case ErrUnauthorized:
		fmt.Fprintf(&b, "%s; check the token (InfluxDB 2.x: an API token with access to the bucket; 1.x: user:password)", e.status())
	case ErrServer:
		fmt.Fprintf(&b, "server error after %s: %s", metrics.Plural(e.Attempts, "attempt"), e.status())
	default:
		b.WriteString(e.status())
	}
	return b.String()
}

// requestKind is the Kind of a RequestError.
type requestKind struct {
	msg     string
	timeout bool
}

func (k *requestKind) Error() string { return k.msg }

// Timeout reports whether the request timed out (ErrTimeout), as
// net.Error's method does.
func (k *requestKind) Timeout() bool { return k.timeout }

// status is "503 Service Unavailable: message", or the message alone.
func (e *RequestError) status() string {
	if e.StatusCode == 0 {
		return e.Message
	}
	if e.Message == "" {
		return fmt.Sprintf("HTTP %d", e.StatusCode)
	}
	return fmt.Sprintf("HTTP %d: %s", e.StatusCode, e.Message)
}

// Unwrap lets errors.Is match the Kind and errors.As reach the last
// underlying error.
func (e *RequestError) Unwrap() []error {
	if e.err == nil {
		return []error{e.Kind}
	}
	return []error{e.Kind, e.err}
}

// database is the 1.x database part of a "db/rp" bucket, quoted for
// InfluxQL.
func database(bucket string) string {
	db, _, _ := strings.Cut(bucket, "/")
	return quoteQL(db)
}

// quoteQL quotes a 1.x database or retention policy name for InfluxQL.
func quoteQL(name string) string { return `"` + strings.ReplaceAll(name, `"`, `\"`) + `"` }

// missingBucket matches what servers say about a bucket, database or
// retention policy that does not exist: InfluxDB 1.8 answers a Flux query
// with 500 "failed to initialize execute state: no database" (or "invalid
// retention policy", its only words for a policy the database lacks), an
// InfluxQL query with "database not found" or "retention policy not
// found" in the result, and a write with 404 "database not found" or 500
// "retention policy not found"; 2.x says `could not find bucket "x"` or
// `bucket "x" not found`.
var missingBucket = regexp.MustCompile(`(?i)no database|database not found|retention policy not found|invalid retention policy|could not find bucket|bucket .*not found`)

// missingRP matches the part of missingBucket that is about a 1.x
// retention policy, whose fix is not CREATE DATABASE.
var missingRP = regexp.MustCompile(`(?i)retention policy not found|invalid retention policy`)

// permanentQueryError matches the errors InfluxDB 1.8 reports with HTTP
// 500 although retrying cannot help: Flux syntax and type errors, which
// point at a location "loc 1:2-1:5" or say "type error". dewline builds its
// queries itself, so these are bugs to report, not load to wait out.
var permanentQueryError = regexp.MustCompile(`(?i)\bloc \d+:\d+|type error|undefined identifier|error calling function|compilation failed`)
