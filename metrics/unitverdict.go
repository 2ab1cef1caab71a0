package metrics

import "github.com/dewline/dewline/psychro"

// The thresholds of OtherUnit (common practice, no source).
const (
	UnitMinSamples = 10   // values before a judgement
	UnitMaxConf    = 0.5  // the configured unit fits at most this share
	unitMargin     = 0.3  // and another fits this much more
	unitTieMargin  = 0.05 // units within this of the best fit equally well
)

// OtherUnit is the one rule by which dewline check (its note column), the
// analysis (the wrong_unit flag) and dewline draft (a LOW mapping with
// the fix) tell that values of a role look logged in another unit than
// units[conf], the configured or declared one. share(i) is the share of
// the n values typical of the role (RoleSpec.Typical) read in units[i].
//
// The rule holds when n is at least UnitMinSamples, at most half the
// values are typical in units[conf], and another unit makes 30 points
// more of them typical. The unit named is the likeliest of those that
// fit within 5 points of the best: one that is a decimal multiple of
// units[conf] (a prefix or scaling slipped: W logged as kW, a fraction
// as %) before a unit of another system that happens to fit as well
// (Btu/h, whose values for the same power are 3.4 times those in W),
// then the larger share, then the first in units. Common practice, no
// source.
func OtherUnit(units []psychro.Unit, conf, n int, share func(i int) float64) (best int, ok bool) {
	if conf < 0 || conf >= len(units) || n < UnitMinSamples {
		return -1, false
	}
	cs := share(conf)
	if cs > UnitMaxConf {
		return -1, false
	}
	top := -1.0
	for i := range units {
		if i != conf {
			top = max(top, share(i))
		}
	}
	if !(top > cs+unitMargin) {
		return -1, false
	}
	best, bestShare, bestDec := -1, 0.0, false
	for i, u := range units {
		if i == conf {
			continue
		}
		s := share(i)
		if !(s > cs+unitMargin) || s < top-unitTieMargin {
			continue
		}
		dec := u.DecimalMultipleOf(units[conf])
		if best < 0 || dec && !bestDec || dec == bestDec && s > bestShare {
			best, bestShare, bestDec = i, s, dec
		}
	}
	return best, best >= 0
}
