package ingest

import (
	"fmt"
	"math"
	"sort"
	"sync"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Series is one role's samples for alignment: SI values, ideally in time
// order. It should start up to Stale before the first hour, so the value
// logged just before the hour can hold into it.
type Series struct {
	Role    metrics.Role
	Stale   time.Duration // how long a sample may hold; 0 takes the role's default
	Samples []Sample
}

// Align puts each role's samples onto a grid of step and calls fn once per
// hour from the hour of from, for hours hours, in order. See Aligner for
// the rules.
func Align(ahu string, from time.Time, hours int, step time.Duration, series []Series, fn func(*metrics.Hour) error) error {
	stale := make(map[metrics.Role]time.Duration, len(series))
	for _, s := range series {
		stale[s.Role] = s.Stale
	}
	a, err := NewAligner(ahu, from, step, stale)
	if err != nil {
		return err
	}
	for _, s := range series {
		for _, smp := range s.Samples {
			a.Push(s.Role, smp)
		}
	}
	return a.Emit(from.UTC().Truncate(time.Hour).Add(time.Duration(hours)*time.Hour), fn)
}

// Aligner turns streams of samples into hours on a grid, incrementally, so
// memory stays flat however long the period: push samples as they are read
// and emit the hours that are complete.
//
// A sample holds from its time until the next sample, but never longer than
// its role's stale limit; the value of a step is the one holding at the
// step's midpoint, so interval logs on the minute and change-of-value logs
// at odd seconds both land where they belong. Samples that are NaN,
// infinite or outside the role's physical range are excluded and counted;
// they also end the hold of the sample before them, because at that moment
// the true value is unknown. Nothing is clipped or filled.
//
// Humidity is held as moisture, not as RH: an RH sample belongs to the
// temperature of its own instant. When the RH role's temperature (see
// metrics.PairedTemperature) is aligned too, each RH sample is turned into a
// vapour pressure with the temperature holding when it was logged (the
// first grid step at or after it), that vapour pressure holds, and each
// step's RH is the held vapour pressure over the saturation pressure at the
// step's own temperature (capped at 100 %). Holding RH while the
// temperature moves would bias the humidity ratio by about 6 % per kelvin.
//
// A sensor that repeats exactly the same value is flagged whatever its
// logging interval: when every sample of the hour belongs to one run of
// identical values, RoleQuality.Flat says the hour has ten or more of them
// and RoleQuality.FlatFor how long the run lasts, counting the samples
// already queued after the hour (up to FlatLookahead of them are available
// when the input runs that far ahead).
type Aligner struct {
	ahu     string
	step    time.Duration
	n       int
	next    time.Time // start of the next hour to emit
	base    time.Time // the first hour: times inside are nanoseconds from it
	baseSec int64     // base.Unix(), for since
	nextNs  int64     // next, from base
	roles   []*roleStream
	index   map[metrics.Role]int
	late    int
	emitted bool // an hour has been emitted: samples before next are late

	cols [][]float64 // the hour being aligned: each role's steps, by stream index

	// hours handed back by Recycle, filled again by the next hours (a
	// consumer may recycle from another goroutine)
	freeMu sync.Mutex
	free   []*metrics.Hour
}

// Times inside the aligner are nanoseconds from its first hour (time.Time's
// Sub saturates at about 292 years either side): a sample is compared with
// every grid step it may hold for, and int64 arithmetic is several times
// cheaper than time.Time's.
type tsample struct {
	ns int64
	v  float64
}

type roleStream struct {
	role  metrics.Role
	spec  metrics.RoleSpec
	stale int64     // ns
	queue []tsample // pushed, not yet consumed, in time order
	last  int64
	cur   tsample
	good  bool // cur is usable
	has   bool

	// humidity held as vapour pressure (paired RH roles)
	temp    int     // index of the paired temperature stream, -1 when none
	pw      float64 // vapour pressure of cur, Pa; NaN until a temperature was seen
	pending bool    // cur awaits the temperature of its instant
	memoT   float64 // the last temperature moisture converted, and its p_ws
	memoPws float64

	// the unit the values look logged in (nil: not judged)
	look   *unitLook
	hourly []unitTally // the last unitLookHours hours' tallies, this hour's last

	// the run of identical samples the stream is in
	runVal   float64
	runFirst int64
	runLast  int64
	runN     int
}

// FlatSpan is how long a run of identical samples must last before a
// humidity or outdoor sensor counts as flat whatever its logging interval
// (metrics.FlatSpan); FlatLookahead is how
// far after an hour a reader should have pushed samples before emitting it,
// so a run that starts in the hour can be seen to go on (common practice,
// no source: an RH or temperature sensor in a working air handler does not
// repeat its reading exactly for three hours).
const (
	FlatLookahead = 3 * time.Hour
	flatMinRun    = 6 // samples in a run of FlatSpan
	flatMinHour   = 10
)

// NewAligner aligns the given roles (with their stale limits; 0 takes the
// role's default) from the hour of from on a grid of step, which must
// divide an hour.
func NewAligner(ahu string, from time.Time, step time.Duration, roles map[metrics.Role]time.Duration) (*Aligner, error) {
	if step <= 0 || time.Hour%step != 0 {
		return nil, fmt.Errorf("align %s: grid step %v does not divide an hour", ahu, step)
	}
	next := from.UTC().Truncate(time.Hour)
	a := &Aligner{ahu: ahu, step: step, n: int(time.Hour / step), next: next, base: next, baseSec: next.Unix(), index: map[metrics.Role]int{}}
	names := make([]string, 0, len(roles))
	for r := range roles {
		names = append(names, string(r))
	}
	sort.Strings(names)
	for _, name := range names {
		r := metrics.Role(name)
		spec, ok := metrics.LookupRole(name)
		if !ok {
			return nil, fmt.Errorf("align %s: unknown role %q", ahu, name)
		}
		st := roles[r]
		if st <= 0 {
			st = spec.Stale
		}
		a.index[r] = len(a.roles)
		a.roles = append(a.roles, &roleStream{role: r, spec: spec, stale: int64(st), temp: -1, memoT: math.NaN()})
	}
	// Humidity roles follow their temperatures, so each hour aligns the
	// temperature before the RH that is converted with it.
	for _, r := range a.roles {
		if tr, ok := metrics.PairedTemperature(r.role); ok {
			if j, ok := a.index[tr]; ok {
				r.temp = j
			}
		}
	}
	sort.SliceStable(a.roles, func(i, j int) bool { return a.roles[i].temp < 0 && a.roles[j].temp >= 0 })
	for i, r := range a.roles {
		a.index[r.role] = i
	}
	for _, r := range a.roles {
		if r.temp >= 0 {
			tr, _ := metrics.PairedTemperature(r.role)
			r.temp = a.index[tr]
		}
	}
	a.cols = make([][]float64, len(a.roles))
	return a, nil
}

// unitLookHours is how many hours (this one and those before it) the
// aligner judges a role's unit over: a day, so that a series logged every
// 15 minutes has the samples the rule asks for, and one cold or idle hour
// alone does not read as a wrong unit.
const unitLookHours = 24

// LookAtUnits has the aligner judge, hour by hour, whether a role's values
// look logged in another unit than its configured one (units: the
// configured unit name by role; the samples pushed are SI, converted from
// it): RoleQuality.OtherUnit names that unit when, over the hour and the
// day before it, the rule of "dewline check" holds and the hour itself
// does not fit its configured unit. Call it before the first Emit.
func (a *Aligner) LookAtUnits(units map[metrics.Role]string) {
	for _, r := range a.roles {
		if name, ok := units[r.role]; ok && name != "" {
			if u, err := psychro.LookupUnit(r.spec.Kind, name); err == nil {
				r.look = newUnitLook(r.spec, u.Name)
				if r.look.conf < 0 {
					r.look = nil
				}
			}
		}
	}
}

// Next returns the start of the next hour Emit will produce.
func (a *Aligner) Next() time.Time { return a.next }

// Late returns how many samples arrived for hours already emitted and were dropped.
func (a *Aligner) Late() int { return a.late }

// Push adds a sample of role. Samples of one role should come in time
// order; an earlier one is put in its place while its hour is still open.
// Once an hour has been emitted, samples before the next hour are dropped
// and counted by Late. Samples of unknown roles are ignored.
func (a *Aligner) Push(role metrics.Role, s Sample) {
	i, ok := a.index[role]
	if !ok {
		return
	}
	a.push(i, s.Time, s.Value)
}

// roleIndex returns the index push takes for role, -1 when it is not aligned.
func (a *Aligner) roleIndex(role metrics.Role) int {
	if i, ok := a.index[role]; ok {
		return i
	}
	return -1
}

// push is Push for the stream at index i.
func (a *Aligner) push(i int, t time.Time, v float64) { a.pushNs(i, a.since(t), v) }

// since returns t in the aligner's nanoseconds, t.Sub(base): from the
// seconds and nanoseconds of the two within 136 years of each other (base
// is a whole hour, without a monotonic clock reading, so Sub would take
// the same wall times), else by Sub, which saturates
// (TestAligner_SinceIsSub).
func (a *Aligner) since(t time.Time) int64 {
	if s := t.Unix() - a.baseSec; s > -1<<32 && s < 1<<32 {
		return s*int64(time.Second) + int64(t.Nanosecond())
	}
	return int64(t.Sub(a.base))
}

// pushNs is push with the time already in the aligner's nanoseconds.
func (a *Aligner) pushNs(i int, ns int64, v float64) {
	r := a.roles[i]
	switch {
	case a.emitted && ns < a.nextNs:
		a.late++
	case len(r.queue) == 0 || ns >= r.last:
		r.queue = append(r.queue, tsample{ns, v})
		r.last = ns
	default:
		j := sort.Search(len(r.queue), func(k int) bool { return r.queue[k].ns > ns })
		r.queue = append(r.queue, tsample{})
		copy(r.queue[j+1:], r.queue[j:])
		r.queue[j] = tsample{ns, v}
	}
}

// Emit produces, in order, every hour that ends at or before until, and
// calls fn for each. Call it once the input has been read up to until.
func (a *Aligner) Emit(until time.Time, fn func(*metrics.Hour) error) error {
	for !a.next.Add(time.Hour).After(until) {
		if err := fn(a.hour()); err != nil {
			return err
		}
		a.next = a.next.Add(time.Hour)
		a.nextNs += int64(time.Hour)
		a.emitted = true
	}
	return nil
}

// maxFree bounds the recycled hours an aligner keeps: a few more than a
// pool of workers has in flight (common practice, no source).
const maxFree = 64

// Recycle hands back an hour this aligner emitted once its consumer is
// done with it: a later hour fills its maps and slices again instead of
// allocating new ones. Nothing may use h, its Values or its Quality after
// the call. Hours of another aligner or shape are ignored. It is safe to
// call from any goroutine.
func (a *Aligner) Recycle(h *metrics.Hour) {
	if h == nil || h.AHU != a.ahu || h.Step != a.step || len(h.Values) != len(a.roles) || len(h.Quality) != len(a.roles) {
		return
	}
	a.freeMu.Lock()
	if len(a.free) < maxFree {
		a.free = append(a.free, h)
	}
	a.freeMu.Unlock()
}

// newHour returns an hour to fill with every role's steps in a.cols: a
// recycled one when there is one of the same roles, else a new one.
func (a *Aligner) newHour() *metrics.Hour {
	var h *metrics.Hour
	a.freeMu.Lock()
	if n := len(a.free); n > 0 {
		h = a.free[n-1]
		a.free[n-1] = nil
		a.free = a.free[:n-1]
	}
	a.freeMu.Unlock()
	if h != nil {
		ok := true
		for i, r := range a.roles {
			v, has := h.Values[r.role]
			if !has || len(v) != a.n {
				ok = false
				break
			}
			a.cols[i] = v
		}
		if ok {
			h.Start = a.next
			return h
		}
	}
	h = &metrics.Hour{
		AHU: a.ahu, Start: a.next, Step: a.step,
		Values:  make(map[metrics.Role][]float64, len(a.roles)),
		Quality: make(map[metrics.Role]metrics.RoleQuality, len(a.roles)),
	}
	// One allocation for every role's steps; each role's slice is capped at
	// its own length.
	slab := make([]float64, a.n*len(a.roles))
	for i := range a.roles {
		a.cols[i] = slab[i*a.n : (i+1)*a.n : (i+1)*a.n]
	}
	return h
}

// hour aligns the hour starting at a.next and consumes its samples.
func (a *Aligner) hour() *metrics.Hour {
	hs, he := a.nextNs, a.nextNs+int64(time.Hour)
	step := int64(a.step)
	h := a.newHour()
	for ri, r := range a.roles {
		vals := a.cols[ri]
		var temps []float64
		if r.temp >= 0 {
			temps = a.cols[r.temp]
		}
		c := consumer{r: r, hs: hs, he: he}
		if r.look != nil {
			c.tally = r.look.tally()
		}
		present, k := 0, 0
		for i := 0; i < a.n; i++ {
			mid := hs + int64(i)*step + step/2
			for k < len(r.queue) && r.queue[k].ns <= mid {
				c.consume(r.queue[k])
				k++
			}
			if r.has && r.good && mid-r.cur.ns <= r.stale {
				v := r.cur.v
				if temps != nil {
					v = r.moisture(temps[i])
				}
				vals[i] = v
				if !math.IsNaN(v) {
					present++
				}
			} else {
				vals[i] = math.NaN()
			}
		}
		// Samples after the last midpoint but inside the hour count here
		// and update the held value for the next hour.
		for k < len(r.queue) && r.queue[k].ns < he {
			c.consume(r.queue[k])
			k++
		}
		// Drop what was consumed; keep the backing array small.
		r.queue = append(r.queue[:0], r.queue[k:]...)
		q := c.q
		q.Coverage = float64(present) / float64(a.n)
		q.Flat, q.FlatFor = r.flat(q.Samples, c.firstIn, c.hasFirst)
		if r.look != nil {
			q.OtherUnit = r.otherUnit(c.tally)
		}
		h.Values[r.role] = vals
		h.Quality[r.role] = q
	}
	return h
}

// consumer takes one role's samples in order during an hour [hs, he).
type consumer struct {
	r        *roleStream
	hs, he   int64
	q        metrics.RoleQuality
	firstIn  int64 // first sample inside the hour
	hasFirst bool
	tally    unitTally // the hour's values by the unit they look logged in
}

func (c *consumer) consume(s tsample) {
	r := c.r
	finite := !math.IsNaN(s.v) && !math.IsInf(s.v, 0)
	plausible := finite && r.spec.Plausible(s.v)
	if s.ns >= c.hs && s.ns < c.he {
		c.q.Samples++
		if !c.hasFirst {
			c.firstIn, c.hasFirst = s.ns, true
		}
		if !finite {
			c.q.NotFinite++
		} else {
			if !plausible {
				c.q.OutOfRange++
			}
			if r.look != nil {
				r.look.addSI(&c.tally, s.v)
			}
		}
	}
	r.cur, r.good, r.has = s, plausible, true
	r.pending, r.pw = r.temp >= 0, math.NaN()
	switch {
	case !r.good:
		r.runN = 0
	case r.runN > 0 && s.v == r.runVal:
		r.runN++
		r.runLast = s.ns
	default:
		r.runVal, r.runFirst, r.runLast, r.runN = s.v, s.ns, s.ns, 1
	}
}

// otherUnit keeps the hour's tally with the day's before it and names the
// unit the values look logged in when, over them, the rule holds and the
// hour's own values do not fit the configured unit either.
func (r *roleStream) otherUnit(hour unitTally) string {
	if len(r.hourly) == unitLookHours {
		copy(r.hourly, r.hourly[1:])
		r.hourly = r.hourly[:unitLookHours-1]
	}
	r.hourly = append(r.hourly, hour)
	if hour.n == 0 {
		return ""
	}
	if conf := float64(hour.typ[r.look.conf]) / float64(hour.n); conf > metrics.UnitMaxConf {
		return ""
	}
	day := r.look.tally()
	for _, t := range r.hourly {
		day.n += t.n
		for i, c := range t.typ {
			day.typ[i] += c
		}
	}
	if u, _, _, ok := r.look.other(day); ok {
		return u.Name
	}
	return ""
}

// moisture returns the RH at a step whose temperature is tC, from the
// vapour pressure of the held sample (fixed at the first step with a
// temperature at or after the sample's instant). NaN when no temperature
// has been seen for the sample yet.
func (r *roleStream) moisture(tC float64) float64 {
	if math.IsNaN(tC) {
		return math.NaN()
	}
	// Logged temperatures repeat (a set point, a coarse sensor, a value
	// held over several steps): the last one's p_ws is remembered.
	pws := r.memoPws
	if tC != r.memoT {
		p, err := psychro.SatVapPressure(tC)
		if err != nil || p <= 0 {
			return math.NaN()
		}
		r.memoT, r.memoPws, pws = tC, p, p
	}
	if r.pending {
		r.pw, r.pending = r.cur.v*pws, false
	}
	if math.IsNaN(r.pw) {
		return math.NaN()
	}
	return math.Min(1, r.pw/pws)
}

// flat reports whether the hour's samples all belong to the current run of
// identical values, and then whether the hour alone has ten or more of
// them, and how long the run lasts including the samples queued after the
// hour (0 when it has fewer than six samples).
func (r *roleStream) flat(samples int, firstIn int64, hasFirst bool) (bool, time.Duration) {
	if samples == 0 || r.runN == 0 || !hasFirst || r.runFirst > firstIn {
		return false, 0
	}
	n, last := r.runN, r.runLast
	for _, s := range r.queue {
		if s.v != r.runVal {
			break
		}
		n++
		last = s.ns
	}
	span := time.Duration(0)
	if n >= flatMinRun {
		span = time.Duration(last - r.runFirst)
	}
	return samples >= flatMinHour, span
}
