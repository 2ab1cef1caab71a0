package chart

import (
	"bytes"
	"encoding/csv"
	"encoding/xml"
	"errors"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/deploy/testkit"
)

// node is an element of a parsed SVG document.
type node struct {
	name string
	attr map[string]string
	text string // character data directly inside
	kids []*node
}

// parseSVG reads the document with encoding/xml to its end (so it must be
// well-formed) and returns the root element.
func parseSVG(t testing.TB, b []byte) *node {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(b))
	d.Strict = true
	var stack []*node
	var root *node
	for {
		tok, err := d.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(t, err, "the SVG must be well-formed XML")
		switch x := tok.(type) {
		case xml.StartElement:
			n := &node{name: x.Name.Local, attr: map[string]string{}}
			for _, a := range x.Attr {
				n.attr[a.Name.Local] = a.Value
			}
			if len(stack) > 0 {
				p := stack[len(stack)-1]
				p.kids = append(p.kids, n)
			} else {
				require.Nil(t, root, "one root element")
				root = n
			}
			stack = append(stack, n)
		case xml.EndElement:
			stack = stack[:len(stack)-1]
		case xml.CharData:
			if len(stack) > 0 {
				stack[len(stack)-1].text += string(x)
			}
		}
	}
	require.NotNil(t, root)
	require.Equal(t, "svg", root.name)
	return root
}

// find returns every element below n (n included) for which ok holds, in
// document order.
func (n *node) find(ok func(*node) bool) []*node {
	var out []*node
	var walk func(*node)
	walk = func(m *node) {
		if ok(m) {
			out = append(out, m)
		}
		for _, k := range m.kids {
			walk(k)
		}
	}
	walk(n)
	return out
}

func (n *node) hasClass(c string) bool {
	for _, f := range strings.Fields(n.attr["class"]) {
		if f == c {
			return true
		}
	}
	return false
}

func byClass(c string) func(*node) bool { return func(n *node) bool { return n.hasClass(c) } }

// texts returns the text elements inside groups of class c, with x, y.
type label struct {
	text string
	x, y float64
}

func (n *node) labels(groupClass string) []label {
	var out []label
	for _, g := range n.find(byClass(groupClass)) {
		for _, t := range g.find(func(m *node) bool { return m.name == "text" }) {
			out = append(out, label{t.text, num(t.attr["x"]), num(t.attr["y"])})
		}
	}
	return out
}

func num(s string) float64 {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

// pt is a point in user units.
type pt struct{ x, y float64 }

// parsePath turns SVG path data (M m L l H h V v Z z, with implicit
// repeats) into subpaths of absolute points. It is written from the SVG
// specification's path grammar, independently of the package's writer.
func parsePath(t testing.TB, d string) [][]pt {
	t.Helper()
	var subs [][]pt
	var cur pt
	var start pt
	var cmd byte
	i := 0
	skip := func() {
		for i < len(d) && (d[i] == ' ' || d[i] == ',' || d[i] == '\n') {
			i++
		}
	}
	number := func() float64 {
		skip()
		j := i
		if j < len(d) && (d[j] == '-' || d[j] == '+') {
			j++
		}
		dot := false
		for j < len(d) && ((d[j] >= '0' && d[j] <= '9') || (d[j] == '.' && !dot)) {
			if d[j] == '.' {
				dot = true
			}
			j++
		}
		v, err := strconv.ParseFloat(d[i:j], 64)
		require.NoError(t, err, "number at %d in %q", i, d)
		i = j
		return v
	}
	for {
		skip()
		if i >= len(d) {
			break
		}
		c := d[i]
		if (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') {
			cmd = c
			i++
			if c == 'z' || c == 'Z' {
				cur = start
				if len(subs) > 0 {
					subs[len(subs)-1] = append(subs[len(subs)-1], start)
				}
				continue
			}
		} else if cmd == 'M' {
			cmd = 'L'
		} else if cmd == 'm' {
			cmd = 'l'
		}
		switch cmd {
		case 'M', 'm':
			x, y := number(), number()
			if cmd == 'm' {
				x, y = cur.x+x, cur.y+y
			}
			cur = pt{x, y}
			start = cur
			subs = append(subs, []pt{cur})
			continue
		case 'L':
			cur = pt{number(), number()}
		case 'l':
			dx, dy := number(), number()
			cur = pt{cur.x + dx, cur.y + dy}
		case 'H':
			cur.x = number()
		case 'h':
			cur.x += number()
		case 'V':
			cur.y = number()
		case 'v':
			cur.y += number()
		default:
			t.Fatalf("path command %q not expected in %q", cmd, d)
		}
		require.NotEmpty(t, subs, "segment before moveto in %q", d)
		subs[len(subs)-1] = append(subs[len(subs)-1], cur)
	}
	return subs
}

// yAt returns the y of a polyline at x by linear interpolation between the
// vertices that bracket x (the polyline must cross x once).
func yAt(t testing.TB, line []pt, x float64) float64 {
	t.Helper()
	for i := 1; i < len(line); i++ {
		a, b := line[i-1], line[i]
		if (a.x <= x && x <= b.x) || (b.x <= x && x <= a.x) {
			if a.x == b.x {
				return a.y
			}
			return a.y + (x-a.x)*(b.y-a.y)/(b.x-a.x)
		}
	}
	t.Fatalf("x=%g is outside the polyline (%g..%g)", x, line[0].x, line[len(line)-1].x)
	return 0
}

// xAt returns the x of a polyline at y (it must cross y once).
func xAt(t testing.TB, line []pt, y float64) float64 {
	t.Helper()
	swapped := make([]pt, len(line))
	for i, p := range line {
		swapped[i] = pt{p.y, p.x}
	}
	return yAt(t, swapped, y)
}

// spans returns the vertical extents covered by closed polygons at x
// (even-odd crossing of a vertical line), merged and sorted.
func spans(polys [][]pt, x float64) [][2]float64 {
	var ys []float64
	for _, p := range polys {
		for i := 1; i < len(p); i++ {
			a, b := p[i-1], p[i]
			if (a.x < x) != (b.x < x) {
				ys = append(ys, a.y+(x-a.x)*(b.y-a.y)/(b.x-a.x))
			}
		}
	}
	sort.Float64s(ys)
	var out [][2]float64
	for i := 0; i+1 < len(ys); i += 2 {
		out = append(out, [2]float64{ys[i], ys[i+1]})
	}
	return out
}

// refRow is a row of testdata/reference/ashrae-fundamentals-ch1-checks.csv
// (sources per row prefix in testdata/reference/README.md).
type refRow struct {
	id       string
	in       map[string]float64
	expected float64
	tolType  string
	tol      float64
	kind     string
}

// ref returns the reference row with the given id.
func ref(t testing.TB, id string) refRow {
	t.Helper()
	f, err := os.Open("../../testdata/reference/ashrae-fundamentals-ch1-checks.csv")
	require.NoError(t, err)
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	require.NoError(t, err)
	for _, r := range recs[1:] {
		if r[0] != id {
			continue
		}
		row := refRow{id: r[0], tolType: r[6], kind: r[11], in: map[string]float64{}}
		row.expected, err = strconv.ParseFloat(r[4], 64)
		require.NoError(t, err, id)
		row.tol, _ = strconv.ParseFloat(r[7], 64)
		for _, kv := range strings.Split(r[3], ";") {
			if k, v, ok := strings.Cut(kv, "="); ok {
				if x, err := strconv.ParseFloat(v, 64); err == nil {
					row.in[k] = x
				}
			}
		}
		return row
	}
	t.Fatalf("reference row %s not found", id)
	return refRow{}
}

// absTol is the row's tolerance in the unit of its expected value.
func (r refRow) absTol() float64 {
	if r.tolType == "rel" {
		return math.Abs(r.expected) * r.tol
	}
	return r.tol
}

// psychrolibW returns humidity ratios from npm psychrolib 1.1.1 (an
// independent implementation of ASHRAE Fundamentals 2017 ch. 1) for states
// (t °C, RH fraction, p Pa). Outside CI a missing install skips; under
// CI=true it fails.
func psychrolibW(t *testing.T, states [][3]float64) []float64 {
	t.Helper()
	rows := testkit.PsychrolibStates(t, "SI", states)
	ws := make([]float64, len(rows))
	for i, r := range rows {
		ws[i] = r[0]
	}
	return ws
}

// render runs a chart into bytes and checks the invariants every chart
// must meet: well-formed, no NaN or Inf, no style attribute or element,
// a title, an aria-label and a responsive view box.
func render(t testing.TB, fn func(io.Writer) error) ([]byte, *node) {
	t.Helper()
	var b bytes.Buffer
	require.NoError(t, fn(&b))
	out := b.Bytes()
	root := parseSVG(t, out)
	s := string(out)
	for _, bad := range []string{"NaN", "Inf", "style=", "<style"} {
		require.NotContains(t, s, bad)
	}
	require.NotEmpty(t, root.attr["aria-label"])
	require.NotEmpty(t, root.attr["viewBox"])
	require.NotEmpty(t, root.find(func(n *node) bool { return n.name == "title" }))
	return out, root
}
