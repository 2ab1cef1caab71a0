package demo

import (
	"errors"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"github.com/dewline/dewline/ingest/outfile"
)

// marker marks a folder the demo wrote; the demo writes into such a folder
// again without being forced.
const marker = ".dewline-demo"

// SetupError is a folder or an address the demo cannot use as given: the
// fix is the user's (another folder, another address, --force, --no-serve).
type SetupError struct{ msg string }

func (e *SetupError) Error() string { return e.msg }

// ListenFree checks that the dashboard can listen on addr, and says how to
// go on when it cannot.
func ListenFree(addr string) error {
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		if errors.Is(err, syscall.EADDRINUSE) {
			return &SetupError{fmt.Sprintf("--listen %s is in use (an earlier demo or dewline serve?): stop it, choose another address with --listen (e.g. 127.0.0.1:9471), or pass --no-serve to stop after the report", addr)}
		}
		return &SetupError{fmt.Sprintf("--listen %s: %v", addr, err)}
	}
	return ln.Close()
}

// DirFree refuses a folder that holds anything but an earlier demo's files
// (a real site's configuration, store or exports would be replaced), unless
// force. A refusal is a *SetupError naming the fix.
func DirFree(dir string, force bool) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
	case err != nil:
		return fmt.Errorf("--dir %s: %w", dir, err)
	case len(entries) > 0 && !force:
		if _, err := os.Stat(filepath.Join(dir, marker)); err != nil {
			var names []string
			for _, e := range entries[:min(3, len(entries))] {
				names = append(names, e.Name())
			}
			more := ""
			if len(entries) > 3 {
				more = fmt.Sprintf(" and %d more", len(entries)-3)
			}
			return &SetupError{fmt.Sprintf("--dir %s already holds files the demo did not write (%s%s): the demo would replace a configuration, store or exports of that name; choose an empty or new folder, or add --force",
				dir, strings.Join(names, ", "), more)}
		}
	}
	return nil
}

// MarkDir creates dir and marks it as the demo's.
func MarkDir(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("--dir %s: %w", dir, err)
	}
	return outfile.WriteBytes(filepath.Join(dir, marker), []byte("written by dewline demo: \"dewline demo --dir\" may write here again\n"))
}

// RemoveStore removes the store of an earlier demo beside the scenario's
// configuration: the demo always shows the same results.
func (sc *Scenario) RemoveStore() error {
	store := filepath.Join(filepath.Dir(sc.ConfigPath), StoreFile)
	for _, suffix := range []string{"", "-wal", "-shm"} {
		if err := os.Remove(store + suffix); err != nil && !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("remove the previous demo store: %w", err)
		}
	}
	return nil
}

// Describe prints the scenario: the site, its air handlers and how each
// behaves, and how long it took to generate.
func (sc *Scenario) Describe(w io.Writer, took time.Duration) {
	zone, _ := time.LoadLocation(sc.Zone)
	fmt.Fprintf(w, "  %s, %d air handlers, %s to %s (%s), %d trend rows in %d exports (%.1f s)\n", sc.Site, len(sc.AirHandlers),
		sc.From.In(zone).Format("2 Jan"), sc.To.In(zone).Add(-time.Hour).Format("2 Jan 2006"), sc.Zone, sc.Rows, len(sc.Exports),
		took.Seconds())
	for _, u := range sc.AirHandlers {
		fmt.Fprintf(w, "    %-6s %-34s %s\n", u.ID, u.Name, u.Behaviour)
	}
}

// DescribeFiles prints where the report, the configuration and the exports
// are: the configuration is the best start for a site of one's own, and the
// exports show what it reads.
func (sc *Scenario) DescribeFiles(w io.Writer, report string) {
	abs, _ := filepath.Abs(report)
	fmt.Fprintf(w, "report: %s\n", abs)
	cfgAbs, _ := filepath.Abs(sc.ConfigPath)
	fmt.Fprintf(w, "configuration: %s\n  (commented; copy it to start your own site, then run dewline check --config on the copy)\n", cfgAbs)
	names := make([]string, 0, len(sc.Exports))
	for _, x := range sc.Exports {
		names = append(names, filepath.Base(x))
	}
	fmt.Fprintf(w, "exports: %s: %s\n", filepath.Dir(cfgAbs), strings.Join(names, ", "))
}
