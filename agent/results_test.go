package agent

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
)

// putLog is a store that keeps what each PutResults received.
type putLog struct {
	mu     sync.Mutex
	calls  [][]string // the hours of each call, "AHU hour"
	trs    [][]string
	open   [][]string
	failAt int // the call that fails (1-based); 0: none
}

func (p *putLog) PutResults(ctx context.Context, recs []metrics.Record, tr []metrics.Transition, open []metrics.Alert) error {
	p.mu.Lock()
	defer p.mu.Unlock()
	if ctx.Err() != nil {
		return ctx.Err()
	}
	var hours, ids, opens []string
	for _, r := range recs {
		hours = append(hours, fmt.Sprintf("%s %s", r.AHU, r.HourStart.Format("15")))
	}
	for _, t := range tr {
		ids = append(ids, t.Alert.ID)
	}
	for _, a := range open {
		opens = append(opens, a.ID)
	}
	p.calls = append(p.calls, hours)
	p.trs = append(p.trs, ids)
	p.open = append(p.open, opens)
	if len(p.calls) == p.failAt {
		return errors.New("disk full")
	}
	return nil
}

var writeT0 = time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)

func writeRec(i int) metrics.Record {
	return metrics.Record{AHU: "AHU-1", HourStart: writeT0.Add(time.Duration(i) * time.Hour), WaterRemovedKg: float64(i)}
}

// The writer hands the store batches of the given size in order, each
// with the transitions of its hours and the alerts open when it was full,
// and a last batch (even an empty one) at close; the file gets every
// record in order. The records are copies: the caller may reuse its own.
func TestResultPipe_Batches(t *testing.T) {
	for _, n := range []int{7, 8} {
		t.Run(fmt.Sprint(n), func(t *testing.T) {
			var file bytes.Buffer
			hw, err := ingest.NewHourlyWriter(&file, "csv")
			require.NoError(t, err)
			st := &putLog{}
			open := ""
			w := NewResultPipe(context.Background(), ResultPipeOptions{File: hw, FileName: "out.csv", Store: st, Size: 4,
				Open: func() []metrics.Alert { return []metrics.Alert{{ID: open}} }})
			var rec metrics.Record // one record filled again, as the Analyzer does
			for i := 0; i < n; i++ {
				rec = writeRec(i)
				var tr []metrics.Transition
				if i == 1 {
					tr = []metrics.Transition{{Alert: metrics.Alert{ID: "a1"}}}
				}
				open = fmt.Sprintf("open at %d", i)
				require.NoError(t, w.Add(&rec, tr))
			}
			open = "open at end"
			require.NoError(t, w.Close(true))
			require.NoError(t, hw.Close())

			want := [][]string{{"AHU-1 00", "AHU-1 01", "AHU-1 02", "AHU-1 03"}, {"AHU-1 04", "AHU-1 05", "AHU-1 06"}}
			wantOpen := [][]string{{"open at 3"}, {"open at end"}}
			if n == 8 {
				want = [][]string{want[0], {"AHU-1 04", "AHU-1 05", "AHU-1 06", "AHU-1 07"}, nil}
				wantOpen = [][]string{{"open at 3"}, {"open at 7"}, {"open at end"}}
			}
			assert.Equal(t, want, st.calls)
			assert.Equal(t, []string{"a1"}, st.trs[0])
			assert.Equal(t, wantOpen, st.open)

			// The reference: the same records written one by one.
			var ref bytes.Buffer
			rw, err := ingest.NewHourlyWriter(&ref, "csv")
			require.NoError(t, err)
			for i := 0; i < n; i++ {
				r := writeRec(i)
				require.NoError(t, rw.Write(&r))
			}
			require.NoError(t, rw.Close())
			assert.Equal(t, ref.String(), file.String())
		})
	}
}

// Once the store fails nothing more is written: add and close return the
// error, and the batches after the failure never reach the store.
func TestResultPipe_StoreFails(t *testing.T) {
	st := &putLog{failAt: 2}
	w := NewResultPipe(context.Background(), ResultPipeOptions{Store: st, Size: 2})
	var err error
	i := 0
	for ; i < 1000 && err == nil; i++ {
		rec := writeRec(i)
		err = w.Add(&rec, nil)
	}
	require.ErrorContains(t, err, "write results and alerts: disk full")
	assert.Less(t, i, 1000, "add returns the failure")
	require.ErrorContains(t, w.Close(true), "disk full")
	assert.Len(t, st.calls, 2, "nothing is written after the failure")
}

// A run that failed (flush false) does not write its last, partial batch;
// an interrupted one does, although its context has ended.
func TestResultPipe_Close(t *testing.T) {
	for _, flush := range []bool{false, true} {
		ctx, cancel := context.WithCancel(context.Background())
		st := &putLog{}
		w := NewResultPipe(ctx, ResultPipeOptions{Store: st, Size: 2})
		for i := 0; i < 3; i++ {
			rec := writeRec(i)
			require.NoError(t, w.Add(&rec, nil))
		}
		cancel()
		require.NoError(t, w.Close(flush))
		if flush {
			assert.Equal(t, [][]string{{"AHU-1 00", "AHU-1 01"}, {"AHU-1 02"}}, st.calls)
		} else {
			assert.Equal(t, [][]string{{"AHU-1 00", "AHU-1 01"}}, st.calls)
		}
	}
}
