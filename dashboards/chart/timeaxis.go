package chart

import "time"

// timeTick is one tick of a time axis: the instant, its label and, where
// the day (or year) changes, a second line with the date.
type timeTick struct {
	t      time.Time
	label  string
	second string
}

// tickUnit is a candidate tick spacing: n minutes, hours, days, weeks or months.
type tickUnit struct {
	kind byte // 'm' minute, 'h' hour, 'd' day, 'w' week (Mondays), 'M' month
	n    int
	d    time.Duration // nominal length, to count ticks
}

var tickUnits = []tickUnit{
	{'m', 5, 5 * time.Minute}, {'m', 10, 10 * time.Minute}, {'m', 15, 15 * time.Minute}, {'m', 30, 30 * time.Minute},
	{'h', 1, time.Hour}, {'h', 2, 2 * time.Hour}, {'h', 3, 3 * time.Hour}, {'h', 6, 6 * time.Hour}, {'h', 12, 12 * time.Hour},
	{'d', 1, 24 * time.Hour}, {'d', 2, 48 * time.Hour},
	{'w', 1, 7 * 24 * time.Hour}, {'w', 2, 14 * 24 * time.Hour},
	{'M', 1, 30 * 24 * time.Hour}, {'M', 3, 91 * 24 * time.Hour}, {'M', 6, 182 * 24 * time.Hour}, {'M', 12, 365 * 24 * time.Hour},
}

// timeTicks returns ticks between t0 and t1 (inclusive) on local-time
// boundaries of loc: whole minutes, hours, local midnights, Mondays or first
// days of months, with at most maxN ticks. Because candidates are built from
// local wall-clock fields with time.Date, ticks stay on round local times
// across daylight-saving changes and in zones with half-hour offsets; an
// hour that does not exist locally is skipped and a repeated one appears once.
func timeTicks(t0, t1 time.Time, loc *time.Location, maxN int) []timeTick {
	if loc == nil {
		loc = time.UTC
	}
	if !t1.After(t0) || maxN < 1 {
		return nil
	}
	span := t1.Sub(t0)
	unit := tickUnits[len(tickUnits)-1]
	for _, u := range tickUnits {
		if span/u.d+1 <= time.Duration(maxN) {
			unit = u
			break
		}
	}
	l0 := t0.In(loc)
	y, mo, d := l0.Date()
	var out []timeTick
	var prev time.Time
	add := func(t time.Time) bool {
		if t.After(t1) {
			return false
		}
		if t.Before(t0) || (!prev.IsZero() && !t.After(prev)) {
			return true
		}
		out = append(out, timeTick{t: t})
		prev = t
		return true
	}
	const guard = 20000 // candidates; the longest span at the largest unit is far below
	switch unit.kind {
	case 'm', 'h':
		step, n := 1, int(span/time.Minute)+3
		if unit.kind == 'h' {
			step, n = 60, int(span/time.Hour)+3
		}
		for k := 0; k < n; k++ {
			t := time.Date(y, mo, d, l0.Hour(), k*step, 0, 0, loc)
			lt := t.In(loc)
			ok := lt.Minute()%unit.n == 0 && lt.Second() == 0
			if unit.kind == 'h' {
				ok = lt.Minute() == 0 && lt.Hour()%unit.n == 0
			}
			if ok && !add(t) {
				break
			}
		}
	case 'd', 'w':
		for k := 0; k < guard; k++ {
			t := time.Date(y, mo, d+k, 0, 0, 0, 0, loc)
			lt := t.In(loc)
			var ok bool
			if unit.kind == 'd' {
				ok = dayNumber(lt)%unit.n == 0
			} else {
				ok = lt.Weekday() == time.Monday && (dayNumber(lt)/7)%unit.n == 0
			}
			if ok && !add(t) {
				break
			}
		}
	default:
		for k := 0; k < guard; k++ {
			t := time.Date(y, mo+time.Month(k), 1, 0, 0, 0, 0, loc)
			if (int(t.In(loc).Month())-1)%unit.n == 0 && !add(t) {
				break
			}
		}
	}
	if len(out) > maxN { // thin out (only when boundaries are denser than nominal)
		k := (len(out) + maxN - 1) / maxN
		kept := out[:0]
		for i := 0; i < len(out); i += k {
			kept = append(kept, out[i])
		}
		out = kept
	}
	labelTicks(out, unit, loc)
	return out
}

// dayNumber counts local calendar days from a fixed origin, so that every
// n-th day is the same set of days whatever the chart's start.
func dayNumber(t time.Time) int {
	y, m, d := t.Date()
	return int(time.Date(y, m, d, 0, 0, 0, 0, time.UTC).Unix() / 86400)
}

func labelTicks(ts []timeTick, u tickUnit, loc *time.Location) {
	var py, pd int
	var pm time.Month
	for i := range ts {
		lt := ts[i].t.In(loc)
		y, m, d := lt.Date()
		newDay := i == 0 || y != py || m != pm || d != pd
		newYear := i == 0 || y != py
		switch u.kind {
		case 'm', 'h':
			ts[i].label = lt.Format("15:04")
			if newDay {
				ts[i].second = lt.Format("Mon 2 Jan")
			}
		case 'd', 'w':
			ts[i].label = lt.Format("2 Jan")
			if u.kind == 'd' && u.n == 1 {
				ts[i].second = lt.Format("Mon")
			} else if newYear {
				ts[i].second = lt.Format("2006")
			}
		default:
			ts[i].label = lt.Format("Jan")
			if newYear {
				ts[i].second = lt.Format("2006")
			}
		}
		py, pm, pd = y, m, d
	}
}
