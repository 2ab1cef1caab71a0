package main

import (
	"context"
	"flag"
	"fmt"
	"sort"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest/store"
)

// runAdopt copies results written before they carried the site tag into
// the configured site's series, once, after an upgrade: until then no site
// reads them.
func runAdopt(ctx context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("adopt", flag.ContinueOnError)
	fs.String("config", "", "configuration file of the site that wrote the untagged results (required)")
	list := fs.Bool("list", false, "only list the air handlers with untagged results, and copy nothing")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline adopt --config FILE [--list]")
		fs.PrintDefaults()
	}
	cfg, err := parseWithConfig(fs, args, e.stdout)
	if err != nil {
		return err
	}
	st, err := openStore(ctx, cfg, false, e.log)
	if err != nil {
		return err
	}
	defer st.Close()
	ad, ok := st.Store.(store.UntaggedAdopter)
	if !ok {
		return fmt.Errorf("the %s store holds one site's results and has no untagged results to adopt", cfg.Store.Kind)
	}
	now := time.Now()
	found, err := ad.UntaggedResults(ctx, now)
	if err != nil {
		return err
	}
	if len(found) == 0 {
		fmt.Fprintln(e.stdout, "no results without a site tag: nothing to adopt")
		return nil
	}
	names := make([]string, 0, len(found))
	for a, n := range found {
		names = append(names, fmt.Sprintf("%s (%d hours)", a, n))
	}
	sort.Strings(names)
	fmt.Fprintf(e.stdout, "results without a site tag: %s\n", strings.Join(names, ", "))
	if *list {
		return nil
	}
	ahus := make([]string, 0, len(cfg.AirHandlers))
	for _, a := range cfg.AirHandlers {
		ahus = append(ahus, a.ID)
	}
	done, err := ad.AdoptUntagged(ctx, ahus, now)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "site %q adopted %d hours and %d alert transitions; %d untagged points left (the site already has points at those times: copied before, or written since)\n",
		siteLabel(cfg.Site.ID), done.Hours, done.Transitions, done.Kept)
	return nil
}

// siteLabel is a site id as results are tagged with it.
func siteLabel(id string) string {
	if id == "" {
		return "default"
	}
	return id
}
