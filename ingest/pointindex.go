package ingest

import (
	"fmt"
	"sort"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// PointTarget is one configured use of a trend series.
type PointTarget struct {
	AHU  string
	Role metrics.Role
	Ref  metrics.PointRef
	Kind psychro.Kind
	Unit psychro.Unit // the unit the configuration says the series is logged in
}

// PointIndex finds the configured uses of a series by its name (CSV column
// or long-format point name). One series may serve several air handlers,
// such as an outdoor-air sensor.
type PointIndex map[string][]PointTarget

// NewPointIndex indexes the points of the given air handlers.
func NewPointIndex(units map[string]AirHandlerPoints) (PointIndex, error) {
	ix := PointIndex{}
	ahus := make([]string, 0, len(units))
	for a := range units {
		ahus = append(ahus, a)
	}
	sort.Strings(ahus)
	for _, ahu := range ahus {
		for role, ref := range units[ahu].Points {
			spec, ok := metrics.LookupRole(string(role))
			if !ok {
				return nil, fmt.Errorf("%s: unknown role %q", ahu, role)
			}
			unit, err := psychro.LookupUnit(spec.Kind, ref.Unit)
			if err != nil {
				return nil, fmt.Errorf("%s %s: %w", ahu, role, err)
			}
			ix[ref.Name()] = append(ix[ref.Name()], PointTarget{AHU: ahu, Role: role, Ref: ref, Kind: spec.Kind, Unit: unit})
		}
	}
	return ix, nil
}

// CheckUnit refuses a record whose file states a unit for its series that
// differs from the configured one: which is right cannot be guessed.
func (ix PointIndex) CheckUnit(rec Record) error {
	ts := ix[rec.Series]
	if len(ts) == 0 || rec.Unit == "" {
		return nil
	}
	// The line that states the unit: a wide export's header or unit
	// row, else the record's own.
	line := rec.Line
	if rec.UnitLine > 0 {
		line = rec.UnitLine
	}
	fileUnit, err := psychro.LookupUnit(ts[0].Kind, rec.Unit)
	if err != nil {
		return fmt.Errorf("%s line %d: column %q states the unit %q, which is not a unit of %s; correct the file's header or the configuration",
			rec.File, line, rec.Series, rec.Unit, ts[0].Kind)
	}
	if fileUnit.Name != ts[0].Unit.Name {
		return fmt.Errorf("%s line %d: column %q is in %s according to the file but %s according to the configuration; correct the unit in the configuration",
			rec.File, line, rec.Series, fileUnit.Name, ts[0].Ref.Unit)
	}
	return nil
}

// RowUnits reads each record's value in the unit its row states, so that a
// long export whose unit column changes within a point (a controller
// replaced, two exports appended) is converted row by row, never read in
// the unit of the point's first row:
//
//   - a record that states no unit is in the configured unit;
//   - the first unit a file states for a series must match the configured
//     one (which of the two is right cannot be guessed): a mismatch is an
//     error naming the file, the line and the fix;
//   - after that, a row that states another unit of the point's kind is
//     converted from that unit and counted in Converted;
//   - a row that states a unit psychro does not know for the point's kind
//     is rejected and counted in Rejected, with its line in Examples.
//
// The zero value is not usable; make one with NewRowUnits.
type RowUnits struct {
	ix      PointIndex
	checked map[string]bool // series whose first stated unit was checked
	cache   map[unitKey]unitAnswer

	Converted int            // values read in a stated unit other than the configured one
	Rejected  int            // rows refused for their unit
	Examples  []RowUnitIssue // the first MaxUnitExamples rejections
}

// MaxUnitExamples is how many rejected rows RowUnits keeps with their lines.
const MaxUnitExamples = 5

// RowUnitIssue is one row refused for the unit it states.
type RowUnitIssue struct {
	File   string
	Line   int
	Series string
	Unit   string
	Kind   psychro.Kind
}

func (i RowUnitIssue) String() string {
	return fmt.Sprintf("%s line %d: %q states the unit %q, which is not a unit of %s", i.File, i.Line, i.Series, i.Unit, i.Kind)
}

type unitKey struct {
	kind psychro.Kind
	name string
}

type unitAnswer struct {
	u  psychro.Unit
	ok bool
}

// NewRowUnits returns a RowUnits over the index.
func NewRowUnits(ix PointIndex) *RowUnits {
	return &RowUnits{ix: ix, checked: map[string]bool{}, cache: map[unitKey]unitAnswer{}}
}

// RowUnit is how one record's value is read.
type RowUnit struct {
	stated bool
	unit   psychro.Unit
}

// ToSI converts the record's value for one of its targets: in the unit
// the row states, or else in the unit configured for the target.
func (u RowUnit) ToSI(tg PointTarget, v float64) float64 {
	if u.stated {
		return u.unit.ToSI(v)
	}
	return tg.Unit.ToSI(v)
}

// Check decides how rec is read. ok is false when the row is rejected (and
// counted); an error is a conflict between the file and the configuration.
// rec must be a record of a series in the index.
func (ru *RowUnits) Check(rec Record) (RowUnit, bool, error) {
	return ru.check(&rec, ru.ix[rec.Series])
}

// CheckTargets is Check for a caller that has looked up rec's targets in
// the index already (ts is ix[rec.Series]), for loops over millions of
// records.
func (ru *RowUnits) CheckTargets(rec *Record, ts []PointTarget) (RowUnit, bool, error) {
	return ru.check(rec, ts)
}

// check is Check with the record's targets already looked up.
func (ru *RowUnits) check(rec *Record, ts []PointTarget) (RowUnit, bool, error) {
	if len(ts) == 0 || rec.Unit == "" {
		return RowUnit{}, true, nil
	}
	if !ru.checked[rec.Series] {
		if err := ru.ix.CheckUnit(*rec); err != nil {
			return RowUnit{}, false, err
		}
		ru.checked[rec.Series] = true
	}
	k := unitKey{ts[0].Kind, rec.Unit}
	a, hit := ru.cache[k]
	if !hit {
		u, err := psychro.LookupUnit(k.kind, k.name)
		a = unitAnswer{u, err == nil}
		if len(ru.cache) < maxInternedUnits {
			ru.cache[k] = a
		}
	}
	if !a.ok {
		ru.Rejected++
		if len(ru.Examples) < MaxUnitExamples {
			ru.Examples = append(ru.Examples, RowUnitIssue{File: rec.File, Line: rec.Line, Series: rec.Series, Unit: rec.Unit, Kind: k.kind})
		}
		return RowUnit{}, false, nil
	}
	for _, tg := range ts {
		if tg.Unit.Name != a.u.Name {
			ru.Converted++
			break
		}
	}
	return RowUnit{stated: true, unit: a.u}, true, nil
}

// maxInternedUnits bounds the unit spellings RowUnits remembers; the names
// come from files.
const maxInternedUnits = 1024
