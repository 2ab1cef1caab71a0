package store

import (
	"context"
	"fmt"
	"io"
	"sort"
	"strings"
	"time"
)

// Adopt lists the results the store holds without a site tag and, unless
// list, copies them into the site (site is its label as results are tagged
// with it, ahus its air handlers), printing both steps to w. It is the
// whole of "dewline adopt" behind the command's flags.
func Adopt(ctx context.Context, ad UntaggedAdopter, site string, ahus []string, list bool, w io.Writer) error {
	now := time.Now()
	found, err := ad.UntaggedResults(ctx, now)
	if err != nil {
		return err
	}
	if len(found) == 0 {
		fmt.Fprintln(w, "no results without a site tag: nothing to adopt")
		return nil
	}
	names := make([]string, 0, len(found))
	for a, n := range found {
		names = append(names, fmt.Sprintf("%s (%d hours)", a, n))
	}
	sort.Strings(names)
	fmt.Fprintf(w, "results without a site tag: %s\n", strings.Join(names, ", "))
	if list {
		return nil
	}
	done, err := ad.AdoptUntagged(ctx, ahus, now)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "site %q adopted %d hours and %d alert transitions; %d untagged points left (the site already has points at those times: copied before, or written since)\n",
		site, done.Hours, done.Transitions, done.Kept)
	return nil
}
