package telemetry

import (
	"net/http"
	"runtime"
	"sort"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
)

// Telemetry is the agent's account of itself: Prometheus metrics on a
// registry of its own (never the global one) and the state behind /readyz.
// The run loop, the webhook sender and the store wiring report into it; the
// HTTP server reads it. All methods are safe for concurrent use and do
// nothing on a nil *Telemetry, so a component may run without one.
//
// Metrics (labels in braces; ahu is an air handler id from the
// configuration, so the label's values are bounded by it):
//
//	name                                        type       what
//	dewline_runs_total                          counter    runs started
//	dewline_run_failures_total                  counter    runs that ended with an error as a whole
//	dewline_runs_skipped_total                  counter    runs not started because the previous one still ran
//	dewline_run_duration_seconds                histogram  duration of finished runs, failed ones included
//	dewline_run_in_progress                     gauge      1 while a run is going on
//	dewline_last_run_success_timestamp_seconds  gauge      Unix time the last successful run finished
//	dewline_hours_computed_total{ahu}           counter    hourly records computed
//	dewline_ahu_failures_total{ahu}             counter    errors and recovered panics of one air handler in a run
//	dewline_points_read_total                   counter    trend samples read from the store
//	dewline_store_write_seconds                 histogram  duration of result writes, failed ones included
//	dewline_store_write_failures_total          counter    result writes that failed
//	dewline_lag_hours{ahu}                      gauge      hours between the last complete hour and the checkpoint
//	dewline_alerts_open                         gauge      alerts open over all air handlers
//	dewline_webhook_deliveries_total            counter    alert events the receiver accepted (2xx)
//	dewline_webhook_failures_total              counter    failed delivery attempts (each retry counts)
//	dewline_webhook_dropped_total               counter    events given up: refused for good (4xx) or older than max_age
//	dewline_store_up                            gauge      1 when the store answered its last check, else 0
//	dewline_ahu_problem{ahu}                    gauge      1 while an air handler is skipped for a configuration problem
//	dewline_build_info{version,revision,goversion}  gauge  always 1
//
// The registry also carries the standard go_* and process_* collectors.
type Telemetry struct {
	reg *prometheus.Registry

	runs          prometheus.Counter
	runFailures   prometheus.Counter
	runsSkipped   prometheus.Counter
	runDuration   prometheus.Histogram
	runInProgress prometheus.Gauge
	lastSuccess   prometheus.Gauge
	hours         *prometheus.CounterVec
	ahuFailures   *prometheus.CounterVec
	pointsRead    prometheus.Counter
	writeSeconds  prometheus.Histogram
	writeFailures prometheus.Counter
	lag           *prometheus.GaugeVec
	alertsOpen    prometheus.Gauge
	whDelivered   prometheus.Counter
	whFailed      prometheus.Counter
	whDropped     prometheus.Counter
	storeUp       prometheus.Gauge
	ahuProblem    *prometheus.GaugeVec

	handler http.Handler

	mu          sync.Mutex
	storeKnown  bool   // SetStoreUp has been called
	storeOK     bool   // the last store check succeeded
	storeReason string // why the store is down
	running     int    // runs started and not finished
	runErr      string // error of the last finished run, empty when it succeeded
	problems    map[string]string
	idle        string // why the agent runs nothing (SetIdle), empty while it runs
}

// Buckets of the duration histograms, in seconds. A run reads and computes
// hours for every air handler and is limited by schedule.timeout (45 min by
// default); a write is one request to the store.
var (
	runBuckets   = []float64{0.5, 1, 2.5, 5, 10, 30, 60, 120, 300, 600, 1200, 2700}
	writeBuckets = []float64{0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30}
)

// New returns telemetry with every metric registered on its own
// registry. The store counts as not yet checked (and the agent as not
// ready) until SetStoreUp is called.
func New() *Telemetry {
	t := &Telemetry{reg: prometheus.NewRegistry(), problems: map[string]string{}}
	counter := func(name, help string) prometheus.Counter {
		c := prometheus.NewCounter(prometheus.CounterOpts{Name: name, Help: help})
		t.reg.MustRegister(c)
		return c
	}
	gauge := func(name, help string) prometheus.Gauge {
		g := prometheus.NewGauge(prometheus.GaugeOpts{Name: name, Help: help})
		t.reg.MustRegister(g)
		return g
	}
	histogram := func(name, help string, buckets []float64) prometheus.Histogram {
		h := prometheus.NewHistogram(prometheus.HistogramOpts{Name: name, Help: help, Buckets: buckets})
		t.reg.MustRegister(h)
		return h
	}
	t.runs = counter("dewline_runs_total", "Runs started.")
	t.runFailures = counter("dewline_run_failures_total", "Runs that ended with an error as a whole.")
	t.runsSkipped = counter("dewline_runs_skipped_total", "Runs not started because the previous run was still going on.")
	t.runDuration = histogram("dewline_run_duration_seconds", "Duration of finished runs, failed ones included.", runBuckets)
	t.runInProgress = gauge("dewline_run_in_progress", "1 while a run is going on.")
	t.lastSuccess = gauge("dewline_last_run_success_timestamp_seconds", "Unix time the last successful run finished.")
	t.hours = prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "dewline_hours_computed_total", Help: "Hourly records computed, by air handler.",
	}, []string{"ahu"})
	t.ahuFailures = prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "dewline_ahu_failures_total", Help: "Errors and recovered panics of an air handler in a run.",
	}, []string{"ahu"})
	t.reg.MustRegister(t.hours, t.ahuFailures)
	t.pointsRead = counter("dewline_points_read_total", "Trend samples read from the store.")
	t.writeSeconds = histogram("dewline_store_write_seconds", "Duration of result writes to the store, failed ones included.", writeBuckets)
	t.writeFailures = counter("dewline_store_write_failures_total", "Result writes to the store that failed.")
	t.lag = prometheus.NewGaugeVec(prometheus.GaugeOpts{
		Name: "dewline_lag_hours", Help: "Hours between the last complete hour and the air handler's checkpoint.",
	}, []string{"ahu"})
	t.reg.MustRegister(t.lag)
	t.alertsOpen = gauge("dewline_alerts_open", "Alerts open over all air handlers.")
	t.whDelivered = counter("dewline_webhook_deliveries_total", "Alert events the webhook receiver accepted.")
	t.whFailed = counter("dewline_webhook_failures_total", "Failed webhook delivery attempts; each retry counts.")
	t.whDropped = counter("dewline_webhook_dropped_total", "Alert events given up: refused for good by the receiver or older than max_age.")
	t.storeUp = gauge("dewline_store_up", "1 when the store answered its last check, else 0.")
	t.ahuProblem = prometheus.NewGaugeVec(prometheus.GaugeOpts{
		Name: "dewline_ahu_problem", Help: "1 while an air handler is skipped for a configuration problem.",
	}, []string{"ahu"})
	t.reg.MustRegister(t.ahuProblem)

	version, revision := buildVersion()
	build := prometheus.NewGauge(prometheus.GaugeOpts{
		Name:        "dewline_build_info",
		Help:        "Build of the running dewline binary; always 1.",
		ConstLabels: prometheus.Labels{"version": version, "revision": revision, "goversion": runtime.Version()},
	})
	build.Set(1)
	t.reg.MustRegister(build,
		collectors.NewGoCollector(),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))

	t.handler = promhttp.HandlerFor(t.reg, promhttp.HandlerOpts{Registry: t.reg})
	return t
}

// Registry returns the registry the metrics live on, for a caller that
// wants to add its own collectors.
func (t *Telemetry) Registry() *prometheus.Registry {
	if t == nil {
		return nil
	}
	return t.reg
}

// RunStarted counts a run that started.
func (t *Telemetry) RunStarted() {
	if t == nil {
		return
	}
	t.runs.Inc()
	t.mu.Lock()
	t.running++
	t.runInProgress.Set(1)
	t.mu.Unlock()
}

// RunFinished records a run's duration and outcome. A run that returns an
// error as a whole (not one air handler's) makes the agent unready until a
// later run succeeds.
func (t *Telemetry) RunFinished(d time.Duration, err error) {
	if t == nil {
		return
	}
	t.runDuration.Observe(d.Seconds())
	if err != nil {
		t.runFailures.Inc()
	} else {
		t.lastSuccess.SetToCurrentTime()
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	if t.running > 0 {
		t.running--
	}
	if t.running == 0 {
		t.runInProgress.Set(0)
	}
	t.runErr = ""
	if err != nil {
		t.runErr = err.Error()
	}
}

// RunSkipped counts a run that could not start because the previous one was
// still going on.
func (t *Telemetry) RunSkipped() {
	if t == nil {
		return
	}
	t.runsSkipped.Inc()
}

// HoursComputed adds n hourly records computed for ahu. Negative n is
// ignored.
func (t *Telemetry) HoursComputed(ahu string, n int) {
	if t == nil || n < 0 {
		return
	}
	t.hours.WithLabelValues(ahu).Add(float64(n))
}

// AHUFailed counts an error or recovered panic of one air handler in a run;
// the other air handlers carry on.
func (t *Telemetry) AHUFailed(ahu string) {
	if t == nil {
		return
	}
	t.ahuFailures.WithLabelValues(ahu).Inc()
}

// PointsRead adds n trend samples read. Negative n is ignored.
func (t *Telemetry) PointsRead(n int) {
	if t == nil || n < 0 {
		return
	}
	t.pointsRead.Add(float64(n))
}

// ObserveWrite records one result write to the store: its duration, and a
// failure when err is not nil.
func (t *Telemetry) ObserveWrite(d time.Duration, err error) {
	if t == nil {
		return
	}
	t.writeSeconds.Observe(d.Seconds())
	if err != nil {
		t.writeFailures.Inc()
	}
}

// SetLag sets the hours between the last complete hour and ahu's checkpoint.
func (t *Telemetry) SetLag(ahu string, hours float64) {
	if t == nil {
		return
	}
	t.lag.WithLabelValues(ahu).Set(hours)
}

// SetAlertsOpen sets the number of alerts open over all air handlers.
func (t *Telemetry) SetAlertsOpen(n int) {
	if t == nil {
		return
	}
	t.alertsOpen.Set(float64(n))
}

// WebhookDelivered counts an alert event the receiver accepted.
func (t *Telemetry) WebhookDelivered() {
	if t == nil {
		return
	}
	t.whDelivered.Inc()
}

// WebhookFailed counts one failed delivery attempt.
func (t *Telemetry) WebhookFailed() {
	if t == nil {
		return
	}
	t.whFailed.Inc()
}

// WebhookDropped counts an alert event given up on.
func (t *Telemetry) WebhookDropped() {
	if t == nil {
		return
	}
	t.whDropped.Inc()
}

// SetStoreUp records the outcome of the latest store check; reason says
// why it is down and is shown by /readyz, so it must hold no secret.
func (t *Telemetry) SetStoreUp(ok bool, reason string) {
	if t == nil {
		return
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	t.storeKnown, t.storeOK, t.storeReason = true, ok, ""
	if ok {
		t.storeUp.Set(1)
		return
	}
	t.storeReason = reason
	t.storeUp.Set(0)
}

// SetConfigProblem marks ahu as skipped for a configuration problem: it is
// listed by /readyz and in dewline_ahu_problem, without making the agent
// unready. reason is shown by /readyz and must hold no secret.
func (t *Telemetry) SetConfigProblem(ahu, reason string) {
	if t == nil {
		return
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	t.problems[ahu] = reason
	t.ahuProblem.WithLabelValues(ahu).Set(1)
}

// ClearConfigProblem removes ahu's configuration problem.
func (t *Telemetry) ClearConfigProblem(ahu string) {
	if t == nil {
		return
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	if _, ok := t.problems[ahu]; !ok {
		return
	}
	delete(t.problems, ahu)
	t.ahuProblem.WithLabelValues(ahu).Set(0)
}

// SetIdle marks an agent that runs nothing by design (a shard that owns no
// air handler): it is ready whatever the store and runs say, since it
// needs neither, and /readyz shows note, which must hold no secret.
func (t *Telemetry) SetIdle(note string) {
	if t == nil {
		return
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	t.idle = note
}

// Readiness states shown by /readyz.
const (
	ReadinessReady    = "ready"    // store up, last run fine, every air handler configured
	ReadinessDegraded = "degraded" // ready, but some air handlers are skipped (see AHUs)
	ReadinessUnready  = "unready"  // the store is down or unchecked, or the last run failed
)

// Readiness is the agent's readiness in detail, as /readyz returns it.
type Readiness struct {
	Status  string         `json:"status"` // ReadinessReady, ReadinessDegraded or ReadinessUnready
	Reasons []string       `json:"reasons"`
	Note    string         `json:"note,omitempty"` // why a ready agent runs nothing (SetIdle)
	Store   ReadinessStore `json:"store"`
	LastRun ReadinessRun   `json:"last_run"`
	AHUs    []ReadinessAHU `json:"degraded_ahus"` // by id
}

// ReadinessStore is the latest store check.
type ReadinessStore struct {
	Checked bool   `json:"checked"`
	Up      bool   `json:"up"`
	Reason  string `json:"reason,omitempty"`
}

// ReadinessRun is the outcome of the last finished run.
type ReadinessRun struct {
	Running bool   `json:"running"`
	Failed  bool   `json:"failed"`
	Error   string `json:"error,omitempty"`
}

// ReadinessAHU is an air handler skipped for a configuration problem.
type ReadinessAHU struct {
	AHU    string `json:"ahu"`
	Reason string `json:"reason"`
}

// Readiness returns the agent's readiness. The agent is ready when the
// store has been checked and is up and the last finished run (if any) did
// not fail as a whole. Air handlers with a configuration problem are listed
// and make the status "degraded", but the agent stays ready: the others are
// still analysed, and restarting the agent would not fix a configuration.
// An idle agent (SetIdle) is ready with its note: restarting it would not
// give it work.
func (t *Telemetry) Readiness() Readiness {
	if t == nil {
		return Readiness{Status: ReadinessUnready, Reasons: []string{"no telemetry"}, AHUs: []ReadinessAHU{}}
	}
	t.mu.Lock()
	defer t.mu.Unlock()
	r := Readiness{
		Reasons: []string{},
		Store:   ReadinessStore{Checked: t.storeKnown, Up: t.storeOK, Reason: t.storeReason},
		LastRun: ReadinessRun{Running: t.running > 0, Failed: t.runErr != "", Error: t.runErr},
		AHUs:    make([]ReadinessAHU, 0, len(t.problems)),
	}
	if t.idle != "" {
		r.Status, r.Note = ReadinessReady, t.idle
		return r
	}
	ready := true
	switch {
	case !t.storeKnown:
		ready = false
		r.Reasons = append(r.Reasons, "store not checked yet")
	case !t.storeOK:
		ready = false
		r.Reasons = append(r.Reasons, "store down: "+t.storeReason)
	}
	if t.runErr != "" {
		ready = false
		r.Reasons = append(r.Reasons, "last run failed: "+t.runErr)
	}
	for ahu, why := range t.problems {
		r.AHUs = append(r.AHUs, ReadinessAHU{AHU: ahu, Reason: why})
	}
	sort.Slice(r.AHUs, func(i, j int) bool { return r.AHUs[i].AHU < r.AHUs[j].AHU })
	for _, p := range r.AHUs {
		r.Reasons = append(r.Reasons, "air handler "+p.AHU+" skipped: "+p.Reason)
	}
	switch {
	case !ready:
		r.Status = ReadinessUnready
	case len(r.AHUs) > 0:
		r.Status = ReadinessDegraded
	default:
		r.Status = ReadinessReady
	}
	return r
}

// Ready reports whether the agent is ready (see Readiness) and every reason
// it is not, or is degraded; the reasons list skipped air handlers even
// when ok is true.
func (t *Telemetry) Ready() (ok bool, reasons []string) {
	r := t.Readiness()
	return r.Status != ReadinessUnready, r.Reasons
}

// Handler serves the metrics in the Prometheus exposition format.
func (t *Telemetry) Handler() http.Handler {
	if t == nil {
		return http.NotFoundHandler()
	}
	return t.handler
}
