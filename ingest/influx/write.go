package influx

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/influxdata/influxdb-client-go/v2/api/write"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// UnitTag is the tag that records the SI unit of values dewline writes to
// its default location, e.g. unit=°C.
const UnitTag = "unit"

// Point is one line to write: a measurement, its tags, numeric and string
// fields, and a time. Writing a point with the same measurement, tags and
// time as a stored one replaces the stored fields of the same names.
type Point struct {
	Measurement string
	Tags        map[string]string
	Fields      map[string]float64 // finite numbers
	Strings     map[string]string  // string fields, e.g. an alert's reason
	Time        time.Time
}

// WriteSamples writes samples (SI, as ingest delivers them) of the point
// ref, whose values measure kind, where ReadSeries will find them again:
//
//   - a point with its own measurement and field is written there, with its
//     tags, converted from SI back to ref.Unit, so that it reads like the
//     rest of that series;
//   - any other point goes to the default location, measurement
//     metrics.DefaultMeasurement, tags point=<name> and unit=<SI unit>,
//     field "value", in SI.
//
// Samples go in batches of Options.BatchSize points, each retried as a
// request. A NaN or infinite value, or a zero time, is an error before
// anything is written. If a batch fails, the batches before it are stored.
func (c *Client) WriteSamples(ctx context.Context, ref metrics.PointRef, kind psychro.Kind, samples []ingest.Sample) error {
	loc, err := locate(ref)
	if err != nil {
		return err
	}
	u, err := unitFor(ref, kind)
	if err != nil {
		return err
	}
	tags := loc.tags
	fromSI := u.FromSI
	if !loc.own {
		si, err := siUnit(kind)
		if err != nil {
			return fmt.Errorf("point %q: %w", loc.name, err)
		}
		tags = map[string]string{metrics.DefaultPointTag: loc.name, UnitTag: si}
		fromSI = func(v float64) float64 { return v }
	}
	if err := checkNames(loc.measurement, tags, []string{loc.field}); err != nil {
		return fmt.Errorf("point %q: %w", loc.name, err)
	}
	for _, s := range samples {
		if err := checkSample(s.Time, s.Value); err != nil {
			return fmt.Errorf("point %q: %w", loc.name, err)
		}
	}
	keys := make([]string, 0, len(tags))
	for k := range tags {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	err = c.writeBatches(ctx, len(samples), func(i int) *write.Point {
		p := write.NewPointWithMeasurement(loc.measurement)
		for _, k := range keys {
			p.AddTag(k, tags[k])
		}
		return p.AddField(loc.field, fromSI(samples[i].Value)).SetTime(samples[i].Time)
	})
	if err != nil {
		return fmt.Errorf("write point %q (%s): %w", loc.name, loc.describe(), err)
	}
	return nil
}

// WritePoints writes points, in batches of Options.BatchSize, each retried
// as a request. Every point is checked before anything is written: names
// line protocol can carry unchanged, at least one field, finite numbers and
// a non-zero time. If a batch fails, the batches before it are stored.
func (c *Client) WritePoints(ctx context.Context, points []Point) error {
	for i, p := range points {
		if err := checkPoint(p); err != nil {
			return fmt.Errorf("write point %d (measurement %q at %s): %w", i, p.Measurement, fluxTime(p.Time), err)
		}
	}
	err := c.writeBatches(ctx, len(points), func(i int) *write.Point { return clientPoint(points[i]) })
	if err != nil {
		return fmt.Errorf("write %d points: %w", len(points), err)
	}
	return nil
}

// writeBatches writes n points, built by point(i), BatchSize at a time.
func (c *Client) writeBatches(ctx context.Context, n int, point func(i int) *write.Point) error {
	size := c.opt.BatchSize
	batches := (n + size - 1) / size
	batch := make([]*write.Point, 0, min(n, size))
	for b := 0; b < batches; b++ {
		lo, hi := b*size, min((b+1)*size, n)
		batch = batch[:0]
		for i := lo; i < hi; i++ {
			batch = append(batch, point(i))
		}
		err := c.do(ctx, "write", c.opt.Bucket, func(actx context.Context, _ func()) (bool, error) {
			return false, c.write.WritePoint(actx, batch...)
		})
		if err != nil {
			if batches == 1 {
				return err
			}
			return fmt.Errorf("batch %d of %d (points %d to %d; the %d before were stored): %w", b+1, batches, lo, hi-1, lo, err)
		}
	}
	return nil
}

func checkPoint(p Point) error {
	if len(p.Fields)+len(p.Strings) == 0 {
		return fmt.Errorf("no fields; a point needs at least one: %w", ErrInvalidPoint)
	}
	var fields []string
	for k, v := range p.Fields {
		fields = append(fields, k)
		if err := checkSample(p.Time, v); err != nil {
			return fmt.Errorf("field %q: %w", k, err)
		}
	}
	for k, v := range p.Strings {
		if _, dup := p.Fields[k]; dup {
			return fmt.Errorf("field %q is both a number and a string: %w", k, ErrInvalidPoint)
		}
		fields = append(fields, k)
		// The client quotes and escapes string values; like names, they
		// cannot carry a tab or line break unchanged.
		if !utf8.ValidString(v) || strings.ContainsAny(v, "\n\r\t\f") {
			return fmt.Errorf("string field %q is not valid UTF-8 or contains a tab or line break, which line protocol cannot carry: %w", k, ErrInvalidPoint)
		}
	}
	if p.Time.IsZero() {
		return fmt.Errorf("time is zero: %w", ErrInvalidPoint)
	}
	return checkNames(p.Measurement, p.Tags, fields)
}

// checkNames checks that a measurement, tags and field keys can be written
// and read back unchanged (metrics.LineProblems, the rule the
// configuration's check applies too).
func checkNames(measurement string, tags map[string]string, fields []string) error {
	if errs := metrics.LineProblems(measurement, tags, fields); len(errs) > 0 {
		return fmt.Errorf("%s: %w", strings.Join(errs, "; "), ErrInvalidPoint)
	}
	return nil
}

func checkSample(t time.Time, v float64) error {
	switch {
	case math.IsNaN(v) || math.IsInf(v, 0):
		return fmt.Errorf("value at %s is %v; InfluxDB stores finite numbers only: %w", fluxTime(t), v, ErrInvalidPoint)
	case t.IsZero():
		return fmt.Errorf("sample time is zero: %w", ErrInvalidPoint)
	}
	return nil
}

func sortedKeys[V any](m map[string]V) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}
