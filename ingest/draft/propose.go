package draft

import (
	"fmt"
	"slices"
	"sort"
	"strings"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Mapping is one role of an air handler and the point proposed for it.
type Mapping struct {
	Role     metrics.Role
	Point    *Point
	Unit     string // the unit to write
	Conf     Confidence
	Evidence []string // what the mapping rests on, for its comment
	Shared   bool     // a site-wide point, also mapped to other air handlers
}

// Unassigned is a point no role took, with the reason.
type Unassigned struct {
	Point *Point
	AHU   string // the air handler it belongs to, "" when none
	Note  string
}

// Missing is a required role no point was found for.
type Missing struct {
	Role    string
	LookFor string
}

// AirHandler is one proposed air handler.
type AirHandler struct {
	ID       string
	Mappings []*Mapping // in the order of metrics.Roles
	Missing  []Missing
	facts    feature // system words seen on its points
	sameLvSu bool    // leaving and supply temperature are one sensor
}

// Complete reports whether every required role is mapped.
func (a *AirHandler) Complete() bool { return len(a.Missing) == 0 }

// Mapping returns the air handler's mapping of role, nil when none.
func (a *AirHandler) Mapping(role metrics.Role) *Mapping {
	for _, m := range a.Mappings {
		if m.Role == role {
			return m
		}
	}
	return nil
}

// Proposal is a proposed point map.
type Proposal struct {
	AirHandlers []*AirHandler
	Unassigned  []Unassigned
	IP          bool // most temperatures are logged in °F
	// NoRows lists the exports without a data row whose columns were
	// mapped by name alone.
	NoRows []string
}

// Options steer Propose.
type Options struct {
	// DefaultID names the air handler when no point names one (a single
	// unit's export); default "AHU-1".
	DefaultID string
}

// candidate is a point's verdict with its air handler.
type candidate struct {
	p       *Point
	ahu     string
	v       verdict
	unknown int
}

// Propose groups points by air handler and assigns their roles.
func Propose(points []Point, opt Options) *Proposal {
	if opt.DefaultID == "" {
		opt.DefaultID = "AHU-1"
	}
	prop := &Proposal{}
	var cands []*candidate
	groups := map[string]bool{}
	nF, nC := 0, 0
	for i := range points {
		p := &points[i]
		if p.NoRowsIn != "" && !slices.Contains(prop.NoRows, p.NoRowsIn) {
			prop.NoRows = append(prop.NoRows, p.NoRowsIn)
		}
		c := judge(p)
		cands = append(cands, c)
		if c.ahu != "" && !strings.HasPrefix(c.ahu, "!") {
			groups[c.ahu] = true
		}
		if u, err := psychro.LookupUnit(psychro.KindTemperature, p.Unit); err == nil {
			if u.Name == "°F" {
				nF++
			} else {
				nC++
			}
		}
	}
	if nF+nC == 0 {
		// No declared temperature unit: let the values of the points that
		// read as temperatures tell.
		for _, c := range cands {
			if spec, ok := metrics.LookupRole(string(c.v.role)); ok && spec.Kind == psychro.KindTemperature {
				switch chooseUnit(c.v.role, c.p.Unit, &c.p.Stats, false).unit {
				case "°F":
					nF++
				case "°C":
					nC++
				}
			}
		}
	}
	prop.IP = nF > nC
	if len(groups) == 0 {
		groups[opt.DefaultID] = true
	}
	ids := make([]string, 0, len(groups))
	for id := range groups {
		ids = append(ids, id)
	}
	sort.Slice(ids, func(i, j int) bool { return equipLess(ids[i], ids[j]) })
	byID := map[string]*AirHandler{}
	for _, id := range ids {
		a := &AirHandler{ID: id}
		byID[id] = a
		prop.AirHandlers = append(prop.AirHandlers, a)
	}
	// Points of one air handler first; site-wide ones after, for the roles
	// still open.
	best := map[string]map[metrics.Role]*candidate{}
	var losers []*candidate
	offer := func(ahu string, c *candidate) {
		if best[ahu] == nil {
			best[ahu] = map[metrics.Role]*candidate{}
		}
		if cur, ok := best[ahu][c.v.role]; ok {
			if better(c, cur) {
				best[ahu][c.v.role], c = c, cur
			}
			losers = append(losers, c)
			return
		}
		best[ahu][c.v.role] = c
	}
	var shared []*candidate
	for _, c := range cands {
		switch {
		case c.p.Stats.N == 0 && c.p.NoRowsIn == "":
			prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, AHU: strings.TrimPrefix(c.ahu, "!"), Note: "no numeric value in the source"})
		case strings.HasPrefix(c.ahu, "!"):
			prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, Note: "belongs to " + c.ahu[1:] + ", not an air handler"})
		case c.ahu != "" && byID[c.ahu] != nil:
			byID[c.ahu].facts |= c.v.facts
			if c.v.role == "" {
				prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, AHU: c.ahu, Note: c.v.note})
				continue
			}
			offer(c.ahu, c)
		case c.v.role == "":
			prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, Note: c.v.note})
		case c.v.shared || len(ids) == 1:
			shared = append(shared, c)
		default:
			prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, Note: fmt.Sprintf("reads as %s, but neither its name nor its tags say which air handler it belongs to", c.v.role)})
		}
	}
	for _, c := range losers {
		w := best[c.ahu][c.v.role]
		prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, AHU: c.ahu,
			Note: fmt.Sprintf("also reads as %s; %q was preferred (%s)", c.v.role, w.p.Ref.Name(), w.v.conf)})
	}
	// Site-wide points: the best per role, for every air handler without one.
	sharedBest := map[metrics.Role]*candidate{}
	for _, c := range shared {
		if cur, ok := sharedBest[c.v.role]; !ok || better(c, cur) {
			if ok {
				prop.Unassigned = append(prop.Unassigned, Unassigned{Point: cur.p, Note: fmt.Sprintf("also reads as %s; %q was preferred", c.v.role, c.p.Ref.Name())})
			}
			sharedBest[c.v.role] = c
		} else {
			prop.Unassigned = append(prop.Unassigned, Unassigned{Point: c.p, Note: fmt.Sprintf("also reads as %s; %q was preferred", c.v.role, cur.p.Ref.Name())})
		}
	}
	for _, a := range prop.AirHandlers {
		for _, spec := range metrics.Roles() {
			c, own := best[a.ID][spec.Role]
			isShared := false
			if !own {
				if c, isShared = sharedBest[spec.Role]; !isShared {
					continue
				}
				a.facts |= c.v.facts
			}
			a.Mappings = append(a.Mappings, mapping(c, isShared && len(ids) > 1, prop.IP))
		}
		a.Missing = missing(a)
		if lv, su := a.Mapping(metrics.RoleLeavingTemp), a.Mapping(metrics.RoleSupplyTemp); lv != nil && su != nil && lv.Point == su.Point {
			a.sameLvSu = true
		}
	}
	sort.SliceStable(prop.Unassigned, func(i, j int) bool {
		a, b := prop.Unassigned[i], prop.Unassigned[j]
		if a.AHU != b.AHU {
			return equipLess(a.AHU, b.AHU)
		}
		return a.Point.Ref.Name() < b.Point.Ref.Name()
	})
	return prop
}

// judge reads one point: its air handler and its role.
func judge(p *Point) *candidate {
	st := readTags(p.Tags)
	c := &candidate{p: p}
	if p.Unit == "" && st.unit != "" {
		p.Unit, p.unitFrom = st.unit, "a unit tag"
	}
	if p.Unit == "" {
		if u := unitInName(p.Name); u != "" {
			p.Unit, p.unitFrom = u, "the name"
		}
	}
	// Which air handler: an equipment tag first. A reference to a part of
	// the unit ("AHU_7_Cooling_Coil") also says what the point measures.
	refWords := ""
	if st.equip != "" {
		if id, rest := equipID(st.equip); id != "" {
			c.ahu, refWords = id, rest
		} else {
			c.ahu = cleanRef(st.equip)
		}
	}
	name := p.Name + " " + refWords
	if id, rest := equipID(name); id != "" {
		if c.ahu == "" {
			c.ahu = id
		}
		name = rest
	} else if other := otherEquip(name); other != "" && c.ahu == "" {
		c.ahu = "!" + other
	}
	nr := readName(name)
	c.unknown = len(nr.unknown)
	byName := decide(nr.f)
	if len(nr.known) > 0 {
		byName.evidence = append([]string{"name: " + describe(nr)}, byName.evidence...)
	}
	// Open standards first: a Brick class, then Haystack markers.
	var std verdict
	var stdWhat string
	switch {
	case st.brick != "":
		std = decide(readName(brickText(st.brick) + " " + refWords).f)
		stdWhat = "Brick class " + st.brick
	case len(st.markers) > 0:
		std = decide(readName(haystackText(st.markers)).f)
		stdWhat = "Haystack markers: " + haystackText(st.markers)
	}
	switch {
	case stdWhat == "":
		c.v = byName
	case std.role == "" && std.note == noteUnknown:
		c.v = byName
	default:
		c.v = std
		c.v.evidence = append([]string{stdWhat}, std.evidence...)
		c.v.facts |= byName.facts
		if byName.role != "" && std.role != "" && byName.role != std.role {
			c.v.conf = Low
			c.v.evidence = append(c.v.evidence, fmt.Sprintf("but the name reads as %s", byName.role))
		} else if byName.role == std.role && std.role != "" {
			c.v.evidence = append(c.v.evidence, "the name agrees")
		}
		if std.role == "" {
			c.v.note = std.note + " (" + stdWhat + ")"
		}
	}
	// A site-wide point (outdoor air) tagged with a weather station or the
	// building rather than an air handler is shared.
	if c.v.shared && st.equip != "" {
		if id, _ := equipID(st.equip); id == "" {
			c.ahu = ""
		}
	}
	return c
}

// mapping builds the mapping of a chosen candidate, deciding its unit.
func mapping(c *candidate, shared, ip bool) *Mapping {
	uc := chooseUnit(c.v.role, c.p.Unit, &c.p.Stats, ip)
	m := &Mapping{Role: c.v.role, Point: c.p, Unit: uc.unit, Conf: min(c.v.conf, uc.cap), Shared: shared}
	m.Evidence = append(m.Evidence, c.v.evidence...)
	if c.p.NoRowsIn != "" {
		// No value to confirm the name or the unit.
		m.Conf = min(m.Conf, Medium)
		m.Evidence = append(m.Evidence, "by name alone: "+c.p.NoRowsIn+" has no data rows")
	}
	if uc.note != "" {
		m.Evidence = append(m.Evidence, uc.note)
	} else if c.p.Unit != "" {
		from := "as declared"
		if c.p.unitFrom != "" {
			from = "from " + c.p.unitFrom
		}
		ev := "unit " + c.p.Unit + " " + from
		if c.p.Stats.N > 0 {
			ev += ", values " + num(c.p.Stats.Min) + ".." + num(c.p.Stats.Max)
		}
		m.Evidence = append(m.Evidence, ev)
	}
	if c.p.Stats.N > 0 {
		m.Evidence = append(m.Evidence, intervalText(&c.p.Stats))
	}
	if shared {
		m.Evidence = append(m.Evidence, "site-wide point, shared by every air handler")
	}
	return m
}

// better ranks two candidates for one role: confidence, then fewer unread
// words, then more samples, then the shorter name.
func better(a, b *candidate) bool {
	if a.v.conf != b.v.conf {
		return a.v.conf > b.v.conf
	}
	if a.unknown != b.unknown {
		return a.unknown < b.unknown
	}
	if a.p.Stats.N != b.p.Stats.N {
		return a.p.Stats.N > b.p.Stats.N
	}
	return len(a.p.Ref.Name()) < len(b.p.Ref.Name())
}

// Mixes reports whether the air handler's entering air comes from mixing
// its return and outdoor air: no mixed-air humidity is mapped, and the
// return temperature and humidity and the outdoor temperature and RH are.
func (a *AirHandler) Mixes() bool {
	if a.Mapping(metrics.RoleEnteringRH) != nil || a.Mapping(metrics.RoleEnteringDewPoint) != nil {
		return false
	}
	return a.Mapping(metrics.RoleReturnTemp) != nil &&
		(a.Mapping(metrics.RoleReturnRH) != nil || a.Mapping(metrics.RoleReturnDewPoint) != nil) &&
		a.Mapping(metrics.RoleOutdoorTemp) != nil && a.Mapping(metrics.RoleOutdoorRH) != nil
}

// lookFor says what to look for when a required role is missing.
var lookFor = []struct {
	roles []metrics.Role
	hint  string
}{
	{[]metrics.Role{metrics.RoleEnteringTemp}, "the mixed-air or coil entering temperature (MAT, MA Temp, Mixed Air Temp, Coil Entering Temp); on a 100 % outdoor-air unit, the outdoor temperature"},
	{[]metrics.Role{metrics.RoleEnteringRH, metrics.RoleEnteringDewPoint}, "the mixed-air or coil entering humidity (MA RH, Mixed Air Humidity, MA Dewpoint); or, for dewline to mix them, the return-air temperature and RH (RAT, RA RH) with the outdoor-air temperature and RH (OAT, OA RH); a return-air RH alone is not entering air"},
	{[]metrics.Role{metrics.RoleLeavingTemp}, "the cooling coil leaving temperature (CCLT, Coil Leaving Temp, CC Discharge Temp, Evaporator Leaving Temp); on a unit without reheat the discharge sensor serves as both"},
	{[]metrics.Role{metrics.RoleSupplyTemp}, "the supply or discharge air temperature (SAT, DAT, Supply Air Temp)"},
	{[]metrics.Role{metrics.RoleSupplyFlow}, "the supply airflow (SA CFM, Supply Airflow, SA Flow); without an airflow station, trend one before analysing"},
}

func missing(a *AirHandler) []Missing {
	var out []Missing
	for _, l := range lookFor {
		found := false
		var names []string
		for _, r := range l.roles {
			names = append(names, string(r))
			if a.Mapping(r) != nil {
				found = true
			}
		}
		if l.roles[0] == metrics.RoleEnteringRH && a.Mixes() {
			found = true
		}
		if !found {
			out = append(out, Missing{Role: strings.Join(names, " or "), LookFor: l.hint})
		}
	}
	return out
}

// otherEquip names equipment that is not an air handler (a VAV box, a
// chiller, a boiler, a pump) when name starts with one.
func otherEquip(name string) string {
	lower := strings.ToLower(name)
	for _, k := range []string{"vav", "fpb", "chiller", "ch", "boiler", "blr", "chwp", "hwp", "cwp", "pump", "ct", "ef"} {
		i := strings.Index(lower, k)
		if i < 0 || i > 0 && isLetter(lower[i-1]) {
			continue
		}
		j := i + len(k)
		if j < len(lower) && strings.ContainsRune(" _-.#:", rune(lower[j])) {
			j++
		}
		if j < len(lower) && lower[j] >= '0' && lower[j] <= '9' {
			d := j
			for d < len(lower) && lower[d] >= '0' && lower[d] <= '9' {
				d++
			}
			return strings.ToUpper(k) + "-" + lower[j:d]
		}
	}
	return ""
}

func isLetter(b byte) bool { return b >= 'a' && b <= 'z' || b >= 'A' && b <= 'Z' }

// cleanRef turns an equipment reference that carries no AHU-style
// identifier ("@p:site:r:north-wing") into an id ("north-wing").
func cleanRef(ref string) string {
	r := strings.TrimPrefix(strings.TrimSpace(ref), "@")
	if i := strings.LastIndexAny(r, ":/#"); i >= 0 && i+1 < len(r) {
		r = r[i+1:]
	}
	if f := strings.Fields(r); len(f) > 0 {
		r = f[0]
	}
	return r
}

// equipLess orders identifiers by type, then number ("AHU-2" before "AHU-10").
func equipLess(a, b string) bool {
	ka, na := splitID(a)
	kb, nb := splitID(b)
	if ka != kb {
		return ka < kb
	}
	if na != nb {
		return na < nb
	}
	return a < b
}

func splitID(id string) (string, int) {
	i := strings.LastIndexByte(id, '-')
	if i < 0 {
		return id, 0
	}
	n := 0
	for _, r := range id[i+1:] {
		if r < '0' || r > '9' {
			return id, 0
		}
		n = n*10 + int(r-'0')
	}
	return id[:i], n
}

// unitInName returns a unit a name spells out as a word ("SA-CFM",
// "CMP-KW"), "" when none.
func unitInName(name string) string {
	for _, w := range splitWords(name) {
		switch w {
		case "cfm":
			return "CFM"
		case "kw":
			return "kW"
		case "lps":
			return "L/s"
		}
	}
	return ""
}
