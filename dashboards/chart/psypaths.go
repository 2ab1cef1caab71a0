package chart

import (
	"math"
	"sort"
)

// Hours are drawn in two ways. Up to PsyChart.MaxMarked of them ("marked")
// get their own group with a tooltip and one element per state, carrying
// data-tdb and data-w. The rest share thin, translucent tracks whose states
// are drawn by SVG markers (marker-start, -mid and -end, inherited from the
// group), which cost nothing per hour: a month of hours stays small.

// markedSet returns the indexes of the paths drawn in full.
func (g *psyGeom) markedSet() map[int]bool {
	n := len(g.c.Paths)
	limit := g.c.MaxMarked
	if limit == 0 {
		limit = psyMaxMarked
		if n <= psyMarkAllUpTo {
			limit = n // a day of hours is drawn in full
		}
	}
	set := map[int]bool{}
	if n <= limit {
		for i := range n {
			set[i] = true
		}
		return set
	}
	for i, p := range g.c.Paths {
		if p.Highlight && len(set) < limit {
			set[i] = true
		}
	}
	if len(set) > 0 || limit == 0 {
		return set
	}
	if limit == 1 {
		set[n-1] = true
		return set
	}
	for k := 0; k < limit; k++ { // evenly spread, first and last included
		set[int(math.Round(float64(k)*float64(n-1)/float64(limit-1)))] = true
	}
	return set
}

// finitePoints returns the drawable states of a path with their kinds.
func finitePoints(pts []PsyPoint) ([]PsyPoint, []int) {
	var out []PsyPoint
	var kinds []int
	for i, p := range pts {
		if finite(p.TdbC) && finite(p.W) {
			out = append(out, p)
			kinds = append(kinds, kindAt(i, len(pts)))
		}
	}
	return out, kinds
}

// markerShape writes the shape of a state kind centred on (x, y) with
// half-size r, without closing the element (callers add attributes). The
// shapes' bounding boxes are centred on the point: circle (entering),
// square (coil leaving), triangle (supply).
func markerShape(s *svgBuf, kind int, x, y, r float64) {
	switch kind {
	case kindEntering:
		s.str(`<circle`)
		s.numAttr("cx", x)
		s.numAttr("cy", y)
		s.numAttr("r", r)
	case kindLeaving:
		s.str(`<rect`)
		s.numAttr("x", x-r)
		s.numAttr("y", y-r)
		s.numAttr("width", 2*r)
		s.numAttr("height", 2*r)
	default:
		s.str(`<path d="M`)
		s.num(x)
		s.str(" ")
		s.num(y - r)
		s.str("l")
		s.num(r)
		s.str(" ")
		s.num(2 * r)
		s.str("h")
		s.num(-2 * r)
		s.str(`z"`)
	}
}

var kindColors = [...]string{colorEntering, colorLeaving, colorSupply}

// markerDefs writes one <marker> per kind and returns their ids.
func markerDefs(s *svgBuf, r, opacity float64) [3]string {
	var ids [3]string
	s.str(`<defs>`)
	for k := range ids {
		var body svgBuf
		markerShape(&body, k, 0, 0, r)
		body.attr("fill", kindColors[k])
		body.str(` fill-opacity="`)
		body.fixed(opacity, 2)
		body.str(`"/>`)
		ids[k] = contentID("dlc-mk-", string(body.b))
		e := r + 1
		s.str(`<marker`)
		s.attr("id", ids[k])
		s.str(` markerUnits="userSpaceOnUse" viewBox="`)
		s.num(-e)
		s.str(" ")
		s.num(-e)
		s.str(" ")
		s.num(2 * e)
		s.str(" ")
		s.num(2 * e)
		s.str(`"`)
		s.numAttr("markerWidth", 2*e)
		s.numAttr("markerHeight", 2*e)
		s.str(` refX="0" refY="0">`)
		s.b = append(s.b, body.b...)
		s.str(`</marker>`)
	}
	s.str(`</defs>`)
	return ids
}

// paths draws the hours: shared tracks first, then the marked hours on top.
func (g *psyGeom) paths(s *svgBuf, clip string) {
	if len(g.c.Paths) == 0 {
		return
	}
	marked := g.markedSet()
	type groupKey struct {
		class       string
		first, last int
	}
	groups := map[groupKey][]int{}
	var keys []groupKey
	rest := 0
	for i, p := range g.c.Paths {
		if marked[i] {
			continue
		}
		_, kinds := finitePoints(p.Points)
		if len(kinds) == 0 {
			continue
		}
		k := groupKey{safeClass(p.Class), kinds[0], kinds[len(kinds)-1]}
		if _, ok := groups[k]; !ok {
			keys = append(keys, k)
		}
		groups[k] = append(groups[k], i)
		rest++
	}
	s.str(`<g class="dlc-psy-hours"`)
	s.attr("clip-path", "url(#"+clip+")")
	s.str(`>`)
	if rest > 0 {
		sort.Slice(keys, func(a, b int) bool {
			if keys[a].class != keys[b].class {
				return keys[a].class < keys[b].class
			}
			if keys[a].first != keys[b].first {
				return keys[a].first < keys[b].first
			}
			return keys[a].last < keys[b].last
		})
		sq := math.Sqrt(float64(rest))
		trackOp := math.Max(0.05, math.Min(0.7, 2/sq))
		markOp := math.Max(0.3, math.Min(0.9, 8/sq))
		r := 2.6
		if rest > 200 {
			r = 2.1
		}
		ids := markerDefs(s, r, markOp)
		for _, k := range keys {
			s.str(`<g`)
			s.attr("class", classes("dlc-psy-track", k.class))
			s.str(` fill="none" stroke-width="0.8"`)
			s.attr("stroke", colorTrack)
			s.str(` stroke-opacity="`)
			s.fixed(trackOp, 2)
			s.str(`"`)
			s.attr("marker-start", "url(#"+ids[k.first]+")")
			s.attr("marker-mid", "url(#"+ids[kindLeaving]+")")
			s.attr("marker-end", "url(#"+ids[k.last]+")")
			s.str(`>`)
			for _, i := range groups[k] {
				pts, _ := finitePoints(g.c.Paths[i].Points)
				s.str(`<path d="`)
				p := newPath(s)
				x, y := g.pos(pts[0].TdbC, pts[0].W)
				p.moveTo(x, y)
				for _, q := range pts[1:] {
					x, y = g.pos(q.TdbC, q.W)
					p.lineTo(x, y)
				}
				if p.segments == 0 {
					p.dot()
				}
				p.end()
				s.str(`"/>`)
			}
			s.str(`</g>`)
		}
	}
	s.str(`<g class="dlc-psy-marked" stroke="#fff" stroke-width="1">`)
	for i, path := range g.c.Paths {
		if !marked[i] {
			continue
		}
		g.markedPath(s, path)
	}
	s.str(`</g></g>`)
}

// markedPath draws one hour in full.
func (g *psyGeom) markedPath(s *svgBuf, path PsyPath) {
	pts, kinds := finitePoints(path.Points)
	if len(pts) == 0 {
		return
	}
	s.str(`<g`)
	s.attr("class", classes("dlc-psy-hour", path.Class))
	s.str(`>`)
	if path.Title != "" {
		s.str(`<title>`)
		s.esc(path.Title)
		s.str(`</title>`)
	}
	if len(pts) > 1 {
		s.str(`<path class="dlc-psy-line" fill="none" stroke-width="1.4" stroke-linejoin="round"`)
		s.attr("stroke", colorTrack)
		s.str(` d="`)
		p := newPath(s)
		for j, q := range pts {
			x, y := g.pos(q.TdbC, q.W)
			if j == 0 {
				p.moveTo(x, y)
			} else {
				p.lineTo(x, y)
			}
		}
		p.end()
		s.str(`"/>`)
	}
	for j, q := range pts {
		x, y := g.pos(q.TdbC, q.W)
		k := kinds[j]
		markerShape(s, k, x, y, 3.6)
		s.attr("class", "dlc-psy-state dlc-psy-"+kindNames[k])
		s.attr("fill", kindColors[k])
		s.str(` data-tdb="`)
		s.fixed(q.TdbC, 2)
		s.str(`" data-w="`)
		s.fixed(q.W, 6)
		s.str(`"><title>`)
		tip := q.Label
		if tip == "" {
			tip = kindTitles[k]
		}
		s.esc(tip + ": " + fixedString(g.toT(q.TdbC), 1) + " " + g.tUnit() + ", " +
			fixedString(g.toW(q.W), 1) + " " + g.wShort())
		s.str(`</title>`)
		switch k {
		case kindEntering:
			s.str(`</circle>`)
		case kindLeaving:
			s.str(`</rect>`)
		default:
			s.str(`</path>`)
		}
	}
	s.str(`</g>`)
}

var kindTitles = [...]string{"Entering", "Coil leaving", "Supply"}
