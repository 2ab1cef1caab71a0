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
func NewPointIndex(units map[string]UnitPoints) (PointIndex, error) {
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
	fileUnit, err := psychro.LookupUnit(ts[0].Kind, rec.Unit)
	if err != nil {
		return fmt.Errorf("%s line %d: column %q states the unit %q, which is not a unit of %s; correct the file's header or the configuration",
			rec.File, rec.Line, rec.Series, rec.Unit, ts[0].Kind)
	}
	if fileUnit.Name != ts[0].Unit.Name {
		return fmt.Errorf("%s line %d: column %q is in %s according to the file but %s according to the configuration; correct the unit in the configuration",
			rec.File, rec.Line, rec.Series, fileUnit.Name, ts[0].Ref.Unit)
	}
	return nil
}
