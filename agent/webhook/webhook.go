package webhook

import (
	"bytes"
	"context"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"net/http"
	"net/url"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/internal/wait"
	"github.com/dewline/dewline/agent/telemetry"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// Headers of a webhook delivery.
const (
	// EventHeader carries "<alert id>/<transition>", the same for
	// every attempt of one event: a receiver drops a repeat by it.
	EventHeader = "X-Dewline-Event"
	// SignatureHeader carries "sha256=<hex HMAC-SHA256 of the body>"
	// keyed with the webhook secret, when one is set.
	SignatureHeader = "X-Dewline-Signature"
)

// Defaults of WebhookOptions.
const (
	DefaultWebhookTimeout     = 10 * time.Second
	DefaultWebhookMaxAge      = 24 * time.Hour
	DefaultWebhookBackoff     = time.Second
	DefaultWebhookMaxAttempts = 5
	DefaultWebhookPoll        = 30 * time.Second
)

const (
	webhookBatch        = 100              // events fetched from the store at a time
	webhookMaxBackoff   = 5 * time.Minute  // the longest wait between two attempts from backoff alone
	webhookBodyLog      = 256              // bytes of a refusing receiver's answer that are logged
	webhookBodyDrain    = 64 << 10         // bytes of an answer read so the connection can be reused
	webhookFailLogEvery = 10 * time.Minute // error logs of a receiver that stays down
)

// Options configures the delivery of alert events.
type Options struct {
	URL string // http or https; it may hold a secret, so only its scheme and host are logged
	// Secret, when set, signs each body (WebhookSignatureHeader). It never
	// reaches logs or errors.
	Secret    string
	Timeout   time.Duration        // per request; default 10s
	MaxAge    time.Duration        // events older than this (Event.At against Clock) are dropped; default 24h
	Store     store.EventStore     // the queue; required
	Telemetry *telemetry.Telemetry // optional
	Log       zerolog.Logger
	Clock     func() time.Time // default time.Now
	Client    *http.Client     // optional; the default follows no redirect
	Backoff   time.Duration    // first wait between attempts, doubled after each; default 1s
	// MaxAttempts is the attempts at one event in one delivery pass; default 5.
	MaxAttempts int
	Poll        time.Duration // how often the store is looked at without a Kick; default 30s
}

// Sender delivers alert events from an EventStore to a webhook by
// HTTP POST. The store is the queue: events survive a restart, and MaxAge
// bounds how long one waits.
//
// Each pass delivers the pending events in Seq order, so a receiver sees an
// alert open before it closes:
//
//   - 2xx: delivered; the event is marked delivered.
//   - 5xx, 408, 429, other statuses and network errors: retried with
//     exponential backoff and jitter, waiting at least as long as a
//     Retry-After header asks, up to MaxAttempts; then the pass ends and the
//     event (and every later one) stays pending for the next pass. A
//     Retry-After longer than Poll ends the pass at once, and no attempt is
//     made before it has passed.
//   - other 4xx: refused for good. It is logged at error level, counted as
//     a failure and as dropped, and marked delivered so that it does not
//     block the queue.
//   - older than MaxAge: dropped the same way without an attempt, counted,
//     and logged in one line a pass.
//
// One process never posts the same event twice after a 2xx: when marking
// it delivered fails, only the mark is retried. Across a crash exactly
// between a 2xx and the mark, the event is posted again on restart; its
// WebhookEventHeader is the same, so the receiver can tell.
type Sender struct {
	opt      Options
	endpoint string // scheme://host, safe to log
	client   *http.Client
	log      zerolog.Logger
	kick     chan struct{}

	// Owned by the Run goroutine.
	posted     map[int64]bool // posted with a 2xx or dropped, not yet marked in the store
	highWater  int64          // highest Seq marked in the store by this process
	notBefore  time.Time      // no attempt before this (a long Retry-After)
	failLogged time.Time      // when a failed pass was last logged at error level

	// wait sleeps for d or until ctx ends; tests replace it.
	wait func(ctx context.Context, d time.Duration) error
}

// New checks the options, fills in defaults and returns a
// sender; Run delivers.
func New(opt Options) (*Sender, error) {
	u, err := url.Parse(opt.URL)
	var problems []string
	switch {
	case opt.URL == "":
		problems = append(problems, "webhook.url: empty; give the receiver's http or https address")
	case err != nil:
		// The parse error quotes the URL, which may hold a secret.
		problems = append(problems, "webhook.url: not a valid URL")
	case u.Scheme != "http" && u.Scheme != "https":
		problems = append(problems, fmt.Sprintf("webhook.url: scheme %q is not http or https", u.Scheme))
	case u.Host == "":
		problems = append(problems, "webhook.url: no host")
	}
	if opt.Store == nil {
		problems = append(problems, "webhook: no event store")
	}
	for _, d := range []struct {
		name string
		v    time.Duration
	}{{"webhook.timeout", opt.Timeout}, {"webhook.max_age", opt.MaxAge}, {"webhook backoff", opt.Backoff}, {"webhook poll", opt.Poll}} {
		if d.v < 0 {
			problems = append(problems, fmt.Sprintf("%s: %s is negative", d.name, d.v))
		}
	}
	if opt.MaxAttempts < 0 {
		problems = append(problems, fmt.Sprintf("webhook attempts: %d is negative", opt.MaxAttempts))
	}
	if len(problems) > 0 {
		return nil, errors.New(strings.Join(problems, "; "))
	}
	if opt.Timeout == 0 {
		opt.Timeout = DefaultWebhookTimeout
	}
	if opt.MaxAge == 0 {
		opt.MaxAge = DefaultWebhookMaxAge
	}
	if opt.Backoff == 0 {
		opt.Backoff = DefaultWebhookBackoff
	}
	if opt.MaxAttempts == 0 {
		opt.MaxAttempts = DefaultWebhookMaxAttempts
	}
	if opt.Poll == 0 {
		opt.Poll = DefaultWebhookPoll
	}
	if opt.Clock == nil {
		opt.Clock = time.Now
	}
	client := opt.Client
	if client == nil {
		// A redirect would turn the POST into a GET and lose the body, so
		// it is not followed: the 3xx counts as a failed attempt.
		client = &http.Client{CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	}
	endpoint := u.Scheme + "://" + u.Host
	return &Sender{
		opt:      opt,
		endpoint: endpoint,
		client:   client,
		log:      opt.Log.With().Str("component", "webhook").Str("endpoint", endpoint).Logger(),
		kick:     make(chan struct{}, 1),
		posted:   map[int64]bool{},
		wait:     wait.Sleep,
	}, nil
}

// Kick wakes Run to look at the store now; the run loop calls it after
// committing alerts. It never blocks.
func (w *Sender) Kick() {
	select {
	case w.kick <- struct{}{}:
	default:
	}
}

// Run delivers pending events, then waits for a Kick or Poll, until ctx
// ends; it returns nil then. Store and delivery errors are logged and
// retried, never returned. Call Run from one goroutine only.
func (w *Sender) Run(ctx context.Context) error {
	timer := time.NewTimer(0)
	defer timer.Stop()
	for {
		select {
		case <-ctx.Done():
			return nil
		case <-w.kick:
		case <-timer.C:
		}
		w.pass(ctx)
		timer.Reset(w.opt.Poll)
	}
}

// outcome of one event in a pass.
type outcome int

const (
	outDelivered outcome = iota // accepted by the receiver
	outDropped                  // given up: refused for good or too old
	outPending                  // still to deliver, in a later pass
)

// pass delivers what is pending, in Seq order, until the store has no more
// or an event must wait for a later pass.
func (w *Sender) pass(ctx context.Context) {
	if w.opt.Clock().Before(w.notBefore) {
		return
	}
	// Events too old to post are dropped with one line a pass, not one each.
	var stale int
	var oldest time.Duration
	defer func() {
		if stale > 0 {
			w.log.Warn().Int("events", stale).Str("oldest_age", oldest.Round(time.Second).String()).Str("max_age", w.opt.MaxAge.String()).
				Msg("webhook events older than webhook.max_age dropped without posting")
		}
	}()
	for ctx.Err() == nil {
		evs, err := w.opt.Store.PendingEvents(ctx, webhookBatch)
		if err != nil {
			if ctx.Err() == nil {
				w.log.Error().Err(err).Msg("read pending events")
			}
			return
		}
		sort.Slice(evs, func(i, j int) bool { return evs[i].Seq < evs[j].Seq })
		progress := false
		for _, ev := range evs {
			if ctx.Err() != nil {
				return
			}
			if !w.posted[ev.Seq] && ev.Seq > w.highWater {
				if age := w.opt.Clock().Sub(ev.At); age > w.opt.MaxAge {
					w.opt.Telemetry.WebhookDropped()
					w.log.Debug().Int64("seq", ev.Seq).Str("alert_id", ev.AlertID).Str("age", age.String()).Msg("webhook event too old, dropped")
					stale++
					oldest = max(oldest, age)
				} else if w.deliver(ctx, ev) == outPending {
					return
				}
				w.posted[ev.Seq] = true
			}
			// Posted (or dropped) already, maybe in an earlier pass whose
			// mark failed, or marked already by this process and returned
			// again by the store: only mark it.
			if err := w.opt.Store.MarkDelivered(ctx, ev.Seq, w.opt.Clock()); err != nil {
				if ctx.Err() == nil {
					w.log.Error().Err(err).Int64("seq", ev.Seq).Msg("mark event delivered")
				}
				return
			}
			delete(w.posted, ev.Seq)
			w.highWater = max(w.highWater, ev.Seq)
			progress = true
		}
		if len(evs) < webhookBatch || !progress {
			return
		}
	}
}

// deliver tries to post one event, retrying as WebhookSender says.
func (w *Sender) deliver(ctx context.Context, ev store.Event) outcome {
	lg := w.log.With().Int64("seq", ev.Seq).Str("alert_id", ev.AlertID).Str("transition", ev.Transition).Logger()
	if !json.Valid(ev.Payload) {
		w.opt.Telemetry.WebhookDropped()
		lg.Error().Msg("webhook event payload is not JSON, dropped")
		return outDropped
	}
	var (
		last       error
		retryAfter time.Duration
	)
	for attempt := 1; attempt <= w.opt.MaxAttempts; attempt++ {
		var (
			status int
			body   string
			err    error
		)
		status, retryAfter, body, err = w.post(ctx, ev)
		if ctx.Err() != nil {
			return outPending // shutting down: not the receiver's fault
		}
		switch {
		case err == nil && status >= 200 && status < 300:
			w.opt.Telemetry.WebhookDelivered()
			lg.Debug().Int("status", status).Int("attempt", attempt).Msg("webhook event delivered")
			return outDelivered
		case err == nil && status >= 400 && status < 500 && status != http.StatusTooManyRequests && status != http.StatusRequestTimeout:
			w.opt.Telemetry.WebhookFailed()
			w.opt.Telemetry.WebhookDropped()
			lg.Error().Int("status", status).Str("answer", body).Msg("webhook refused event, dropped")
			return outDropped
		}
		w.opt.Telemetry.WebhookFailed()
		if err != nil {
			last = err
		} else {
			last = fmt.Errorf("status %d", status)
		}
		lg.Debug().Err(last).Int("attempt", attempt).Msg("webhook attempt failed")
		if retryAfter > w.opt.Poll {
			w.notBefore = w.opt.Clock().Add(retryAfter)
			lg.Warn().Err(last).Dur("retry_after_ms", retryAfter).Msg("webhook receiver asked to wait, event stays pending")
			return outPending
		}
		if attempt == w.opt.MaxAttempts {
			break
		}
		if w.wait(ctx, max(w.backoff(attempt), retryAfter)) != nil {
			return outPending
		}
	}
	if retryAfter > 0 { // a Kick before then must not make an attempt
		w.notBefore = w.opt.Clock().Add(retryAfter)
	}
	// While the receiver stays down every pass fails the same way: log it
	// at error level once per webhookFailLogEvery, at debug in between.
	level := zerolog.DebugLevel
	if now := w.opt.Clock(); now.Sub(w.failLogged) >= webhookFailLogEvery {
		w.failLogged, level = now, zerolog.ErrorLevel
	}
	lg.WithLevel(level).Err(last).Int("attempts", w.opt.MaxAttempts).Msg("webhook delivery failed, event stays pending")
	return outPending
}

// post makes one attempt. It returns the status, the wait a Retry-After
// header asks for, the start of the answer (for a refusal) and a network
// error stripped of the URL.
func (w *Sender) post(ctx context.Context, ev store.Event) (status int, retryAfter time.Duration, body string, err error) {
	ctx, cancel := context.WithTimeout(ctx, w.opt.Timeout)
	defer cancel()
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, w.opt.URL, bytes.NewReader(ev.Payload))
	if err != nil {
		return 0, 0, "", errors.New("build webhook request") // the error would quote the URL
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "dewline")
	req.Header.Set(EventHeader, headerSafe(ev.AlertID+"/"+ev.Transition))
	if w.opt.Secret != "" {
		req.Header.Set(SignatureHeader, signature(w.opt.Secret, ev.Payload))
	}
	resp, err := w.client.Do(req)
	if err != nil {
		var ue *url.Error
		if errors.As(err, &ue) { // "Post \"<url>\": ..." would log the URL
			err = fmt.Errorf("post: %w", ue.Err)
		}
		return 0, 0, "", err
	}
	defer resp.Body.Close()
	head, _ := io.ReadAll(io.LimitReader(resp.Body, webhookBodyLog))
	_, _ = io.Copy(io.Discard, io.LimitReader(resp.Body, webhookBodyDrain))
	return resp.StatusCode, parseRetryAfter(resp.Header.Get("Retry-After"), w.opt.Clock()), strings.TrimSpace(string(head)), nil
}

// backoff returns the wait after the attempt-th failure: Backoff doubled
// per attempt, capped, with "equal jitter" (a random point in its upper
// half) so that many agents do not retry in step.
func (w *Sender) backoff(attempt int) time.Duration {
	d := w.opt.Backoff
	for i := 1; i < attempt && d < webhookMaxBackoff; i++ {
		d *= 2
	}
	d = min(d, webhookMaxBackoff)
	half := d / 2
	return half + rand.N(half+1)
}

// signature returns the signature header value of body: "sha256=" and the
// hex HMAC-SHA256 of body keyed with secret.
func signature(secret string, body []byte) string {
	m := hmac.New(sha256.New, []byte(secret))
	m.Write(body)
	return "sha256=" + hex.EncodeToString(m.Sum(nil))
}

// parseRetryAfter reads a Retry-After header: seconds or an HTTP date. It
// returns 0 when the header is absent or unreadable.
func parseRetryAfter(v string, now time.Time) time.Duration {
	v = strings.TrimSpace(v)
	if v == "" {
		return 0
	}
	if s, err := strconv.ParseInt(v, 10, 64); err == nil {
		if s <= 0 {
			return 0
		}
		return time.Duration(min(s, int64(math.MaxInt64/time.Second))) * time.Second
	}
	if t, err := http.ParseTime(v); err == nil && t.After(now) {
		return t.Sub(now)
	}
	return 0
}

// headerSafe drops characters a header value may not hold.
func headerSafe(s string) string {
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f {
			return -1
		}
		return r
	}, s)
}

// Event transitions.
const (
	TransitionOpen   = store.TransitionOpen
	TransitionClosed = store.TransitionClosed
	TransitionUpdate = store.TransitionUpdate
)

// alertBody is the JSON body of a webhook delivery.
type alertBody struct {
	ID           string  `json:"id"`
	AHU          string  `json:"ahu"`
	Kind         string  `json:"kind"`
	Label        string  `json:"label"`
	Severity     string  `json:"severity"`
	Transition   string  `json:"transition"`
	Start        string  `json:"start"`
	End          *string `json:"end"` // null while open
	At           string  `json:"at"`
	Hours        float64 `json:"hours"`
	EnergyKWh    float64 `json:"energy_kwh"`
	Money        float64 `json:"money"`
	Currency     string  `json:"currency"`
	Reason       string  `json:"reason"`
	OpenedReason string  `json:"opened_reason"`
	LatestReason string  `json:"latest_reason"`
}

// AlertPayload returns the webhook body of an alert that opened, closed or
// is still open (a while-open update, metrics.UpdatesDue):
//
//	{"id", "ahu", "kind", "label", "severity",
//	 "transition": "open"|"update"|"closed",
//	 "start", "end" (null while open), "at", "hours",
//	 "energy_kwh", "money", "currency",
//	 "reason", "opened_reason", "latest_reason"}
//
// with times in RFC 3339, UTC. "at" is the end of the hour the figures are
// as of; "hours", "energy_kwh" and "money" are the running totals from
// "start" to "end" (closed) or "at" (open, update), so an update carries
// them grown. "reason" is the alert's reason as every output tells it
// (metrics.Alert.Told). A transition to another status is an error.
func AlertPayload(t metrics.Transition, currency string) (json.RawMessage, error) {
	a := t.Alert
	b := alertBody{
		ID: a.ID, AHU: a.AHU, Kind: a.Kind, Label: metrics.AlertLabel(a.Kind), Severity: string(a.Severity),
		Start:     rfc3339(a.Start),
		At:        rfc3339(t.At),
		EnergyKWh: a.EnergyKWh, Money: a.Money, Currency: currency,
		Reason: a.Told(), OpenedReason: a.OpenReason, LatestReason: a.Reason,
	}
	until := t.At
	switch {
	case t.IsUpdate():
		b.Transition = TransitionUpdate
	case t.To == metrics.StatusOpen:
		b.Transition = TransitionOpen
	case t.To == metrics.StatusClosed:
		b.Transition = TransitionClosed
		end := a.End
		if end.IsZero() {
			end = t.At
		}
		s := rfc3339(end)
		b.End, until = &s, end
	default:
		return nil, fmt.Errorf("alert payload %s: transition to %q is not delivered", a.ID, t.To)
	}
	b.Hours = until.Sub(a.Start).Hours()
	for _, f := range []struct {
		name string
		v    float64
	}{{"energy_kwh", a.EnergyKWh}, {"money", a.Money}} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) {
			return nil, fmt.Errorf("alert payload %s: %s is %v", a.ID, f.name, f.v)
		}
	}
	out, err := json.Marshal(b)
	if err != nil {
		return nil, fmt.Errorf("alert payload %s: %w", a.ID, err)
	}
	return out, nil
}

func rfc3339(t time.Time) string { return t.UTC().Format(time.RFC3339) }
