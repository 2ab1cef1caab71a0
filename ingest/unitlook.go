package ingest

import (
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// unitLook tells when a series' values look logged in another unit than
// the configured one, by the rule "dewline check" states in its note
// column and the analysis applies hour by hour: of at least minSamples
// raw values, at most half are typical of the role (metrics.RoleSpec.Typical)
// under the configured unit, and another unit of the kind makes 30 points
// more of them typical (common practice, no source).
type unitLook struct {
	spec  metrics.RoleSpec
	units []psychro.Unit // every unit of the role's kind
	conf  int            // index of the configured unit in units, -1 when not one of them
}

// unitTally counts raw values: n in all, typ[i] typical under units[i].
type unitTally struct {
	n   int
	typ []int
}

const (
	unitLookMinSamples = 10  // raw values before a judgement
	unitLookMaxConf    = 0.5 // the configured unit fits at most this share
	unitLookMargin     = 0.3 // and another fits this much more
)

// newUnitLook prepares the look at a role's values configured in conf.
func newUnitLook(spec metrics.RoleSpec, conf string) *unitLook {
	l := &unitLook{spec: spec, conf: -1}
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
	return l
}

func (l *unitLook) tally() unitTally { return unitTally{typ: make([]int, len(l.units))} }

// add counts one raw value (in the unit the series is logged in).
func (l *unitLook) add(t *unitTally, raw float64) {
	t.n++
	for i, u := range l.units {
		if l.spec.Typical(u.ToSI(raw)) {
			t.typ[i]++
		}
	}
}

// other returns the unit the tally's values look logged in when the rule
// holds (ok), with the shares typical under it and under the configured one.
func (l *unitLook) other(t unitTally) (best psychro.Unit, bestShare, confShare float64, ok bool) {
	if l.conf < 0 || t.n < unitLookMinSamples {
		return psychro.Unit{}, 0, 0, false
	}
	n := float64(t.n)
	confShare = float64(t.typ[l.conf]) / n
	bestShare = confShare
	for i, c := range t.typ {
		if share := float64(c) / n; share > bestShare+unitLookMargin {
			best, bestShare, ok = l.units[i], share, true
		}
	}
	if confShare > unitLookMaxConf {
		ok = false
	}
	return best, bestShare, confShare, ok
}
