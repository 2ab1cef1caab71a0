package store

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// Store is an opened store, the embedded file or InfluxDB, as every command
// uses it. Each part is one of the small interfaces below; a consumer takes
// the part it needs, never the backend's own type.
type Store interface {
	SeriesReader
	SampleWriter
	ResultWriter
	// Results is the dashboard's, the report's and the comparison's read
	// side; now is the clock for reads that need "today".
	Results(now func() time.Time) dashboards.Results
	// Agent returns what the agent keeps in this store: results, alert
	// states, checkpoints and the webhook's event queue. Close it after use.
	Agent(ctx context.Context) (AgentStore, error)
	// Ping reports whether the store answers.
	Ping(ctx context.Context) error
	// IsOutage tells an outage of the store (unreachable, timing out,
	// failing) from an error of one air handler, such as a point that
	// matches several series.
	IsOutage(err error) bool
	// Describe names where results are kept, for the report, without secrets.
	Describe() string
	Close() error
}

// SeriesReader reads trend points (samples in SI, in time order).
type SeriesReader interface {
	ingest.SeriesReader
	// IsMissing reports whether an error of ReadSeries means "this point
	// has no data in the store" rather than a failure of the store.
	IsMissing(err error) bool
}

// SampleWriter writes the samples (SI) of one configured trend series,
// named as in the exports ("dewline import"). Re-writing a sample replaces it.
type SampleWriter interface {
	WriteSamples(ctx context.Context, series string, t ingest.PointTarget, samples []ingest.Sample) error
}

// ResultWriter writes the results of an analysis ("dewline analyze"):
// re-writing an hour replaces it; alert transitions are kept as the agent
// keeps them (and queued for the webhook where the store holds the queue).
type ResultWriter interface {
	// PutResults writes hourly records and the alert transitions computed
	// from them together: a failure leaves no hour stored without its
	// alerts. Re-writing an hour replaces it; a transition already
	// recorded is not recorded again. open are the alerts still open
	// after the last record, with their running totals: the store keeps
	// their current figures (idempotent per alert and hour), so an open
	// alert's energy, money and duration grow with every hour it stays open.
	PutResults(ctx context.Context, recs []metrics.Record, tr []metrics.Transition, open []metrics.Alert) error
}

// BatchSampleWriter is what a store may also offer: the samples of several
// series written at once, all or nothing, which costs one transaction
// instead of one per series ("dewline import" hands over batches this way).
type BatchSampleWriter interface {
	WriteSampleBatch(ctx context.Context, batch []SeriesSamples) error
}

// SeriesSamples is one series' share of a batch: WriteSamples' arguments.
type SeriesSamples struct {
	Series  string
	Target  ingest.PointTarget
	Samples []ingest.Sample
}

// ImportLogger is what a store may also offer: a log of the files imported.
type ImportLogger interface {
	RecordImport(ctx context.Context, l ImportLog) error
}

// ImportLog is one imported file.
type ImportLog struct {
	File, SHA256                 string
	RowsRead, Accepted, Rejected int
	Started, Finished            time.Time
}

// ResultStore is where the agent keeps its results and its place: hourly
// records, alert states and events, and the checkpoint (the start of the
// last hour whose results are written) of every air handler.
type ResultStore interface {
	// Checkpoint returns the start of the last hour written for ahu.
	Checkpoint(ctx context.Context, ahu string) (hour time.Time, ok bool, err error)
	// Commit writes ahu's records, the alert states and the transitions
	// (as events to deliver) and then moves the checkpoint to through. The
	// checkpoint never moves unless the records are written; re-writing an
	// hour replaces it.
	Commit(ctx context.Context, ahu string, recs []metrics.Record, alerts AlertUpdate, through time.Time) error
	// AlertStates returns ahu's pending and open alerts, to continue from.
	AlertStates(ctx context.Context, ahu string) (map[string]metrics.Alert, error)
}

// StateLoader is an optional capability of a ResultStore: the checkpoints
// and alert states of many air handlers in one read, so that a run over a
// portfolio does not ask for them one air handler at a time. The agent
// finds it by type assertion and otherwise reads them one by one.
type StateLoader interface {
	// LoadStates returns the state of each of ahus that has one; an air
	// handler missing from the map has neither checkpoint nor alert states.
	LoadStates(ctx context.Context, ahus []string) (map[string]AHUState, error)
}

// AHUState is an air handler's place and alert rule states.
type AHUState struct {
	Checkpoint    time.Time // meaningful when HasCheckpoint
	HasCheckpoint bool
	Alerts        map[string]metrics.Alert // pending and open alerts, by kind
}

// BatchCommitter is an optional capability of a ResultStore: Commit for
// many air handlers in as few writes as the store allows. Every item's
// checkpoint is written after every item's results, so a failure part way
// never moves a checkpoint past an unwritten hour; items are otherwise as
// Commit takes them.
type BatchCommitter interface {
	CommitBatch(ctx context.Context, items []CommitItem) error
}

// CommitItem is one air handler's share of a CommitBatch: Commit's
// arguments.
type CommitItem struct {
	AHU     string
	Records []metrics.Record
	Alerts  AlertUpdate
	Through time.Time
}

// AlertUpdate is what a run changed in an air handler's alerts.
type AlertUpdate struct {
	States      map[string]metrics.Alert // pending and open alerts after the run, by kind
	Transitions []metrics.Transition     // opened and closed in the run, in order
	// QueueFrom: transitions before it are recorded (the alerts and their
	// history) but not queued for the webhook, being older than the
	// sender's webhook.max_age, which would only drop them. Zero queues
	// every transition.
	QueueFrom time.Time
	// Updates are the run's while-open updates (metrics.UpdatesDue): each
	// is queued for the webhook as an event of its own (EventName), unless
	// before QueueFrom. They change no alert: States carry the totals.
	Updates []metrics.Transition
}

// Event is an alert transition waiting to be delivered to the webhook.
type Event struct {
	Seq     int64 // the store's sequence number, increasing
	AlertID string
	// Transition is the event's name (EventName): "open", "closed" or
	// "update/<hour>".
	Transition string
	At         time.Time
	Payload    json.RawMessage // the JSON body to deliver
}

// EventStore keeps alert events until they are delivered, so a restart
// delivers what was pending and nothing twice.
type EventStore interface {
	PendingEvents(ctx context.Context, limit int) ([]Event, error)
	MarkDelivered(ctx context.Context, seq int64, at time.Time) error
}

// AgentStore is everything the agent keeps.
type AgentStore interface {
	ResultStore
	EventStore
	Close() error
}

// EventQueue keeps alerts and their events apart from the results: a
// store that keeps results elsewhere (InfluxDB) queues a run's
// transitions here, after the results are written.
type EventQueue interface {
	EventStore
	// Queue records ahu's alerts as of up and queues its transitions.
	Queue(ctx context.Context, ahu string, up AlertUpdate) error
	Close() error
}

// PayloadFunc builds the webhook body of an alert transition; the store
// keeps it with the queued event.
type PayloadFunc func(t metrics.Transition) (json.RawMessage, error)

// Transition names as events carry them.
const (
	TransitionOpen   = "open"
	TransitionClosed = "closed"
	TransitionUpdate = "update"
)

// EventName is the name an event of t is kept and delivered under: "open",
// "closed", or for a while-open update "update/" and the end of the hour
// it is as of (20261021T14Z, UTC). With the alert's id it is the event's
// key: one event per alert and name, so re-analysing an hour queues no
// second event.
func EventName(t metrics.Transition) string {
	switch {
	case t.IsUpdate():
		return TransitionUpdate + "/" + t.At.UTC().Format("20060102T15Z")
	case t.To == metrics.StatusOpen:
		return TransitionOpen
	}
	return TransitionClosed
}

// DecodeStates reads alert rule states as a store keeps them (JSON by kind).
func DecodeStates(ahu string, raw map[string]json.RawMessage) (map[string]metrics.Alert, error) {
	out := make(map[string]metrics.Alert, len(raw))
	for kind, b := range raw {
		var a metrics.Alert
		if err := json.Unmarshal(b, &a); err != nil {
			return nil, fmt.Errorf("read alert state %s of %s: %w", kind, ahu, err)
		}
		out[kind] = a
	}
	return out, nil
}

// EncodeStates is DecodeStates' inverse.
func EncodeStates(states map[string]metrics.Alert) (map[string]json.RawMessage, error) {
	out := make(map[string]json.RawMessage, len(states))
	for kind, a := range states {
		b, err := json.Marshal(a)
		if err != nil {
			return nil, err
		}
		out[kind] = b
	}
	return out, nil
}

// PointChecker is what a store may also offer: a look-up of a configured
// point that tells one matching nothing (IsMissing) from a quiet one, for
// stores that cannot tell them apart when read (ingest.PointChecker, which
// StoreHours.CheckFirst uses).
type PointChecker = ingest.PointChecker

// SampleSpanner is what a store may also offer: the span of a point's
// stored samples, for a command whose period defaults to what the store
// holds ("dewline analyze" without --from/--to).
type SampleSpanner interface {
	// SampleSpan returns the times of ref's first and last stored sample;
	// ok is false when it has none (or is not stored at all).
	SampleSpan(ctx context.Context, ref metrics.PointRef) (first, last time.Time, ok bool, err error)
}

// UntaggedAdopter is what a store shared by several sites may also offer
// (InfluxDB): results written before they carried the site tag are read by
// no site until the site that wrote them adopts them.
type UntaggedAdopter interface {
	// UntaggedResults counts, per air handler, the hours stored without a
	// site tag.
	UntaggedResults(ctx context.Context, now time.Time) (map[string]int, error)
	// AdoptUntagged copies them into this store's site, refusing (and
	// writing nothing) when they name an air handler not in ahus.
	AdoptUntagged(ctx context.Context, ahus []string, now time.Time) (Adopted, error)
}

// Adopted is what UntaggedAdopter.AdoptUntagged copied and left.
type Adopted struct {
	Hours, Transitions int // points copied into the site's series
	// Kept counts untagged points not copied because the site already has
	// a point of the same series at that time (written since, and newer).
	Kept int
}
