package agent

import (
	"context"
	"encoding/json"
	"time"

	"github.com/dewline/dewline/metrics"
)

// ResultStore is where the agent keeps its results and its place: hourly
// records, alert states and events, and the checkpoint (the start of the
// last hour whose results are written) of every air handler. The embedded
// store and InfluxDB satisfy it through adapters in cmd/dewline.
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

// AlertUpdate is what a run changed in an air handler's alerts.
type AlertUpdate struct {
	States      map[string]metrics.Alert // pending and open alerts after the run, by kind
	Transitions []metrics.Transition     // opened and closed in the run, in order
}

// Event is an alert transition waiting to be delivered to the webhook.
type Event struct {
	Seq     int64 // the store's sequence number, increasing
	AlertID string
	// Transition is "open" or "closed".
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

// Clock returns the current time; tests inject their own.
type Clock func() time.Time
