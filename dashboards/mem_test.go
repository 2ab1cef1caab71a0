package dashboards

import (
	"context"
	"errors"
	"sort"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/metrics/compare/comparetest"
)

// memResults holds records and alerts in memory: the Results contract
// without a store, for tests of what the pages compute from it.
type memResults struct {
	recs   []metrics.Record
	alerts []Alert
	err    error // returned by every call when set
}

func (m *memResults) Hours(_ context.Context, ahu string, from, to time.Time, fn func(*metrics.Record) error) error {
	if m.err != nil {
		return m.err
	}
	sorted := append([]metrics.Record(nil), m.recs...)
	sort.SliceStable(sorted, func(i, j int) bool { return sorted[i].HourStart.Before(sorted[j].HourStart) })
	for i := range sorted {
		r := sorted[i]
		if (ahu == "" || r.AHU == ahu) && !r.HourStart.Before(from) && r.HourStart.Before(to) {
			if err := fn(&r); err != nil {
				return err
			}
		}
	}
	return nil
}

func (m *memResults) Alerts(_ context.Context, q AlertQuery) ([]Alert, error) {
	if m.err != nil {
		return nil, m.err
	}
	var out []Alert
	for _, a := range m.alerts {
		if (q.AHU == "" || a.AHU == q.AHU) && (q.Kind == "" || a.Kind == q.Kind) && (q.State == "" || a.State == q.State) && a.Overlaps(q.From, q.To) {
			out = append(out, a)
		}
	}
	return out, nil
}

func (m *memResults) Span(context.Context) (time.Time, time.Time, bool, error) {
	if m.err != nil {
		return time.Time{}, time.Time{}, false, m.err
	}
	if len(m.recs) == 0 {
		return time.Time{}, time.Time{}, false, nil
	}
	first, last := m.recs[0].HourStart, m.recs[0].HourStart
	for _, r := range m.recs {
		if r.HourStart.Before(first) {
			first = r.HourStart
		}
		if r.HourStart.After(last) {
			last = r.HourStart
		}
	}
	return first, last, true, nil
}

var errStoreDown = errors.New("dial tcp 127.0.0.1:8086: connect: connection refused")

// rec is an hourly record with the fields in set (comparetest.Record).
var rec = comparetest.Record
