package importer

import (
	"context"
	"fmt"
	"slices"
	"sort"
	"sync/atomic"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/store"
)

// batchValues is how many values the reader gathers before it hands them
// to the writer. Larger batches mean fewer transactions and fewer day
// blocks written twice at a batch's edges, smaller ones less memory; two
// batches of 64 Ki samples (2 MiB each) bound the import's memory whatever
// the file's length. Twice as many cost no more processor time, and
// raised the peak memory of a year's import from 40 to 49 MB.
const batchValues = 1 << 16

// batch is the values of whole lines of a file, by series, in file order.
// A series is a slot: its index in the import's table of series (see
// slots), the same in every batch.
type batch struct {
	samples   [][]ingest.Sample // by slot
	series    []slot            // by slot: what the writer needs of each
	values    int
	firstLine int // the file line of the batch's first value
	lastLine  int // the file line of the batch's last value
	order     []int
	out       []store.SeriesSamples
	stored    []storedSeries // series stored whole before a write of the batch failed
}

// storedSeries is a series whose values in a batch are stored.
type storedSeries struct {
	name   string
	values int
}

// partial is what a batch whose write failed stored before the failure:
// the values of some of its series, on lines from..to.
type partial struct {
	from, to int
	series   []storedSeries
}

func (b *batch) add(sl *slot, line int, s ingest.Sample) {
	for sl.id >= len(b.samples) {
		b.samples = append(b.samples, nil)
		b.series = append(b.series, slot{})
	}
	if b.series[sl.id].name == "" {
		b.series[sl.id] = *sl
	}
	b.samples[sl.id] = append(b.samples[sl.id], s)
	if b.values == 0 {
		b.firstLine = line
	}
	b.values++
	b.lastLine = line
}

// reset empties the batch and keeps its buffers.
func (b *batch) reset() {
	for i := range b.samples {
		b.samples[i] = b.samples[i][:0]
	}
	b.values, b.firstLine, b.lastLine = 0, 0, 0
	b.stored = b.stored[:0]
}

// slot is a series of the file: its name, its targets (nil when no point
// maps it) and its index among the file's series.
type slot struct {
	name string
	ts   []ingest.PointTarget
	id   int
	last ingest.LastRecord // the series' previous record (Stats.Duplicates)
}

// slots finds the series of a record. In a wide export the k-th value of
// every line is the same column, so the slot of the line's k-th value last
// time is tried first: comparing a string with itself is cheap, a map
// look-up by name is not.
type slots struct {
	ix     ingest.PointIndex
	byName map[string]*slot
	guess  []*slot // by position in the line
	n      int     // slots made
}

func newSlots(ix ingest.PointIndex) *slots {
	return &slots{ix: ix, byName: map[string]*slot{}}
}

// of returns the slot of the series, the pos-th value of its line.
func (ss *slots) of(series string, pos int) *slot {
	if pos < len(ss.guess) {
		if sl := ss.guess[pos]; sl != nil && sl.name == series {
			return sl
		}
	}
	sl, ok := ss.byName[series]
	if !ok {
		sl = &slot{name: series, ts: ss.ix[series], id: -1}
		if sl.ts != nil {
			sl.id = ss.n
			ss.n++
		}
		ss.byName[series] = sl
	}
	for pos >= len(ss.guess) {
		ss.guess = append(ss.guess, nil)
	}
	ss.guess[pos] = sl
	return sl
}

// pipeline writes batches on a goroutine of its own while the caller
// reads and converts the next, so parsing and writing overlap. Two
// batches take turns: the reader fills one while the writer stores the
// other. After the writer fails it stores nothing more; the reader sees
// failed and stops.
type pipeline struct {
	full, free chan *batch
	done       chan struct{}
	failed     atomic.Bool
	write      func(ctx context.Context, b *batch) (int, error)

	// Owned by the writer until done is closed.
	err        error
	written    int
	storedLine int     // every value of the lines up to it is stored
	partial    partial // what the failed batch stored, past storedLine
}

func startPipeline(ctx context.Context, write func(ctx context.Context, b *batch) (int, error)) *pipeline {
	p := &pipeline{full: make(chan *batch, 1), free: make(chan *batch, 2), done: make(chan struct{}), write: write}
	for range 2 {
		p.free <- &batch{}
	}
	go p.run(ctx)
	return p
}

func (p *pipeline) run(ctx context.Context) {
	defer close(p.done)
	for b := range p.full {
		if p.err == nil {
			n, err := p.write(ctx, b)
			p.written += n
			if err != nil {
				p.err = err
				p.failed.Store(true)
				p.partial = partial{from: b.firstLine, to: b.lastLine, series: slices.Clone(b.stored)}
			} else {
				p.storedLine = b.lastLine
			}
		}
		b.reset()
		p.free <- b
	}
}

// hand passes a full batch to the writer and returns an empty one.
func (p *pipeline) hand(b *batch) *batch {
	p.full <- b
	return <-p.free
}

// finish passes the last batch, if it holds values, waits for the writer
// and returns the values written, the last line stored whole, what the
// failed batch stored past it and the writer's error.
func (p *pipeline) finish(last *batch) (written, storedLine int, part partial, err error) {
	if last != nil && last.values > 0 {
		p.full <- last
	}
	close(p.full)
	<-p.done
	return p.written, p.storedLine, p.partial, p.err
}

// batchWriter stores a batch in st: in one call where st takes batches
// (store.BatchSampleWriter), else series by series. Series are written in
// name order; a series' samples in file order, so a later value of the
// same time wins. Series by series, those stored before a failure are
// noted in the batch (batch.stored): a failed batch may be stored in part.
func batchWriter(st store.SampleWriter) func(ctx context.Context, b *batch) (int, error) {
	bw, _ := st.(store.BatchSampleWriter)
	return func(ctx context.Context, b *batch) (int, error) {
		b.order = b.order[:0]
		for i, s := range b.samples {
			if len(s) > 0 {
				b.order = append(b.order, i)
			}
		}
		sort.Slice(b.order, func(i, j int) bool { return b.series[b.order[i]].name < b.series[b.order[j]].name })
		if bw != nil {
			b.out = b.out[:0]
			for _, i := range b.order {
				b.out = append(b.out, store.SeriesSamples{Series: b.series[i].name, Target: b.series[i].ts[0], Samples: b.samples[i]})
			}
			if err := bw.WriteSampleBatch(ctx, b.out); err != nil {
				return 0, err
			}
			return b.values, nil
		}
		written := 0
		for _, i := range b.order {
			sl, s := b.series[i], b.samples[i]
			if err := st.WriteSamples(ctx, sl.name, sl.ts[0], s); err != nil {
				return written, fmt.Errorf("write %s: %w", sl.name, err)
			}
			written += len(s)
			b.stored = append(b.stored, storedSeries{name: sl.name, values: len(s)})
		}
		return written, nil
	}
}
