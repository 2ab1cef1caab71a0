// Command gen writes dewline's Grafana dashboards from their definition in
// deploy/grafana; "go generate ./deploy/grafana" runs it there.
package main

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"

	"github.com/dewline/dewline/deploy/grafana"
)

func main() {
	files, err := grafana.Files()
	if err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(1)
	}
	names := make([]string, 0, len(files))
	for n := range files {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		if err := os.MkdirAll(filepath.Dir(n), 0o755); err != nil {
			fmt.Fprintln(os.Stderr, "gen:", err)
			os.Exit(1)
		}
		if err := os.WriteFile(n, files[n], 0o644); err != nil {
			fmt.Fprintln(os.Stderr, "gen:", err)
			os.Exit(1)
		}
		fmt.Println(n)
	}
}
