package ingest

import (
	"fmt"
	"sort"
	"strings"
)

// MaxUnmatchedNames bounds the series names Unmatched keeps counts for:
// the names come from files, and a long export may name millions.
const MaxUnmatchedNames = 10_000

// Unmatched counts the records of series no air handler maps. It keeps
// per-name counts for the first MaxUnmatchedNames names and only totals
// past them, so memory stays bounded; the zero value is ready to use.
type Unmatched struct {
	Values int // records of unmapped series
	counts map[string]int
	more   int // values of names past the bound
}

// Add counts one record of the named series.
func (u *Unmatched) Add(name string) {
	u.Values++
	if c, ok := u.counts[name]; ok {
		u.counts[name] = c + 1
		return
	}
	if len(u.counts) >= MaxUnmatchedNames {
		u.more++
		return
	}
	if u.counts == nil {
		u.counts = map[string]int{}
	}
	u.counts[name] = 1
}

// Count returns the records counted for name (0 past the bound).
func (u *Unmatched) Count(name string) int { return u.counts[name] }

// Series is the number of distinct names counted; with Capped true there
// were more.
func (u *Unmatched) Series() (n int, capped bool) { return len(u.counts), u.more > 0 }

// Summary says how many series and values were not mapped, with the
// examples most frequent first (ties by name):
//
//	3 series not in the configuration (450 values), e.g. "Lobby lights" (300), "Garage fan" (100) and 1 more
//
// It is "" when nothing was unmatched.
func (u *Unmatched) Summary(examples int) string {
	if u.Values == 0 {
		return ""
	}
	names := make([]string, 0, len(u.counts))
	for n := range u.counts {
		names = append(names, n)
	}
	sort.Slice(names, func(i, j int) bool {
		ci, cj := u.counts[names[i]], u.counts[names[j]]
		if ci != cj {
			return ci > cj
		}
		return names[i] < names[j]
	})
	series := fmt.Sprintf("%d", len(names))
	if u.more > 0 {
		series = fmt.Sprintf("more than %d", len(names))
	}
	var ex []string
	for _, n := range names[:min(examples, len(names))] {
		ex = append(ex, fmt.Sprintf("%q (%d)", n, u.counts[n]))
	}
	s := fmt.Sprintf("%s series not in the configuration (%d values), e.g. %s", series, u.Values, strings.Join(ex, ", "))
	if rest := len(names) - len(ex); rest > 0 || u.more > 0 {
		if u.more > 0 {
			s += " and others"
		} else {
			s += fmt.Sprintf(" and %d more", rest)
		}
	}
	return s
}
