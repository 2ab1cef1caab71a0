package influx

import (
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"net"
	"net/http"
	"strings"
	"sync/atomic"
	"syscall"
	"time"

	ihttp "github.com/influxdata/influxdb-client-go/v2/api/http"
)

// errAttemptTimeout is the cause set on an attempt's context when its
// timeout fires, which tells a timeout apart from the caller cancelling.
var errAttemptTimeout = errors.New("attempt timed out")

// attemptFunc makes one try of a request. Its ctx ends when the caller's
// context ends or when the attempt has been idle for Options.Timeout; kick
// marks progress (a query calls it for every row it reads), which restarts
// that timeout. It reports whether anything reached the caller: after that
// a retry would repeat data, so the request is not retried.
type attemptFunc func(ctx context.Context, kick func()) (delivered bool, err error)

// callerError carries an error returned by the caller's callback, which
// ends the request at once and comes back unchanged.
type callerError struct{ err error }

func (e callerError) Error() string { return e.err.Error() }

// do runs fn with retries: it retries connection failures, timeouts, 429
// and 5xx answers (except 1.x query errors reported as 500), waiting
// RetryWait·2^(n-1), capped and jittered, or the server's Retry-After,
// between attempts. It gives up at once when ctx ends.
func (c *Client) do(ctx context.Context, op, bucket string, fn attemptFunc) error {
	for attempt := 1; ; attempt++ {
		delivered, timedOut, err := c.attempt(ctx, fn)
		if err == nil {
			return nil
		}
		var ce callerError
		if errors.As(err, &ce) {
			return ce.err
		}
		if ctx.Err() != nil {
			return fmt.Errorf("influx %s %s: %w", op, c.url, context.Cause(ctx))
		}
		f := c.classify(err, timedOut)
		reqErr := &RequestError{
			Op: op, URL: c.url, Bucket: bucket, Attempts: attempt, Timeout: c.opt.Timeout,
			StatusCode: f.status, Message: c.scrub(f.msg), Kind: f.kind, err: c.scrubError(err),
		}
		if !f.retry || attempt > c.opt.Retries {
			return reqErr
		}
		if delivered {
			return fmt.Errorf("%w (not retried: part of the result had already been read)", reqErr)
		}
		wait := c.backoff(attempt, f.retryAfter)
		t := time.NewTimer(wait)
		select {
		case <-t.C:
		case <-ctx.Done():
			t.Stop()
			return fmt.Errorf("%w (gave up waiting to retry: %w)", reqErr, context.Cause(ctx))
		}
	}
}

// attempt runs fn once under an idle timeout.
func (c *Client) attempt(ctx context.Context, fn attemptFunc) (delivered, timedOut bool, err error) {
	actx, cancel := context.WithCancelCause(ctx)
	defer cancel(nil)
	w := newWatchdog(c.opt.Timeout, func() { cancel(errAttemptTimeout) })
	defer w.stop()
	delivered, err = fn(actx, w.kick)
	return delivered, errors.Is(context.Cause(actx), errAttemptTimeout), err
}

// watchdog calls expire once no kick has come for d. A kick is one atomic
// store, so queries can kick for every row.
type watchdog struct {
	d      time.Duration
	start  time.Time
	last   atomic.Int64 // time since start of the latest kick
	t      *time.Timer
	expire func()
}

func newWatchdog(d time.Duration, expire func()) *watchdog {
	w := &watchdog{d: d, start: time.Now(), expire: expire}
	// Created idle and armed after the assignment, so fire never sees w.t
	// unset.
	w.t = time.AfterFunc(time.Hour, w.fire)
	w.t.Reset(d)
	return w
}

func (w *watchdog) kick() { w.last.Store(int64(time.Since(w.start))) }

func (w *watchdog) fire() {
	idle := time.Since(w.start) - time.Duration(w.last.Load())
	if idle < w.d {
		w.t.Reset(w.d - idle)
		return
	}
	w.expire()
}

func (w *watchdog) stop() { w.t.Stop() }

// failure is what a failed attempt means for the retry loop.
type failure struct {
	kind       error
	retry      bool
	status     int
	msg        string
	retryAfter time.Duration
}

func (c *Client) classify(err error, timedOut bool) failure {
	if timedOut {
		return failure{kind: ErrTimeout, retry: true, msg: ""}
	}
	var he *ihttp.Error
	if errors.As(err, &he) {
		if he.StatusCode == 0 {
			inner := he.Err
			if inner == nil {
				inner = he
			}
			return transportFailure(inner)
		}
		msg := he.Message
		if he.Code != "" && he.Code != http.StatusText(he.StatusCode) && he.Code != fmt.Sprintf("%d %s", he.StatusCode, http.StatusText(he.StatusCode)) {
			msg = he.Code + ": " + msg
		}
		f := failure{status: he.StatusCode, msg: msg, retryAfter: time.Duration(he.RetryAfter) * time.Second}
		switch {
		case missingBucket.MatchString(he.Message):
			f.kind = ErrNoSuchBucket
		case he.StatusCode == http.StatusUnauthorized, he.StatusCode == http.StatusForbidden && !fluxDisabled(he.Message):
			f.kind = ErrUnauthorized
		case he.StatusCode == http.StatusTooManyRequests:
			f.kind, f.retry = ErrServer, true
		case he.StatusCode >= 500 && permanentQueryError.MatchString(he.Message):
			f.kind = ErrRejected
		case he.StatusCode >= 500:
			f.kind, f.retry = ErrServer, true
		default:
			f.kind = ErrRejected
		}
		return f
	}
	// Not an HTTP answer: a broken connection while a result streamed in,
	// or an error the query reported inside its result.
	if isTransport(err) {
		return transportFailure(err)
	}
	if missingBucket.MatchString(err.Error()) {
		return failure{kind: ErrNoSuchBucket, msg: err.Error()}
	}
	return failure{kind: ErrRejected, msg: err.Error()}
}

// fluxDisabled recognises InfluxDB 1.x's 403 "Flux query service
// disabled", which is a server setting, not a bad token.
func fluxDisabled(msg string) bool {
	m := strings.ToLower(msg)
	return strings.Contains(m, "flux") && strings.Contains(m, "disabled")
}

// transportFailure classifies an error below HTTP: refused, unknown host,
// reset, cut off. Certificate errors will not mend by retrying.
func transportFailure(err error) failure {
	f := failure{kind: ErrUnreachable, retry: true, msg: err.Error()}
	var cv *tls.CertificateVerificationError
	if errors.As(err, &cv) {
		f.retry = false
	}
	return f
}

func isTransport(err error) bool {
	var ne net.Error
	return errors.As(err, &ne) || errors.Is(err, io.ErrUnexpectedEOF) ||
		errors.Is(err, syscall.ECONNRESET) || errors.Is(err, syscall.ECONNREFUSED)
}

// backoff returns the wait before attempt+1: RetryWait·2^(attempt-1),
// capped at maxRetryWait, jittered to between half and all of it so that
// several agents do not retry in step; a longer Retry-After wins, up to
// maxRetryAfter.
func (c *Client) backoff(attempt int, retryAfter time.Duration) time.Duration {
	d := c.opt.RetryWait
	for i := 1; i < attempt && d < maxRetryWait; i++ {
		d *= 2
	}
	d = min(d, maxRetryWait)
	d = d/2 + rand.N(d/2+1)
	if retryAfter > d {
		d = min(retryAfter, maxRetryAfter)
	}
	return d
}
