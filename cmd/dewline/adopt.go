package main

import (
	"context"
	"flag"
	"fmt"

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
	ahus := make([]string, 0, len(cfg.AirHandlers))
	for _, a := range cfg.AirHandlers {
		ahus = append(ahus, a.ID)
	}
	return store.Adopt(ctx, ad, siteLabel(cfg.Site.ID), ahus, *list, e.stdout)
}

// siteLabel is a site id as results are tagged with it.
func siteLabel(id string) string {
	if id == "" {
		return "default"
	}
	return id
}
