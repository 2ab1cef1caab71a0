package agent

import (
	"context"
	"fmt"
	"maps"
	"slices"
	"sync"

	"github.com/dewline/dewline/ingest/store"
	"github.com/dewline/dewline/metrics"
)

// OpenAlerts returns the alerts open at this point of the analysis, by air
// handler and kind; they carry their running totals.
func (an *Analyzer) OpenAlerts() []metrics.Alert {
	var open []metrics.Alert
	for _, ahu := range slices.Sorted(maps.Keys(an.Alerts)) {
		for _, kind := range slices.Sorted(maps.Keys(an.Alerts[ahu])) {
			if a := an.Alerts[ahu][kind]; a.Status == metrics.StatusOpen {
				open = append(open, a)
			}
		}
	}
	return open
}

// RecordWriter takes hourly records one at a time (ingest.HourlyWriter).
type RecordWriter interface {
	Write(rec *metrics.Record) error
}

// ResultPipeOptions says where a ResultPipe writes.
type ResultPipeOptions struct {
	File     RecordWriter       // nil: no file
	FileName string             // names the file in errors
	Store    store.ResultWriter // nil: results are not stored
	Size     int                // records per batch (at least 1)
	// Open returns the alerts open when a batch is full; it is called on
	// Add's goroutine, which owns the alert states (Analyzer.OpenAlerts).
	Open func() []metrics.Alert
}

// ResultPipe writes an analysis's hourly records to a file and a store on
// a goroutine of its own, a batch at a time, so writing overlaps with
// computing the next hours and a store write is a few calls, not thousands.
// A batch is written to the file first, then to the store with the
// transitions of its hours and the alerts open at its end. Once a write
// fails nothing more is written and Add returns the error. A batch handed
// over is written even when the analysis is interrupted: what was computed
// is kept.
type ResultPipe struct {
	opt ResultPipeOptions
	ctx context.Context

	cur  resultBatch      // being filled by Add
	full chan resultBatch // handed to the goroutine
	free chan resultBatch // written, to fill again
	done chan struct{}

	mu  sync.Mutex
	err error // the first write that failed
}

// resultBatch is what one store write takes.
type resultBatch struct {
	recs []metrics.Record
	trs  []metrics.Transition
	open []metrics.Alert
}

// resultBatches is how many batches there are: one filled, one waiting,
// one being written.
const resultBatches = 3

// NewResultPipe starts the writing goroutine; Close ends it. The writes
// outlive ctx's cancellation, so that an interrupted analysis keeps what
// it computed.
func NewResultPipe(ctx context.Context, opt ResultPipeOptions) *ResultPipe {
	opt.Size = max(1, opt.Size)
	if opt.Open == nil {
		opt.Open = func() []metrics.Alert { return nil }
	}
	w := &ResultPipe{opt: opt, ctx: context.WithoutCancel(ctx),
		full: make(chan resultBatch, 1), free: make(chan resultBatch, resultBatches), done: make(chan struct{})}
	for range resultBatches - 1 {
		w.free <- resultBatch{}
	}
	go func() {
		defer close(w.done)
		for b := range w.full {
			if w.failed() == nil {
				if err := w.write(&b); err != nil {
					w.mu.Lock()
					w.err = err
					w.mu.Unlock()
				}
			}
			w.free <- b
		}
	}()
	return w
}

func (w *ResultPipe) failed() error {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.err
}

// Add copies rec and its transitions tr into the batch; a full batch is
// handed over with the alerts open.
func (w *ResultPipe) Add(rec *metrics.Record, tr []metrics.Transition) error {
	if err := w.failed(); err != nil {
		return err
	}
	w.cur.recs = append(w.cur.recs, *rec)
	w.cur.trs = append(w.cur.trs, tr...)
	if len(w.cur.recs) >= w.opt.Size {
		w.send()
	}
	return nil
}

func (w *ResultPipe) send() {
	if w.opt.Store != nil {
		w.cur.open = w.opt.Open()
	}
	w.full <- w.cur
	w.cur = <-w.free
	w.cur.recs, w.cur.trs, w.cur.open = w.cur.recs[:0], w.cur.trs[:0], nil
}

// Close hands over the last batch when flush is set (to the store even
// when it is empty: the open alerts' totals are written), waits for the
// writes and returns the first that failed.
func (w *ResultPipe) Close(flush bool) error {
	if flush && w.failed() == nil {
		w.send()
	}
	close(w.full)
	<-w.done
	return w.failed()
}

func (w *ResultPipe) write(b *resultBatch) error {
	if w.opt.File != nil {
		for i := range b.recs {
			if err := w.opt.File.Write(&b.recs[i]); err != nil {
				return fmt.Errorf("write %s: %w", w.opt.FileName, err)
			}
		}
	}
	if w.opt.Store != nil {
		if err := w.opt.Store.PutResults(w.ctx, b.recs, b.trs, b.open); err != nil {
			return fmt.Errorf("write results and alerts: %w", err)
		}
	}
	return nil
}
