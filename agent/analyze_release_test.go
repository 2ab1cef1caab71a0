package agent

import (
	"context"
	"math"
	"math/rand/v2"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

// releasingSource yields hours like hourSource's, with values that
// differ from hour to hour, filling the hours it is given back again. A
// released hour is spoilt at once, so a record computed from it after its
// release would differ from the reference.
type releasingSource struct {
	hours    int
	mu       sync.Mutex
	free     []*metrics.Hour
	yielded  map[*metrics.Hour]int // hours out
	released int
	made     int
}

func (s *releasingSource) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	for i := 0; i < s.hours; i++ {
		for k, a := range ahus {
			s.mu.Lock()
			var h *metrics.Hour
			if n := len(s.free); n > 0 {
				h, s.free = s.free[n-1], s.free[:n-1]
			} else {
				h = &metrics.Hour{Values: map[metrics.Role][]float64{}, Quality: map[metrics.Role]metrics.RoleQuality{}}
				s.made++
			}
			if s.yielded == nil {
				s.yielded = map[*metrics.Hour]int{}
			}
			s.yielded[h]++
			s.mu.Unlock()
			h.AHU, h.Start, h.Step = a, from.Add(time.Duration(i)*time.Hour), time.Minute
			for r, v := range map[metrics.Role]float64{metrics.RoleEnteringTemp: 25, metrics.RoleEnteringRH: 0.35 + 0.02*float64(i%20),
				metrics.RoleLeavingTemp: 12 + 0.1*float64(k), metrics.RoleSupplyTemp: 18, metrics.RoleSupplyFlow: 2} {
				vals := h.Values[r]
				if vals == nil {
					vals = make([]float64, 60)
				}
				for j := range vals {
					vals[j] = v + 0.01*float64((i+j)%7)
				}
				if i == 5 && r == metrics.RoleSupplyFlow {
					vals[0] = math.Inf(1) // an hour the engine must survive
				}
				h.Values[r] = vals
			}
			if err := fn(h); err != nil {
				return err
			}
		}
	}
	return nil
}

// sourceOnly hides Release: the Analyzer then keeps every hour.
type sourceOnly struct{ HourSource }

func (s *releasingSource) Release(h *metrics.Hour) {
	for _, v := range h.Values {
		for j := range v {
			v[j] = math.NaN()
		}
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	s.released++
	s.yielded[h]--
	s.free = append(s.free, h)
}

// recordText is every field of a record, NaN included, for comparing runs.
func recordText(r *metrics.Record) []any {
	out := []any{r.AHU, r.HourStart, r.Flags}
	for _, f := range r.Fields() {
		out = append(out, f.Name, math.Float64bits(f.Value))
	}
	return out
}

// The Analyzer releases each hour once, after its record is computed: the
// records equal those of the same hours never released (the reference run),
// and the source refills a handful of hours for the whole period.
func TestAnalyzer_ReleasesHours(t *testing.T) {
	cfg := twoAirHandlers(t)
	from := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	const hours = 500
	run := func(src HourSource) ([][]any, []HourError) {
		var recs [][]any
		_, failed, err := (&Analyzer{Cfg: cfg, Source: src}).Run(context.Background(), from, from.Add(hours*time.Hour), nil,
			func(_ context.Context, r *metrics.Record, _ []metrics.Transition) error {
				recs = append(recs, recordText(r))
				return nil
			})
		require.NoError(t, err)
		return recs, failed
	}
	keep := &releasingSource{hours: hours}
	want, wantFailed := run(sourceOnly{keep})
	src := &releasingSource{hours: hours}
	got, gotFailed := run(src)
	require.Len(t, got, 2*hours-len(gotFailed))
	require.Len(t, want, len(got))
	for i := range want {
		require.Equal(t, want[i], got[i], "record %d", i)
	}
	assert.Equal(t, wantFailed, gotFailed)
	assert.Zero(t, keep.released, "a source without Release keeps its hours")
	assert.Equal(t, 2*hours, src.released, "every hour is released")
	for h, n := range src.yielded {
		assert.Zero(t, n, "hour %s %s released as often as yielded", h.AHU, h.Start)
	}
	assert.Less(t, src.made, 100, "hours are refilled, not one made per hour")
}

// reorder gives back values put in any order in the order of their
// sequence numbers (the reference: 0, 1, 2, ...).
func TestReorder(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 5000
	var q reorder[int]
	var out []int
	order := make([]int, 0, n)
	// Values arrive up to a window ahead, as from a pool of workers; the
	// windows grow the ring several times.
	for lo := 0; lo < n; lo += 250 {
		for _, k := range rng.Perm(250) {
			order = append(order, lo+k)
		}
	}
	for _, seq := range order {
		q.put(seq, 10*seq)
		for {
			v, ok := q.take()
			if !ok {
				break
			}
			out = append(out, v)
		}
	}
	require.Len(t, out, n)
	for i, v := range out {
		require.Equal(t, 10*i, v, "value %d", i)
	}
	_, ok := q.take()
	assert.False(t, ok, "nothing left")
}
