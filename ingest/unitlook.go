package ingest

import (
	"math"
	"sync"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// unitLook tells when a series' values look logged in another unit than
// the configured one, by the rule "dewline check" states in its note
// column, the analysis applies hour by hour and "dewline draft" applies
// to an export's declared unit (metrics.OtherUnit): of at least ten raw
// values, at most half are typical of the role (metrics.RoleSpec.Typical)
// under the configured unit, and another unit of the kind makes 30 points
// more of them typical, a decimal multiple of the configured unit first
// (common practice, no source).
//
// The rule is applied to millions of values, so each unit's typical range
// is turned once into the exact range of the values as they arrive (raw
// in the logged unit, or SI converted from the configured unit), where the
// check is two comparisons: see typicalRange.
type unitLook struct {
	units []psychro.Unit // every unit of the role's kind
	conf  int            // index of the configured unit in units, -1 when not one of them
	raw   []valueRange   // by unit: the raw values x with units[i].ToSI(x) typical
	si    []valueRange   // by unit: the SI values v with units[i].ToSI(units[conf].FromSI(v)) typical
}

// valueRange is the closed range lo..hi; lo > hi holds no value.
type valueRange struct{ lo, hi float64 }

// unitTally counts raw values: n in all, typ[i] typical under units[i].
type unitTally struct {
	n   int
	typ []int
}

// unitLooks keeps the looks made, by role and configured unit: a look is
// never changed once made (tallies are the caller's), and its ranges take
// a few thousand conversions to find, once per role and unit rather than
// once per air handler and run.
var unitLooks sync.Map // unitLookKey -> *unitLook

type unitLookKey struct {
	spec metrics.RoleSpec
	conf string
}

// newUnitLook returns the look at a role's values configured in conf.
func newUnitLook(spec metrics.RoleSpec, conf string) *unitLook {
	k := unitLookKey{spec, conf}
	if l, ok := unitLooks.Load(k); ok {
		return l.(*unitLook)
	}
	l, _ := unitLooks.LoadOrStore(k, makeUnitLook(spec, conf))
	return l.(*unitLook)
}

// makeUnitLook prepares the look at a role's values configured in conf.
func makeUnitLook(spec metrics.RoleSpec, conf string) *unitLook {
	l := &unitLook{conf: -1}
	for _, name := range psychro.UnitNames(spec.Kind) {
		u, err := psychro.LookupUnit(spec.Kind, name)
		if err != nil {
			continue
		}
		if name == conf {
			l.conf = len(l.units)
		}
		l.units = append(l.units, u)
	}
	for _, u := range l.units {
		l.raw = append(l.raw, typicalRange(spec, u.ToSI))
	}
	if l.conf >= 0 {
		c := l.units[l.conf]
		for _, u := range l.units {
			l.si = append(l.si, typicalRange(spec, func(v float64) float64 { return u.ToSI(c.FromSI(v)) }))
		}
	}
	return l
}

// typicalRange returns the range of the finite values x for which
// spec.Typical(f(x)) holds, f being a unit conversion: additions,
// subtractions, and multiplications and divisions by positive constants,
// each rounded to nearest, so f never decreases as x grows (each rounded
// step keeps the order of its operands). The x that pass are therefore
// one range, and its ends are found by bisection over the ordered
// float64s: x passes exactly when it lies in the range, to the last bit
// (TestUnitLook_RangesAreExact).
func typicalRange(spec metrics.RoleSpec, f func(float64) float64) valueRange {
	first, ok := firstKey(func(x float64) bool { return f(x) >= spec.TypMin })
	if !ok {
		return valueRange{math.Inf(1), math.Inf(-1)}
	}
	// The last key converting to at most TypMax is the one before the
	// first converting to more.
	above, ok := firstKey(func(x float64) bool { return f(x) > spec.TypMax })
	last := orderKey(math.MaxFloat64)
	if ok {
		last = above - 1
	}
	return valueRange{fromOrderKey(first), fromOrderKey(last)}
}

// firstKey returns the smallest key of a finite float64 whose value
// passes, for a test that, once passed, passes for every larger value;
// false when none does.
func firstKey(pass func(float64) bool) (int64, bool) {
	a, b := orderKey(-math.MaxFloat64), orderKey(math.MaxFloat64)
	if !pass(fromOrderKey(b)) {
		return 0, false
	}
	for a < b {
		m := a + int64((uint64(b)-uint64(a))/2) // b-a may not fit an int64
		if pass(fromOrderKey(m)) {
			b = m
		} else {
			a = m + 1
		}
	}
	return a, true
}

// orderKey maps a float64 that is not NaN to an integer in the same order
// (-0 and +0 to 0); fromOrderKey maps it back.
func orderKey(x float64) int64 {
	u := math.Float64bits(x)
	if u>>63 == 1 {
		return -int64(u &^ (1 << 63))
	}
	return int64(u)
}

func fromOrderKey(k int64) float64 {
	if k < 0 {
		return math.Float64frombits(uint64(-k) | 1<<63)
	}
	return math.Float64frombits(uint64(k))
}

func (l *unitLook) tally() unitTally { return unitTally{typ: make([]int, len(l.units))} }

// add counts one raw value (in the unit the series is logged in).
func (l *unitLook) add(t *unitTally, raw float64) { t.count(l.raw, raw) }

// addSI counts one SI value converted from the configured unit, as the
// raw value units[conf].FromSI(v) would count; the configured unit must be
// one of the kind's (conf >= 0).
func (l *unitLook) addSI(t *unitTally, v float64) { t.count(l.si, v) }

func (t *unitTally) count(rs []valueRange, x float64) {
	t.n++
	typ := t.typ[:len(rs)]
	for i, r := range rs {
		if x >= r.lo && x <= r.hi {
			typ[i]++
		}
	}
}

// other returns the unit the tally's values look logged in when the rule
// holds (ok), with the shares typical under it and under the configured
// one: metrics.OtherUnit, the rule dewline draft applies too.
func (l *unitLook) other(t unitTally) (best psychro.Unit, bestShare, confShare float64, ok bool) {
	if l.conf < 0 || t.n == 0 {
		return psychro.Unit{}, 0, 0, false
	}
	n := float64(t.n)
	i, ok := metrics.OtherUnit(l.units, l.conf, t.n, func(i int) float64 { return float64(t.typ[i]) / n })
	if !ok {
		return psychro.Unit{}, 0, 0, false
	}
	return l.units[i], float64(t.typ[i]) / n, float64(t.typ[l.conf]) / n, true
}
