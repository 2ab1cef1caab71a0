package importer

import (
	"context"
	"errors"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/store"
)

// Checks are the configured points, each with what "dewline check" saw of
// it, by series name.
type Checks struct {
	Index  ingest.PointIndex
	Points map[string]*ingest.PointCheck
	// Rejected says, per export whose rejections exceed MaxRejectedShare
	// of its data rows, how many there were: the export needs a look.
	Rejected []string
}

// MaxRejectedShare is the share of an export's data rows beyond which its
// rejections (rows and cells refused: a time that does not parse, a value
// that is no number) make "dewline check" exit as needing a look: common
// practice, no source. A few bad cells are usual in a building's export;
// more, such as every other row in another time format, leave hours
// with part of their samples while every point's own figures look right.
const MaxRejectedShare = 0.05

// NewChecks indexes the configured points for inspection.
func NewChecks(cfg *config.Config) (*Checks, error) {
	units := map[string]ingest.AirHandlerPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.AirHandlerPoints{Points: a.PointMap()}
	}
	ix, err := ingest.NewPointIndex(units)
	if err != nil {
		return nil, err
	}
	c := &Checks{Index: ix, Points: map[string]*ingest.PointCheck{}}
	for name, ts := range ix {
		c.Points[name] = ingest.NewPointCheck(name, ts)
	}
	return c, nil
}

// ReadExports reads the exports (nothing is written) into the checks, in
// the configured unit of each point, and prints what was read of each
// file, the rows refused and the series no point maps.
func (c *Checks) ReadExports(w io.Writer, inputs []string, cfg *config.Config) error {
	files, err := csvfile.OpenFiles(inputs, cfg.CSVOptions())
	if err != nil {
		return err
	}
	defer files.Close()
	var unmatched ingest.Unmatched
	rowUnits := ingest.NewRowUnits(c.Index)
	var dups ingest.Duplicates
	last := map[string]*ingest.LastRecord{}
	for {
		rec, err := files.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return err
		}
		pc, ok := c.Points[rec.Series]
		if !ok {
			unmatched.Add(rec.Series)
			continue
		}
		ru, ok, err := rowUnits.Check(rec)
		if err != nil {
			return err
		}
		if !ok {
			continue // counted in rowUnits
		}
		l := last[rec.Series]
		if l == nil {
			l = &ingest.LastRecord{}
			last[rec.Series] = l
		}
		dups.See(l, &rec)
		t0 := pc.Targets[0]
		pc.Add(rec.Time, t0.Unit.FromSI(ru.ToSI(t0, rec.Value)))
	}
	for _, r := range files.Readers() {
		s := r.Stats()
		fmt.Fprintf(w, "%s: %s layout, %d rows, %d values, %d rejected\n", r.Name(), r.Layout(), s.Rows, s.Records, s.RejectedTotal())
		for _, ex := range s.Examples {
			fmt.Fprintf(w, "  rejected: %s\n", ex.String())
		}
		if n := s.RejectedTotal(); s.Rows > 0 && float64(n) > MaxRejectedShare*float64(s.Rows) {
			c.Rejected = append(c.Rejected, fmt.Sprintf("%s (%d rejected in %d data rows, %.0f %%)", r.Name(), n, s.Rows, 100*float64(n)/float64(s.Rows)))
			fmt.Fprintf(w, "  needs a look: %.0f %% of the rows rejected, above the %.0f %% dewline check accepts; fix the rows listed (or the exports settings they need) and check again\n",
				100*float64(n)/float64(s.Rows), 100*MaxRejectedShare)
		}
	}
	WriteRowUnits(w, rowUnits)
	if d := dups.Summary("; correct the export if the later value is not the right one"); d != "" {
		fmt.Fprintln(w, d)
	}
	if u := unmatched.Summary(UnmatchedExamples); u != "" {
		fmt.Fprintf(w, "%s; map them under air_handlers[].points if they are needed\n", u)
	}
	return nil
}

// NeedsLook says why "dewline check" found something to look at: the
// points that need a look (as WritePointChecks counts them) and the
// exports with too many rejections; "" when nothing does.
func (c *Checks) NeedsLook(points int) string {
	var why []string
	if points > 0 {
		why = append(why, fmt.Sprintf("%d point(s) need a look", points))
	}
	if n := len(c.Rejected); n > 0 {
		why = append(why, fmt.Sprintf("%d export(s) with more than %.0f %% of their rows rejected (common practice, no source): %s", n, 100*MaxRejectedShare, strings.Join(c.Rejected, ", ")))
	}
	return strings.Join(why, "; ")
}

// ReadStore reads what the store holds for each point in [from, to) into
// the checks; a point without data is no error.
func (c *Checks) ReadStore(ctx context.Context, st store.SeriesReader, from, to time.Time) error {
	for _, pc := range c.Points {
		t0 := pc.Targets[0]
		err := st.ReadSeries(ctx, t0.Ref, t0.Kind, from, to, func(s ingest.Sample) error {
			pc.Add(s.Time, t0.Unit.FromSI(s.Value)) // the store holds SI
			return nil
		})
		if err != nil && !st.IsMissing(err) {
			return fmt.Errorf("read %s: %w", pc.Name, err)
		}
	}
	return nil
}
