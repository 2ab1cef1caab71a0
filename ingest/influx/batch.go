package influx

import (
	"context"
	"fmt"
	"regexp"
	"slices"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/dewline/dewline/ingest"
)

// ReadBatch reads the points of many air handlers in one Flux query and
// calls fn(i, s) with each sample of points[i], in SI, in [from, to), as
// ReadPoints does for one air handler's raw samples. Points that share a
// measurement and tag keys are selected together: their fields as one
// set, and each tag key by the set of its values (a regular expression
// that matches exactly those values, or equality tests where a value has
// characters a regular expression literal cannot carry plainly). Series
// the query selects beyond the points asked for (another combination of
// those tag values) are skipped. A point that matches several series fails
// the read with ErrAmbiguousPoint.
func (c *Client) ReadBatch(ctx context.Context, points []Query, from, to time.Time, fn func(i int, s ingest.Sample) error) error {
	plan, err := planBatch(c.opt.Bucket, points, from, to)
	if err != nil {
		return err
	}
	if plan == nil {
		return nil
	}
	if c.useInfluxQL(ctx) {
		if err := c.readBatchInfluxQL(ctx, plan, from, to, fn); err != nil {
			return fmt.Errorf("read %d points: %w", len(points), err)
		}
		return nil
	}
	rows := newTableRows(plan.locs, plan.toSI)
	var (
		dispatch []int
		key      []byte
	)
	err = c.run(ctx, plan.flux, rows.reset, func(f *fluxCSV) (bool, error) {
		if f.newTable {
			dispatch, key = plan.route(f, dispatch[:0], key)
			if err := rows.claim(f, dispatch); err != nil {
				return false, err
			}
		}
		if len(dispatch) == 0 {
			return false, nil
		}
		return rows.row(f, dispatch, from, to, fn)
	})
	if err != nil {
		return fmt.Errorf("read %d points: %w", len(points), err)
	}
	return nil
}

// batchPlan is a prepared ReadBatch query and what routes its tables back
// to the points.
type batchPlan struct {
	flux   string
	locs   []location
	toSI   []func(float64) float64
	groups map[string][]*batchGroup // by measurement
}

// batchGroup is the points of one measurement with the same tag keys.
type batchGroup struct {
	measurement string
	keys        []string
	fields      []string
	values      [][]string       // per key, the distinct values asked for
	route       map[string][]int // field, then each key's value, NUL-separated -> points
}

func planBatch(bucket string, points []Query, from, to time.Time) (*batchPlan, error) {
	if !from.Before(to) {
		return nil, fmt.Errorf("read window [%s, %s) is empty; from must be before to", fluxTime(from), fluxTime(to))
	}
	if len(points) == 0 {
		return nil, nil
	}
	p := &batchPlan{locs: make([]location, len(points)), toSI: make([]func(float64) float64, len(points)),
		groups: map[string][]*batchGroup{}}
	byKey := map[string]*batchGroup{}
	var order []string // measurement, then keys: the groups in the order met
	seenVal := map[string]bool{}
	seenField := map[string]bool{}
	for i, q := range points {
		loc, toSI, err := locatePoint(q)
		if err != nil {
			return nil, err
		}
		p.locs[i], p.toSI[i] = loc, toSI
		gk := loc.measurement + "\x00" + strings.Join(loc.keys, "\x00")
		g := byKey[gk]
		if g == nil {
			g = &batchGroup{keys: loc.keys, values: make([][]string, len(loc.keys)), route: map[string][]int{}}
			byKey[gk] = g
			order = append(order, gk)
			p.groups[loc.measurement] = append(p.groups[loc.measurement], g)
		}
		if fk := gk + "\x01" + loc.field; !seenField[fk] {
			seenField[fk] = true
			g.fields = append(g.fields, loc.field)
		}
		rk := loc.field
		for j, k := range loc.keys {
			v := loc.tags[k]
			rk += "\x00" + v
			if vk := gk + "\x01" + k + "\x00" + v; !seenVal[vk] {
				seenVal[vk] = true
				g.values[j] = append(g.values[j], v)
			}
		}
		g.route[rk] = append(g.route[rk], i)
	}
	preds := make([]string, 0, len(order))
	for _, gk := range order {
		m, _, _ := strings.Cut(gk, "\x00")
		preds = append(preds, "("+byKey[gk].predicate(m)+")")
	}
	// As in ReadPoints: no group() or sort(), all tags kept. InfluxDB 1.x
	// includes range()'s stop; samples at `to` are dropped as they arrive.
	var b strings.Builder
	fmt.Fprintf(&b, "from(bucket: %s)\n", fluxString(bucket))
	fmt.Fprintf(&b, "  |> range(start: %s, stop: %s)\n", fluxTime(from), fluxTime(to))
	fmt.Fprintf(&b, "  |> filter(fn: (r) => %s)\n", strings.Join(preds, " or "))
	fmt.Fprintf(&b, "  |> drop(columns: %s)\n", fluxStringList([]string{colStart, colStop}))
	p.flux = b.String()
	return p, nil
}

// predicate is the Flux condition selecting the group's series (and
// possibly others that combine its tag values differently).
func (g *batchGroup) predicate(measurement string) string {
	var b strings.Builder
	b.WriteString("r._measurement == ")
	b.WriteString(fluxString(measurement))
	b.WriteString(" and ")
	b.WriteString(fluxOneOf(colField, g.fields))
	for j, k := range g.keys {
		b.WriteString(" and ")
		b.WriteString(fluxOneOf(k, g.values[j]))
	}
	return b.String()
}

// fluxOneOf is the Flux condition that column key holds one of values: an
// equality for one value, a regular expression for several, equalities
// joined by "or" where a value has a character that a regular expression
// literal cannot carry plainly.
func fluxOneOf(key string, values []string) string {
	return oneOf(fluxColumn(key), " == ", " or ", fluxString, values)
}

// oneOf is the condition that col holds one of values in a query language
// whose equality operator is eq, whose disjunction is or and whose string
// literals quote makes: an equality for one value, a regular expression
// (fluxRegexOneOf; Flux and InfluxQL share its literal) for several, or
// the equalities joined by or.
func oneOf(col, eq, or string, quote func(string) string, values []string) string {
	if len(values) == 1 {
		return col + eq + quote(values[0])
	}
	if re, ok := fluxRegexOneOf(values); ok {
		return col + " =~ " + re
	}
	parts := make([]string, len(values))
	for i, v := range values {
		parts[i] = col + eq + quote(v)
	}
	return "(" + strings.Join(parts, or) + ")"
}

// fluxRegexOneOf returns a Flux regular expression literal that matches
// exactly the strings values, and false when one of them has a character
// it would not carry plainly (not valid UTF-8, or a control or other
// non-printing character).
//
// Each value goes through regexp.QuoteMeta, so every character Go's
// regular expressions treat specially is escaped; the literal's one own
// escape (Flux SPEC.md, "Regular expression literals") is "\/" for a slash,
// which QuoteMeta leaves alone. A backslash that QuoteMeta wrote before a
// character is never followed by a slash, so no "\/" is made by accident.
func fluxRegexOneOf(values []string) (string, bool) {
	var b strings.Builder
	b.WriteString("/^(?:")
	sorted := slices.Clone(values)
	slices.Sort(sorted)
	for i, v := range sorted {
		if !utf8.ValidString(v) || strings.IndexFunc(v, func(r rune) bool { return !unicode.IsPrint(r) && r != ' ' }) >= 0 {
			return "", false
		}
		if i > 0 {
			b.WriteByte('|')
		}
		b.WriteString(strings.ReplaceAll(regexp.QuoteMeta(v), "/", `\/`))
	}
	b.WriteString(")$/")
	return b.String(), true
}

// route appends to dst the points that the current table of f belongs to,
// nothing for a series selected beyond them.
func (p *batchPlan) route(f *fluxCSV, dst []int, key []byte) ([]int, []byte) {
	for _, g := range p.groups[f.get(colMeasurement)] {
		key = append(key[:0], f.get(colField)...)
		ok := true
		for _, k := range g.keys {
			if !f.has(k) {
				ok = false
				break
			}
			key = append(key, 0)
			key = append(key, f.get(k)...)
		}
		if ok {
			dst = append(dst, g.route[string(key)]...)
		}
	}
	return dst, key
}

// ReadBatch reads many points in one query (Client.ReadBatch).
func (b *Backend) ReadBatch(ctx context.Context, points []ingest.PointRead, from, to time.Time, fn func(i int, s ingest.Sample) error) error {
	qs := make([]Query, len(points))
	for i, p := range points {
		qs[i] = Query{Ref: p.Ref, Kind: p.Kind}
	}
	return b.c.ReadBatch(ctx, qs, from, to, fn)
}

var _ ingest.BatchReader = (*Backend)(nil)
