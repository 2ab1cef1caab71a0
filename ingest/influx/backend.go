package influx

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/dewline/dewline/dashboards"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Backend is InfluxDB as a store.Store: trend points, results, alert rule
// states and checkpoints live in the bucket; the agent's webhook queue in
// a local file (BackendOptions.Queue).
type Backend struct {
	c   *Client
	opt BackendOptions
}

// BackendOptions are what the backend needs besides the client.
type BackendOptions struct {
	// Site is the site id: every point written is tagged with it (SiteTag)
	// and every read of results, checkpoints and alert states matches it.
	Site string
	// Queue opens the local queue of alerts and webhook events the agent
	// keeps beside InfluxDB; required for Agent.
	Queue func(ctx context.Context) (store.EventQueue, error)
}

var (
	_ store.Store        = (*Backend)(nil)
	_ store.PointChecker = (*Backend)(nil)
)

// NewBackend serves c as a store.Store. Closing the backend closes c.
func NewBackend(c *Client, opt BackendOptions) *Backend { return &Backend{c: c, opt: opt} }

// Client is the backend's client.
func (b *Backend) Client() *Client { return b.c }

// ReadSeries reads a point in SI.
func (b *Backend) ReadSeries(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, from, to time.Time, fn func(ingest.Sample) error) error {
	return b.c.ReadSeries(ctx, ref, kind, from, to, fn)
}

// IsMissing reports a point that matches nothing in the bucket.
// SampleSpan implements store.SampleSpanner: the first and last sample of
// the point's series, looking back to the Unix epoch.
func (b *Backend) SampleSpan(ctx context.Context, ref metrics.PointRef) (time.Time, time.Time, bool, error) {
	loc, err := locate(ref)
	if err != nil {
		return time.Time{}, time.Time{}, false, err
	}
	return b.c.Span(ctx, loc.measurement, loc.field, loc.tags, time.Now())
}

func (b *Backend) IsMissing(err error) bool { return errors.Is(err, ErrNoSuchPoint) }

// WriteSamples writes samples where ReadSeries finds them (Client.WriteSamples).
func (b *Backend) WriteSamples(ctx context.Context, _ string, t ingest.PointTarget, samples []ingest.Sample) error {
	return b.c.WriteSamples(ctx, t.Ref, t.Kind, samples)
}

// PutResults writes records as dewline_hourly points, transitions and the
// open alerts' running totals as dewline_alert points in one batch;
// re-writing an hour replaces it.
func (b *Backend) PutResults(ctx context.Context, recs []metrics.Record, tr []metrics.Transition, open []metrics.Alert) error {
	if len(recs) == 0 && len(tr) == 0 && len(open) == 0 {
		return nil
	}
	pts := append(HourlyPoints(b.opt.Site, recs), AlertPoints(b.opt.Site, tr)...)
	return b.c.WritePoints(ctx, append(pts, OpenAlertPoints(b.opt.Site, open)...))
}

// Results reads the site's results back: dewline_hourly pivoted into
// records, and the alerts rebuilt from their transitions, both matching
// the site tag.
func (b *Backend) Results(now func() time.Time) dashboards.Results {
	return &results{c: b.c, site: SiteTag(b.opt.Site), now: now}
}

// Agent returns the agent's results in InfluxDB with its local queue.
func (b *Backend) Agent(ctx context.Context) (store.AgentStore, error) {
	if b.opt.Queue == nil {
		return nil, fmt.Errorf("the InfluxDB store has no local queue for the agent")
	}
	q, err := b.opt.Queue(ctx)
	if err != nil {
		return nil, fmt.Errorf("open the agent's state file: %w", err)
	}
	return &agentStore{c: b.c, site: b.opt.Site, queue: q}, nil
}

// Ping asks the server.
func (b *Backend) Ping(ctx context.Context) error { return b.c.Ping(ctx) }

// IsOutage tells an outage of the server from an error of one point: a
// point that matches several series, a bad point or one that matches
// nothing is the latter.
func (b *Backend) IsOutage(err error) bool {
	for _, e := range []error{ErrAmbiguousPoint, ErrInvalidPoint, ErrNoSuchPoint} {
		if errors.Is(err, e) {
			return false
		}
	}
	return true
}

// CheckPoint tells a point that matches nothing (ErrNoSuchPoint) from a
// quiet one.
func (b *Backend) CheckPoint(ctx context.Context, ref metrics.PointRef, from, to time.Time) error {
	_, err := b.c.CheckPoint(ctx, ref, from, to)
	return err
}

// Describe names the bucket and measurement, without secrets.
func (b *Backend) Describe() string {
	return "InfluxDB bucket " + b.c.Options().Bucket + ", measurement " + MeasurementHourly
}

// Close closes the client.
func (b *Backend) Close() error {
	b.c.Close()
	return nil
}

var _ store.SampleSpanner = (*Backend)(nil)
