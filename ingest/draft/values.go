package draft

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// unitChoice is the unit the draft writes for a point, with what the values
// said about it.
type unitChoice struct {
	unit string
	cap  Confidence // the mapping's confidence may be at most this
	note string
}

// candidateUnits are the units tried for a kind when the values must tell.
var candidateUnits = map[psychro.Kind][]string{
	psychro.KindTemperature: {"°F", "°C"},
	psychro.KindRH:          {"%", "fraction"},
	psychro.KindFraction:    {"%", "fraction"},
	psychro.KindFlow:        {"CFM", "L/s", "m³/h", "m³/s"},
	psychro.KindPower:       {"kW", "W"},
}

// chooseUnit decides the unit of a point mapped to role from the unit its
// source declares and from its values. ip says whether the site's other
// points are in IP units (a tie-break for airflow).
func chooseUnit(role metrics.Role, declared string, s *Stats, ip bool) unitChoice {
	spec, _ := metrics.LookupRole(string(role))
	typical := func(name string) float64 {
		u, err := psychro.LookupUnit(spec.Kind, name)
		if err != nil {
			return 0
		}
		// A fan, a compressor or a valve that is off reads 0 in any unit.
		offOK := spec.Kind == psychro.KindFlow || spec.Kind == psychro.KindPower || spec.Kind == psychro.KindFraction
		return s.share(func(v float64) bool { return offOK && v == 0 || spec.Typical(u.ToSI(v)) })
	}
	span := fmt.Sprintf("%s..%s", num(s.Min), num(s.Max))
	if declared != "" {
		u, err := psychro.LookupUnit(spec.Kind, declared)
		if err != nil {
			c := guessUnit(role, spec, s, typical, ip)
			c.cap = Low
			c.note = fmt.Sprintf("the source declares %q, not a unit of %s: is the role right? %s", declared, spec.Kind, c.note)
			return c
		}
		if s.N < 5 {
			return unitChoice{unit: u.Name, cap: High}
		}
		// The declared unit stays: dewline reads the unit an export states,
		// and a configuration that says otherwise is refused. Values that
		// contradict it are a mislabelled export, flagged for a person.
		own := typical(u.Name)
		if role == metrics.RoleEnteringRH || role == metrics.RoleLeavingRH || role == metrics.RoleSpaceRH || role == metrics.RoleOutdoorRH || role == metrics.RoleReturnRH {
			if u.Name == "%" && s.Max <= 1.0 && s.Max > 0 {
				return unitChoice{unit: u.Name, cap: Low, note: fmt.Sprintf("declared %%, but the values (%s) lie in 0..1 like a fraction: fix the export's unit or the point's scaling", span)}
			}
		}
		if own >= 0.8 {
			return unitChoice{unit: u.Name, cap: High}
		}
		if alt, ok := otherUnit(spec, u, s); ok {
			return unitChoice{unit: u.Name, cap: Low, note: fmt.Sprintf("declared %s, but the values (%s) read as %s for a %s: fix the export's unit label", u.Name, span, alt, spec.Doc)}
		}
		c := Low
		if own >= 0.5 {
			c = Medium
		}
		return unitChoice{unit: u.Name, cap: c, note: fmt.Sprintf("%.0f %% of the values (%s %s) are unusual for a %s; check the role and the unit", 100*(1-own), span, u.Name, spec.Doc)}
	}
	return guessUnit(role, spec, s, typical, ip)
}

// otherUnit names the unit a point declared in declared looks logged in,
// by the rule dewline check and the analysis apply to a configured unit
// (metrics.OtherUnit), over the kept values with the check's shares: a
// value counts for a unit where, read in it, it is typical of the role.
func otherUnit(spec metrics.RoleSpec, declared psychro.Unit, s *Stats) (string, bool) {
	var units []psychro.Unit
	conf := -1
	for _, name := range psychro.UnitNames(spec.Kind) {
		u, err := psychro.LookupUnit(spec.Kind, name)
		if err != nil {
			continue
		}
		if name == declared.Name {
			conf = len(units)
		}
		units = append(units, u)
	}
	shares := make([]float64, len(units))
	for i, u := range units {
		shares[i] = s.share(func(v float64) bool { return spec.Typical(u.ToSI(v)) })
	}
	i, ok := metrics.OtherUnit(units, conf, len(s.values), func(i int) float64 { return shares[i] })
	if !ok {
		return "", false
	}
	return units[i].Name, true
}

// guessUnit picks the unit under which most values are typical.
func guessUnit(role metrics.Role, spec metrics.RoleSpec, s *Stats, typical func(string) float64, ip bool) unitChoice {
	span := fmt.Sprintf("%s..%s", num(s.Min), num(s.Max))
	switch spec.Kind {
	case psychro.KindRH, psychro.KindFraction:
		if s.Max <= 1.0 {
			return unitChoice{unit: "fraction", cap: Medium, note: fmt.Sprintf("no unit given; the values (%s) lie in 0..1: a fraction", span)}
		}
		return unitChoice{unit: "%", cap: Medium, note: fmt.Sprintf("no unit given; the values (%s) read as percent", span)}
	case psychro.KindFlow:
		u := "m³/h"
		if ip {
			u = "CFM"
		}
		return unitChoice{unit: u, cap: Low, note: fmt.Sprintf("no unit given; %s assumed from the site's other units (values %s): check the airflow station", u, span)}
	case psychro.KindPower:
		if s.Max > 2000 {
			return unitChoice{unit: "W", cap: Low, note: fmt.Sprintf("no unit given; the values (%s) read as W", span)}
		}
		return unitChoice{unit: "kW", cap: Low, note: fmt.Sprintf("no unit given; kW assumed (values %s)", span)}
	}
	best, second, bestShare := "", 0.0, -1.0
	for _, c := range candidateUnits[spec.Kind] {
		sh := typical(c)
		switch {
		case sh > bestShare:
			second, best, bestShare = math.Max(second, bestShare), c, sh
		case sh > second:
			second = sh
		}
	}
	if best == "" {
		best = psychro.SIUnitName(spec.Kind)
	}
	if bestShare >= 0.8 && second < 0.5 {
		return unitChoice{unit: best, cap: Medium, note: fmt.Sprintf("no unit given; the values (%s) read as %s", span, best)}
	}
	return unitChoice{unit: best, cap: Low, note: fmt.Sprintf("no unit given and the values (%s) do not tell the unit: %s guessed", span, best)}
}

// intervalText describes how a point is logged.
func intervalText(s *Stats) string {
	if s.N < 2 {
		return fmt.Sprintf("%d sample", s.N)
	}
	d := s.Interval()
	if s.Regular() {
		return fmt.Sprintf("%d samples every %s", s.N, short(d))
	}
	return fmt.Sprintf("%d samples, change of value (median %s apart)", s.N, short(d))
}

func short(d time.Duration) string {
	s := d.String()
	if strings.HasSuffix(s, "m0s") {
		s = s[:len(s)-2]
	}
	if strings.HasSuffix(s, "h0m") {
		s = s[:len(s)-2]
	}
	return s
}

func num(v float64) string {
	return fmt.Sprintf("%.4g", v)
}
