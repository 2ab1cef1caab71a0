package demo

import (
	"bufio"
	"compress/gzip"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"sync"
	"time"

	"github.com/dewline/dewline/ingest/outfile"
	"github.com/dewline/dewline/psychro"
)

// pointLog decides when one point is logged.
type pointLog struct {
	def     *pointDef
	val     *float64
	last    float64
	lastMin int
	has     bool
}

// exportFile is one trend export being written.
type exportFile struct {
	name       string
	path       string
	f          *outfile.File // written aside, put in place by close
	zw         *gzip.Writer
	w          *bufio.Writer
	buf        []byte
	wide       bool
	logs       []*pointLog
	airHandler *airHandlerSim // nil for the weather station
	rows       int
	header     string
}

const flushAt = 64 << 10

func (e *exportFile) open(dir string) error {
	e.path = filepath.Join(dir, e.name)
	f, err := outfile.Create(e.path)
	if err != nil {
		return fmt.Errorf("demo: create export: %w", err)
	}
	e.f = f
	var dst io.Writer = f
	if filepath.Ext(e.name) == ".gz" {
		// The gzip header carries no name and no time, so the bytes depend
		// on the data alone.
		e.zw, _ = gzip.NewWriterLevel(f, gzip.DefaultCompression)
		dst = e.zw
	}
	e.w = bufio.NewWriterSize(dst, 256<<10)
	e.buf = append(e.buf[:0], e.header...)
	return nil
}

func (e *exportFile) flush(force bool) error {
	if len(e.buf) < flushAt && !force {
		return nil
	}
	if _, err := e.w.Write(e.buf); err != nil {
		return fmt.Errorf("demo: write %s: %w", e.path, err)
	}
	e.buf = e.buf[:0]
	return nil
}

func (e *exportFile) close() error {
	if e.f == nil {
		return nil
	}
	err := e.flush(true)
	if err == nil {
		err = e.w.Flush()
	}
	if e.zw != nil {
		if cerr := e.zw.Close(); err == nil {
			err = cerr
		}
	}
	if err == nil {
		_, err = e.f.Commit()
	} else {
		e.f.Abort()
	}
	e.f = nil
	if err != nil {
		return fmt.Errorf("demo: write %s: %w", e.path, err)
	}
	return nil
}

// abort drops an export that is still open: after a failure, nothing
// half-written takes the place of a previous file.
func (e *exportFile) abort() {
	if e.f != nil {
		e.f.Abort()
		e.f = nil
	}
}

// clock is the local calendar of every minute, shared by the writers.
type clock struct {
	start  time.Time // first minute, spin-up included (UTC)
	wd     []time.Weekday
	h      []float64 // local hours since midnight
	prefix []byte    // "2006-01-02 15:04:" of each minute of the period, prefixLen bytes each
}

const prefixLen = len("2006-01-02 15:04:")

func (c *clock) wallPrefix(i int) []byte { return c.prefix[i*prefixLen : (i+1)*prefixLen] }

func (c *clock) local(j int, loc *time.Location) time.Time {
	return c.start.Add(time.Duration(j) * time.Minute).In(loc)
}

// run simulates the period minute by minute and writes the exports as it
// goes. Each controller's export depends on its own air handler alone, so
// the air handlers run in parallel, each with its own random stream: the
// bytes do not depend on the scheduling.
func (g *generator) run(dir string, sc *Scenario) error {
	total := g.n + spinUp
	start := g.from.Add(-spinUp * time.Minute)
	wx, err := newWeather(g.rng(streamWeather), start, total, g.pPa)
	if err != nil {
		return err
	}
	oa := make([]psychro.State, total)
	clk := &clock{start: start, wd: make([]time.Weekday, total), h: make([]float64, total), prefix: make([]byte, 0, g.n*prefixLen)}
	for j := range total {
		lt := clk.local(j, g.loc)
		clk.wd[j] = lt.Weekday()
		clk.h[j] = float64(lt.Hour()) + float64(lt.Minute())/60
		if j >= spinUp {
			clk.prefix = lt.AppendFormat(clk.prefix, "2006-01-02 15:04:")
		}
		if oa[j], err = psychro.NewStateHumRatio(wx.tC[j], wx.w[j], g.pPa); err != nil {
			return fmt.Errorf("%w: outdoor air: %v", errPhysics, err)
		}
	}
	sims := make([]*airHandlerSim, len(g.airHandlers))
	for k := range g.airHandlers {
		if sims[k], err = newAirHandlerSim(g, k, g.pPa); err != nil {
			return err
		}
	}
	var station [2]float64
	files := g.exportFiles(sims, &station)

	jobs := make([]func() error, 0, len(files))
	for k, s := range sims {
		f := files[k]
		jobs = append(jobs, func() error { return g.runAirHandler(dir, s, f, sc, wx, oa, clk) })
	}
	ws := files[len(files)-1]
	jobs = append(jobs, func() error { return g.runStation(dir, ws, &station, wx, clk) })
	errs := make([]error, len(jobs))
	var wg sync.WaitGroup
	for k, job := range jobs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[k] = job()
		}()
	}
	wg.Wait()
	for _, f := range files {
		f.abort() // after a failure, drop what is open
	}
	if err := errors.Join(errs...); err != nil {
		return err
	}
	for _, f := range files {
		sc.Exports = append(sc.Exports, f.path)
		sc.Rows += f.rows
		st, err := os.Stat(f.path)
		if err != nil {
			return fmt.Errorf("demo: %w", err)
		}
		sc.Bytes += st.Size()
	}
	sc.truth = make([][]hourTruth, len(sims))
	for k, s := range sims {
		sc.truth[k] = s.truth
	}
	return nil
}

// runAirHandler simulates one air handler and writes its controller's export.
func (g *generator) runAirHandler(dir string, s *airHandlerSim, f *exportFile, sc *Scenario, wx *weather, oa []psychro.State, clk *clock) error {
	if err := f.open(dir); err != nil {
		return err
	}
	id := s.d.ID
	var mc minuteCtx
	for j := range len(oa) {
		i := j - spinUp
		mc.i, mc.wd, mc.h = i, clk.wd[j], clk.h[j]
		mc.tOa, mc.wOa, mc.dpOa, mc.sun, mc.oa = wx.tC[j], wx.w[j], wx.dpC[j], wx.sun[j], oa[j]
		mc.offline = i >= 0 && id == sc.Gap.AirHandler && i >= g.gapFrom && i < g.gapTo
		stuck := i >= 0 && id == sc.Stuck.AirHandler && i >= g.stuckFrom && i < g.stuckTo
		if err := s.step(&mc, g.pPa, stuck); err != nil {
			return fmt.Errorf("%s at %s: %w", id, clk.start.Add(time.Duration(j)*time.Minute).Format(time.RFC3339), err)
		}
		if i < 0 {
			continue
		}
		if mc.offline {
			for _, l := range f.logs {
				l.has = false // on return every point logs at once
			}
			continue
		}
		if f.wide {
			if i%intervalMin == 0 {
				f.wideRow(clk.local(j, g.loc))
			}
		} else {
			f.longRows(i, clk.wallPrefix(i))
		}
		if err := f.flush(false); err != nil {
			return err
		}
	}
	return f.close()
}

// runStation writes the weather station's export: the outdoor air with the
// station's own calibration bias and noise.
func (g *generator) runStation(dir string, f *exportFile, station *[2]float64, wx *weather, clk *clock) error {
	if err := f.open(dir); err != nil {
		return err
	}
	rng := g.rng(streamStation)
	bias := [2]float64{0.1 * rng.NormFloat64(), 1.0 * rng.NormFloat64()}
	for j := range len(wx.tC) {
		station[0] = psychro.CToF(wx.tC[j] + bias[0] + 0.03*rng.NormFloat64())
		station[1] = clamp(100*wx.rh[j]+bias[1]+0.2*rng.NormFloat64(), 0, 100)
		i := j - spinUp
		if i < 0 {
			continue
		}
		f.longRows(i, clk.wallPrefix(i))
		if err := f.flush(false); err != nil {
			return err
		}
	}
	return f.close()
}

// exportFiles lays out one export per controller plus the weather station's.
func (g *generator) exportFiles(sims []*airHandlerSim, station *[2]float64) []*exportFile {
	var files []*exportFile
	for k := range g.airHandlers {
		d := &g.airHandlers[k]
		e := &exportFile{name: d.file, wide: d.wide, airHandler: sims[k]}
		for p := range d.points {
			e.logs = append(e.logs, &pointLog{def: &d.points[p], val: &sims[k].read[d.points[p].sig]})
		}
		if d.wide {
			e.header = wideHeader(d.points)
		} else {
			e.header = d.header[0] + "," + d.header[1] + "," + d.header[2] + "," + d.header[3] + "\n"
		}
		files = append(files, e)
	}
	ws := &exportFile{name: weatherFile, header: "Date/Time,Trend,Reading,UOM\n"}
	for p := range weatherPoints {
		ws.logs = append(ws.logs, &pointLog{def: &weatherPoints[p], val: &station[p]})
	}
	files = append(files, ws)
	for _, f := range files {
		if !f.wide { // a wide row keeps the header's column order
			sort.SliceStable(f.logs, func(a, b int) bool { return f.logs[a].def.offset < f.logs[b].def.offset })
		}
	}
	return files
}

func wideHeader(pts []pointDef) string {
	h, u := "Timestamp", ""
	for _, p := range pts {
		h += "," + p.name
		u += "," + p.fileUnit
	}
	return h + "\n" + u + "\n"
}

// longRows appends the rows of minute i of a long export.
func (e *exportFile) longRows(i int, prefix []byte) {
	for _, l := range e.logs {
		d := l.def
		v := round(*l.val, d.decimals)
		due := !l.has || i-l.lastMin >= heartbeatMin
		switch d.mode {
		case logCOV:
			due = due || math.Abs(v-l.last) >= d.deadband-1e-9
		case logBinary:
			due = due || v != l.last
		case logInterval:
			due = i%intervalMin == 0
		}
		if !due {
			continue
		}
		l.last, l.lastMin, l.has = v, i, true
		b := append(e.buf, prefix...)
		b = append(b, byte('0'+d.offset/10), byte('0'+d.offset%10), ',')
		b = append(b, d.name...)
		b = append(b, ',')
		if d.mode == logBinary {
			if v >= 0.5 {
				b = append(b, "On"...)
			} else {
				b = append(b, "Off"...)
			}
		} else {
			b = strconv.AppendFloat(b, v, 'f', d.decimals, 64)
		}
		b = append(b, ',')
		b = append(b, d.fileUnit...)
		e.buf = append(b, '\n')
		e.rows++
	}
}

// wideRow appends a row of a wide export at local time lt.
func (e *exportFile) wideRow(lt time.Time) {
	b := lt.AppendFormat(e.buf, "01/02/2006 3:04:05 PM")
	for _, l := range e.logs {
		b = append(b, ',')
		b = strconv.AppendFloat(b, round(*l.val, l.def.decimals), 'f', l.def.decimals, 64)
	}
	e.buf = append(b, '\n')
	e.rows++
}

// round rounds to dec decimals, without a negative zero.
func round(v float64, dec int) float64 {
	p := math.Pow10(dec)
	return math.Round(v*p)/p + 0
}
