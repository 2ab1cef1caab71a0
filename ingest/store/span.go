package store

import (
	"context"
	"fmt"
	"time"

	"github.com/dewline/dewline/metrics"
)

// Span is the span of the stored samples of refs in whole UTC hours: from
// the hour of the first sample to the end of the hour of the last. ok is
// false when none of them holds a sample. A point named twice is asked
// once.
func Span(ctx context.Context, sp SampleSpanner, refs []metrics.PointRef) (from, to time.Time, ok bool, err error) {
	seen := map[string]bool{}
	for _, ref := range refs {
		if seen[ref.Name()] {
			continue
		}
		seen[ref.Name()] = true
		first, last, has, err := sp.SampleSpan(ctx, ref)
		if err != nil {
			return time.Time{}, time.Time{}, false, fmt.Errorf("the stored span of %s: %w", ref.Name(), err)
		}
		if !has {
			continue
		}
		if !ok || first.Before(from) {
			from = first
		}
		if !ok || last.After(to) {
			to = last
		}
		ok = true
	}
	if !ok {
		return time.Time{}, time.Time{}, false, nil
	}
	return from.UTC().Truncate(time.Hour), to.UTC().Truncate(time.Hour).Add(time.Hour), true, nil
}
