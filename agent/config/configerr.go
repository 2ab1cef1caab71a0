package config

import (
	"errors"
	"fmt"
	"reflect"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"

	"github.com/dewline/dewline/metrics"
)

// Problem is one mistake in a configuration file.
type Problem struct {
	Line int    // 1-based line in the file, 0 when unknown
	Path string // key path, e.g. air_handlers[0].points.entering_temp.unit
	Msg  string // what is wrong
	Fix  string // what to do
}

// Error lists every problem found in a configuration file.
type Error struct {
	File     string
	Problems []Problem
}

func (e *Error) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d problem", e.File, len(e.Problems))
	if len(e.Problems) != 1 {
		b.WriteString("s")
	}
	for _, p := range e.Problems {
		b.WriteString("\n  ")
		b.WriteString(e.File)
		if p.Line > 0 {
			fmt.Fprintf(&b, ":%d", p.Line)
		}
		b.WriteString(": ")
		if p.Path != "" {
			b.WriteString(p.Path + ": ")
		}
		b.WriteString(p.Msg)
		if p.Fix != "" {
			b.WriteString("; " + p.Fix)
		}
	}
	return b.String()
}

func (e *Error) add(line int, path, msg, fix string) {
	e.Problems = append(e.Problems, Problem{Line: line, Path: path, Msg: msg, Fix: fix})
}

var (
	reLine       = regexp.MustCompile(`line (\d+)`)
	reUnknown    = regexp.MustCompile(`^line (\d+): field (\S+) not found in type (\S+)$`)
	reNumberUnit = regexp.MustCompile(`^\s*[-+]?[0-9.,]+\s*[^0-9\s]`)
	reTypeError  = regexp.MustCompile(`^line (\d+): cannot unmarshal !!(\w+) ` + "`" + `([^` + "`" + `]*)` + "`" + ` into (\S+)$`)
)

func yamlLine(msg string) int {
	if m := reLine.FindStringSubmatch(msg); m != nil {
		n, _ := strconv.Atoi(m[1])
		return n
	}
	return 0
}

// addDecodeErrors turns the YAML decoder's errors into problems with fixes:
// an unknown key lists the keys allowed there and the nearest one; a value
// of the wrong type names its key. It returns the key paths that a
// misspelt key probably meant and that the file therefore lacks, so that
// the caller does not report them missing as well.
func (e *Error) addDecodeErrors(err error, root *yaml.Node) (meant []string) {
	var te *yaml.TypeError
	if !errors.As(err, &te) {
		e.add(yamlLine(err.Error()), "", strings.TrimPrefix(err.Error(), "yaml: "), "fix the YAML")
		return nil
	}
	for _, msg := range te.Errors {
		line := yamlLine(msg)
		if m := reUnknown.FindStringSubmatch(msg); m != nil {
			key, typ := m[2], m[3]
			allowed := keysOf(typ)
			fix := "remove it"
			if len(allowed) > 0 {
				fix = "allowed keys here: " + strings.Join(allowed, ", ")
				if near := nearest(key, allowed); near != "" {
					fix = fmt.Sprintf("did you mean %q? %s", near, fix)
					if parent, ok := keyPath(root, line, key, true); ok {
						meant = append(meant, joinPath(parentPath(parent), near))
					}
				}
			}
			if key == "token" || key == "password" {
				fix = "secrets do not belong in the file: name an environment variable with token_env or a file with token_file"
			}
			e.add(line, "", fmt.Sprintf("unknown key %q", key), fix)
			continue
		}
		if m := reTypeError.FindStringSubmatch(msg); m != nil {
			want := m[4]
			fix := "give a " + friendlyType(want)
			if want == "time.Duration" {
				fix = "give a duration such as 90s, 15m or 1h"
			} else if (want == "float64" || want == "int") && reNumberUnit.MatchString(m[3]) {
				fix = "give the number alone, without a unit or currency"
			}
			path, _ := keyPath(root, line, m[3], false)
			e.add(line, path, fmt.Sprintf("%q is not a valid %s", m[3], friendlyType(want)), fix)
			continue
		}
		e.add(line, "", strings.TrimPrefix(msg, fmt.Sprintf("line %d: ", line)), "")
	}
	return meant
}

// keyPath finds, in the document under n, the key on line that is text
// (isKey) or whose scalar value is text, and returns its path
// (air_handlers[0].points.entering_temp.unit).
func keyPath(n *yaml.Node, line int, text string, isKey bool) (string, bool) {
	var walk func(n *yaml.Node, path string) (string, bool)
	walk = func(n *yaml.Node, path string) (string, bool) {
		switch n.Kind {
		case yaml.DocumentNode:
			for _, c := range n.Content {
				if p, ok := walk(c, path); ok {
					return p, true
				}
			}
		case yaml.MappingNode:
			for i := 0; i+1 < len(n.Content); i += 2 {
				k, v := n.Content[i], n.Content[i+1]
				p := joinPath(path, k.Value)
				if isKey && k.Line == line && k.Value == text {
					return p, true
				}
				if !isKey && v.Kind == yaml.ScalarNode && v.Line == line && v.Value == text {
					return p, true
				}
				if q, ok := walk(v, p); ok {
					return q, true
				}
			}
		case yaml.SequenceNode:
			for i, c := range n.Content {
				if p, ok := walk(c, fmt.Sprintf("%s[%d]", path, i)); ok {
					return p, true
				}
			}
		}
		return "", false
	}
	return walk(n, "")
}

func joinPath(parent, key string) string {
	if parent == "" {
		return key
	}
	return parent + "." + key
}

// parentPath drops the last key of a path.
func parentPath(p string) string {
	if i := strings.LastIndexByte(p, '.'); i >= 0 {
		return p[:i]
	}
	return ""
}

// underAny reports whether path is one of paths or lies under one.
func underAny(path string, paths []string) bool {
	for _, p := range paths {
		if path == p || strings.HasPrefix(path, p+".") || strings.HasPrefix(path, p+"[") {
			return true
		}
	}
	return false
}

func friendlyType(t string) string {
	switch t {
	case "float64":
		return "number"
	case "int":
		return "whole number"
	case "string":
		return "text value"
	case "time.Duration":
		return "duration"
	}
	if strings.HasPrefix(t, "map[") || strings.HasPrefix(t, "config.") || strings.HasPrefix(t, "metrics.") {
		return "mapping (key: value lines)"
	}
	if strings.HasPrefix(t, "[]") {
		return "list"
	}
	return t
}

// configTypes maps the type names the YAML decoder reports to their Go types.
var configTypes = map[string]reflect.Type{
	"config.Config": reflect.TypeOf(Config{}), "config.Site": reflect.TypeOf(Site{}),
	"config.Store": reflect.TypeOf(Store{}), "config.InfluxConfig": reflect.TypeOf(InfluxConfig{}),
	"config.Grid": reflect.TypeOf(Grid{}), "config.Prices": reflect.TypeOf(Prices{}),
	"config.AirHandler": reflect.TypeOf(AirHandler{}), "config.Cooling": reflect.TypeOf(Cooling{}),
	"config.Reheat": reflect.TypeOf(Reheat{}), "config.Airflow": reflect.TypeOf(Airflow{}),
	"config.Fan": reflect.TypeOf(Fan{}), "config.Target": reflect.TypeOf(Target{}),
	"config.Sensors": reflect.TypeOf(Sensors{}), "config.Alerts": reflect.TypeOf(Alerts{}),
	"config.Exports": reflect.TypeOf(Exports{}), "config.Schedule": reflect.TypeOf(Schedule{}), "config.HTTP": reflect.TypeOf(HTTP{}), "config.Webhook": reflect.TypeOf(Webhook{}),
	"metrics.PointRef": reflect.TypeOf(metrics.PointRef{}), "config.OutdoorAir": reflect.TypeOf(OutdoorAir{}),
}

func keysOf(typ string) []string {
	t, ok := configTypes[typ]
	if !ok {
		return nil
	}
	var keys []string
	for i := 0; i < t.NumField(); i++ {
		tag := strings.Split(t.Field(i).Tag.Get("yaml"), ",")[0]
		if tag != "" && tag != "-" {
			keys = append(keys, tag)
		}
	}
	sort.Strings(keys)
	return keys
}

// nearest returns the candidate within edit distance 2 of s, if any.
func nearest(s string, candidates []string) string {
	best, bestD := "", 3
	for _, c := range candidates {
		if d := editDistance(s, c); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// walk follows a key path in the YAML tree (strings step into mappings,
// ints into sequences) and returns the node reached, the line of the
// deepest key or item found, and whether the whole path was found.
func walk(root *yaml.Node, path ...any) (n *yaml.Node, line int, ok bool) {
	if root == nil {
		return nil, 0, false
	}
	n = root
	if n.Kind == yaml.DocumentNode && len(n.Content) > 0 {
		n = n.Content[0]
	}
	line = n.Line
	for _, p := range path {
		switch k := p.(type) {
		case string:
			if n.Kind != yaml.MappingNode {
				return n, line, false
			}
			found := false
			for i := 0; i+1 < len(n.Content); i += 2 {
				if n.Content[i].Value == k {
					line = n.Content[i].Line
					n = n.Content[i+1]
					found = true
					break
				}
			}
			if !found {
				return n, line, false
			}
		case int:
			if n.Kind != yaml.SequenceNode || k >= len(n.Content) {
				return n, line, false
			}
			n = n.Content[k]
			line = n.Line
		}
	}
	return n, line, true
}

// given reports whether the file sets the key at path: a zero it gives
// is not the zero of a key left out, which takes its default.
func given(root *yaml.Node, path ...any) bool {
	n, _, ok := walk(root, path...)
	return ok && !(n.Kind == yaml.ScalarNode && n.Tag == "!!null")
}

// lineOf finds the line of the value at a key path in the YAML tree. It
// returns the deepest line found, so a missing key reports its parent's
// line.
func lineOf(root *yaml.Node, path ...any) int {
	_, line, _ := walk(root, path...)
	return line
}
