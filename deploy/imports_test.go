package deploy

import (
	"encoding/json"
	"errors"
	"io"
	"os/exec"
	"slices"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

const module = "github.com/dewline/dewline"

// goPackage is what go list says of one package.
type goPackage struct {
	ImportPath string
	Imports    []string // direct, non-test
	Deps       []string // transitive, non-test
}

// listPackages runs go list over the module (its non-test code).
func listPackages(t *testing.T) map[string]goPackage {
	t.Helper()
	cmd := exec.Command("go", "list", "-json=ImportPath,Imports,Deps", "./...")
	cmd.Dir = ".."
	out, err := cmd.Output()
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		t.Fatalf("go list: %v\n%s", err, ee.Stderr)
	}
	require.NoError(t, err)
	pkgs := map[string]goPackage{}
	dec := json.NewDecoder(strings.NewReader(string(out)))
	for {
		var p goPackage
		err := dec.Decode(&p)
		if errors.Is(err, io.EOF) {
			break
		}
		require.NoError(t, err)
		pkgs[p.ImportPath] = p
	}
	require.Contains(t, pkgs, module+"/psychro", "go list ran over the module")
	return pkgs
}

// TestImports_Rules enforces the import rules of DEVELOPERS.md on the
// packages' non-test code.
func TestImports_Rules(t *testing.T) {
	pkgs := listPackages(t)
	under := func(p, root string) bool { return p == module+"/"+root || strings.HasPrefix(p, module+"/"+root+"/") }
	const influxClient = "github.com/influxdata/influxdb-client-go"

	t.Run("psychro and metrics do no I/O", func(t *testing.T) {
		// Standard packages that reach files, the network, the process or
		// a log; "fmt" and "time" stay allowed (formatting, time as data).
		io := []string{"os", "os/exec", "os/signal", "net", "net/http", "net/url", "io/fs", "io/ioutil", "syscall",
			"database/sql", "log", "log/slog", "path/filepath", "bufio", "io", "runtime", "unsafe"}
		for path, p := range pkgs {
			if !under(path, "psychro") && !under(path, "metrics") {
				continue
			}
			for _, imp := range p.Imports {
				assert.NotContains(t, io, imp, "%s imports %s", path, imp)
				if strings.Contains(imp, ".") { // not the standard library
					assert.True(t, under(imp, "psychro") || under(imp, "metrics") && !under(path, "psychro"),
						"%s imports %s; psychro imports the standard library only, metrics also psychro", path, imp)
				}
			}
		}
	})

	t.Run("only the InfluxDB backend imports the client", func(t *testing.T) {
		for path, p := range pkgs {
			if path == module+"/ingest/influx" {
				continue
			}
			for _, imp := range p.Imports {
				assert.False(t, strings.HasPrefix(imp, influxClient), "%s imports %s", path, imp)
			}
		}
	})

	t.Run("dashboards, the runner and the importer use no store implementation", func(t *testing.T) {
		impls := []string{module + "/ingest/embedded", module + "/ingest/influx", "modernc.org/sqlite"}
		for path, p := range pkgs {
			runner := under(path, "agent")
			if !runner && !under(path, "dashboards") && !under(path, "ingest/importer") {
				continue
			}
			for _, impl := range impls {
				assert.False(t, slices.Contains(p.Deps, impl), "%s depends on %s", path, impl)
			}
			assert.False(t, slices.ContainsFunc(p.Deps, func(d string) bool { return strings.HasPrefix(d, influxClient) }),
				"%s depends on the InfluxDB client", path)
		}
	})

	t.Run("nothing imports cmd", func(t *testing.T) {
		for path, p := range pkgs {
			for _, imp := range p.Imports {
				assert.False(t, under(imp, "cmd"), "%s imports %s", path, imp)
			}
		}
	})
}
