package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"sort"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// pointCheck accumulates what one series holds.
type pointCheck struct {
	name       string
	targets    []ingest.PointTarget
	n          int
	first      time.Time
	last       time.Time
	prev       time.Time
	intervals  map[int64]int // seconds between samples -> count
	outOfRange int
	typical    map[string]int // unit name -> values typical under that unit
}

func newPointCheck(name string, ts []ingest.PointTarget) *pointCheck {
	return &pointCheck{name: name, targets: ts, intervals: map[int64]int{}, typical: map[string]int{}}
}

// add counts one raw value (in the unit the series is logged in).
func (p *pointCheck) add(t time.Time, raw float64) {
	p.n++
	if p.first.IsZero() || t.Before(p.first) {
		p.first = t
	}
	if t.After(p.last) {
		p.last = t
	}
	if !p.prev.IsZero() {
		if d := t.Sub(p.prev); d > 0 {
			p.intervals[int64(d.Round(time.Second)/time.Second)]++
		}
	}
	p.prev = t
	t0 := p.targets[0]
	spec, _ := metrics.LookupRole(string(t0.Role))
	if v := t0.Unit.ToSI(raw); isBad(v) || !spec.Plausible(v) {
		p.outOfRange++
	}
	for _, name := range psychro.UnitNames(t0.Kind) {
		u, _ := psychro.LookupUnit(t0.Kind, name)
		if spec.Typical(u.ToSI(raw)) {
			p.typical[u.Name]++
		}
	}
}

// interval is the typical (most frequent) spacing of the samples.
func (p *pointCheck) interval() time.Duration {
	best, bestN := int64(0), 0
	for s, n := range p.intervals {
		if n > bestN || n == bestN && s < best {
			best, bestN = s, n
		}
	}
	return time.Duration(best) * time.Second
}

// unitNote says when the values look logged in another unit than the configured one.
func (p *pointCheck) unitNote() string {
	if p.n < 10 {
		return ""
	}
	t0 := p.targets[0]
	conf := float64(p.typical[t0.Unit.Name]) / float64(p.n)
	best, bestShare := "", conf
	for name, c := range p.typical {
		if share := float64(c) / float64(p.n); share > bestShare+0.3 {
			best, bestShare = name, share
		}
	}
	if best == "" || conf > 0.5 {
		return ""
	}
	return fmt.Sprintf("values look like %s, not %s (%.0f %% typical as %s, %.0f %% as %s)", best, t0.Ref.Unit, 100*bestShare, best, 100*conf, t0.Ref.Unit)
}

func runCheck(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "configuration file (required)")
	useStore := fs.Bool("store", false, "also report what the configured store holds for each point")
	fromS := fs.String("from", "", "with --store: start of the window to inspect (default: 7 days before --to)")
	toS := fs.String("to", "", "with --store: end of the window (default: now)")
	var inputs stringList
	fs.Var(&inputs, "input", "trend export (CSV) to inspect against the configuration; repeatable")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline check --config FILE [--input trends.csv ...] [--store [--from T] [--to T]]")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	cfg, err := loadConfig(*cfgPath)
	if err != nil {
		return err
	}
	points := 0
	for _, a := range cfg.AirHandlers {
		points += len(a.Points)
	}
	fmt.Fprintf(e.stdout, "%s: valid; %d air handler(s), %d point(s), store %s, grid %v\n", *cfgPath, len(cfg.AirHandlers), points, cfg.Store.Kind, cfg.Grid.Step)
	for i := range cfg.AirHandlers {
		fmt.Fprintf(e.stdout, "  %s %s\n", cfg.AirHandlers[i].ID, cfg.AirHandlers[i].EnteringAir())
	}
	if len(inputs) == 0 && !*useStore {
		return nil
	}
	units := map[string]ingest.UnitPoints{}
	for i := range cfg.AirHandlers {
		a := &cfg.AirHandlers[i]
		units[a.ID] = ingest.UnitPoints{Points: a.PointMap()}
	}
	ix, err := ingest.NewPointIndex(units)
	if err != nil {
		return err
	}
	checks := map[string]*pointCheck{}
	for name, ts := range ix {
		checks[name] = newPointCheck(name, ts)
	}
	if len(inputs) > 0 {
		files, err := csvfile.OpenFiles(inputs, csvOptions(cfg))
		if err != nil {
			return err
		}
		defer files.Close()
		unmatched := map[string]int{}
		for {
			rec, err := files.Next()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				return err
			}
			pc, ok := checks[rec.Series]
			if !ok {
				unmatched[rec.Series]++
				continue
			}
			if pc.n == 0 {
				if err := ix.CheckUnit(rec); err != nil {
					return err
				}
			}
			pc.add(rec.Time, rec.Value)
		}
		for _, r := range files.Readers() {
			s := r.Stats()
			fmt.Fprintf(e.stdout, "%s: %s layout, %d rows, %d values, %d rejected\n", r.Name(), r.Layout(), s.Rows, s.Records, s.RejectedTotal())
			for _, ex := range s.Examples {
				fmt.Fprintf(e.stdout, "  rejected: %s\n", ex.String())
			}
		}
		if len(unmatched) > 0 {
			names := make([]string, 0, len(unmatched))
			for n := range unmatched {
				names = append(names, fmt.Sprintf("%q", n))
			}
			sort.Strings(names)
			fmt.Fprintf(e.stdout, "series in the files that no air handler maps: %s\n", strings.Join(names, ", "))
		}
	} else {
		to := time.Now()
		if *toS != "" {
			if to, err = parseTime(*toS, cfg.Location); err != nil {
				return usagef("--to: %v", err)
			}
		}
		from := to.Add(-7 * 24 * time.Hour)
		if *fromS != "" {
			if from, err = parseTime(*fromS, cfg.Location); err != nil {
				return usagef("--from: %v", err)
			}
		}
		st, err := openStore(ctx, cfg, true, e.log)
		if err != nil {
			return err
		}
		defer st.Close()
		r, missing := st.reader()
		fmt.Fprintf(e.stdout, "store window %s .. %s\n", from.In(cfg.Location).Format(time.RFC3339), to.In(cfg.Location).Format(time.RFC3339))
		for _, pc := range checks {
			t0 := pc.targets[0]
			err := r.ReadSeries(ctx, t0.Ref, t0.Kind, from, to, func(s ingest.Sample) error {
				pc.add(s.Time, t0.Unit.FromSI(s.Value)) // the store holds SI
				return nil
			})
			if err != nil && !missing(err) {
				return fmt.Errorf("read %s: %w", pc.name, err)
			}
		}
	}
	return printChecks(e.stdout, cfg, checks)
}

func printChecks(w io.Writer, cfg *agent.Config, checks map[string]*pointCheck) error {
	type row struct {
		ahu, role string
		pc        *pointCheck
	}
	var rows []row
	for _, pc := range checks {
		for _, t := range pc.targets {
			rows = append(rows, row{t.AHU, string(t.Role), pc})
		}
	}
	sort.Slice(rows, func(i, j int) bool {
		if rows[i].ahu != rows[j].ahu {
			return rows[i].ahu < rows[j].ahu
		}
		return rows[i].role < rows[j].role
	})
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "air handler\trole\tpoint\tunit\tsamples\tfirst\tlast\tinterval\tout of range\tnote")
	problems := 0
	for _, r := range rows {
		pc := r.pc
		note := pc.unitNote()
		first, last, iv, oor := "-", "-", "-", "-"
		if pc.n > 0 {
			first = pc.first.In(cfg.Location).Format("2006-01-02 15:04")
			last = pc.last.In(cfg.Location).Format("2006-01-02 15:04")
			if d := pc.interval(); d > 0 {
				iv = d.String()
			}
			oor = fmt.Sprintf("%.1f%%", 100*float64(pc.outOfRange)/float64(pc.n))
		} else {
			note = "no samples found"
		}
		if note != "" || pc.n > 0 && pc.outOfRange > pc.n/100 {
			problems++
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\n", r.ahu, r.role, pc.name, pc.targets[0].Ref.Unit, pc.n, first, last, iv, oor, note)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if problems > 0 {
		fmt.Fprintf(w, "%d point(s) need a look (see the note and out-of-range columns)\n", problems)
	}
	return nil
}
