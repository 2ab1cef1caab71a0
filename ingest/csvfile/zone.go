package csvfile

import (
	"math"
	"time"
)

// wallKind says how many instants a local wall time names.
type wallKind uint8

const (
	wallOne  wallKind = iota // the usual case
	wallTwo                  // the repeated hour after clocks go back
	wallNone                 // the skipped hour when clocks go forward
)

// wallResolver turns wall-clock seconds (seconds since 1970-01-01 00:00 on
// the local clock) into instants in one location.
//
// Looking the offset up in the zone's transition table for every row costs
// more than parsing the row, so the resolver keeps the last zone period it
// met as a window of wall times [lo, hi) that map to instants by one fixed
// offset and that are neither repeated nor skipped. Rows inside the window
// cost one comparison and a subtraction; only rows near a transition take
// the slow path, which also refills the window. A trend log crosses a
// transition twice a year, so a year of one-minute rows takes the slow path
// a few hundred times.
type wallResolver struct {
	loc    *time.Location
	lo, hi int64
	off    int64
	ok     bool
}

func offsetAt(loc *time.Location, u int64) int64 {
	_, off := time.Unix(u, 0).In(loc).Zone()
	return int64(off)
}

// resolve returns the earlier and the later instant that wall names (equal
// when there is one) and how many there are.
func (z *wallResolver) resolve(wall int64) (early, late int64, k wallKind) {
	if z.ok && wall >= z.lo && wall < z.hi {
		u := wall - z.off
		return u, u, wallOne
	}
	return z.slow(wall)
}

func (z *wallResolver) slow(wall int64) (early, late int64, k wallKind) {
	// Offsets a day either side cover both sides of any transition near
	// wall: real zones never change offset twice within two days.
	o1 := offsetAt(z.loc, wall-secondsPerDay)
	o2 := offsetAt(z.loc, wall+secondsPerDay)
	v1 := offsetAt(z.loc, wall-o1) == o1
	v2 := o2 != o1 && offsetAt(z.loc, wall-o2) == o2
	switch {
	case v1 && v2:
		early, late = wall-max(o1, o2), wall-min(o1, o2)
		k = wallTwo
	case v1:
		early, late = wall-o1, wall-o1
	case v2:
		early, late = wall-o2, wall-o2
	default:
		// In the gap: refill from the period after it, so that the rows
		// that follow the gap take the fast path.
		z.fill(wall - min(o1, o2))
		return 0, 0, wallNone
	}
	z.fill(late)
	return early, late, k
}

// fill sets the window to the zone period that holds instant u, shrunk by
// the repeated or skipped wall times at either end.
func (z *wallResolver) fill(u int64) {
	t := time.Unix(u, 0).In(z.loc)
	_, off := t.Zone()
	start, end := t.ZoneBounds()
	z.off = int64(off)
	z.lo, z.hi = math.MinInt64, math.MaxInt64
	if !start.IsZero() {
		s := start.Unix()
		z.lo = s + max(z.off, offsetAt(z.loc, s-1))
	}
	if !end.IsZero() {
		e := end.Unix()
		z.hi = e + min(z.off, offsetAt(z.loc, e))
	}
	z.ok = true
}

// transitionAfter returns the instant at which the offset in force at u
// ends, identifying a repeated hour.
func transitionAfter(loc *time.Location, u int64) int64 {
	_, end := time.Unix(u, 0).In(loc).ZoneBounds()
	if end.IsZero() {
		return math.MaxInt64
	}
	return end.Unix()
}

// foldState tracks one pass through a repeated hour: the first pass takes
// the earlier offset, and once wall time steps backwards inside the repeated
// hour, the rows take the later one.
type foldState struct {
	trans  int64 // the transition this state belongs to
	second bool
	last   int64 // wall time of the previous row in the repeated hour
}

// pick chooses between early and late for a wall time in the repeated hour
// that ends at trans.
func (f *foldState) pick(wall, trans int64) (later bool) {
	if f.trans != trans {
		*f = foldState{trans: trans, last: wall}
		return false
	}
	if !f.second && wall < f.last {
		f.second = true
	}
	f.last = wall
	return f.second
}
