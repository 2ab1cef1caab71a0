package telemetry

import (
	"fmt"
	"runtime"
	"runtime/debug"
)

// Build is what the Go toolchain recorded of this binary's build (go build
// in a checkout records the commit; go run and go test may not).
type Build struct {
	Version, Revision string // "unknown" when not recorded
	Modified          bool   // built with local changes
	GoVersion         string
}

// ReadBuild reads the build information of the running binary.
func ReadBuild() Build {
	b := Build{Version: "unknown", Revision: "unknown", GoVersion: runtime.Version()}
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return b
	}
	if bi.Main.Version != "" {
		b.Version = bi.Main.Version
	}
	b.GoVersion = bi.GoVersion
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			if s.Value != "" {
				b.Revision = s.Value
			}
		case "vcs.modified":
			b.Modified = s.Value == "true"
		}
	}
	return b
}

// Line is the build as "dewline --version" prints it.
func (b Build) Line() string {
	modified := ""
	if b.Modified {
		modified = ", with local changes"
	}
	return fmt.Sprintf("dewline %s (commit %s%s, %s)", b.Version, b.Revision, modified, b.GoVersion)
}

// buildVersion returns the main module's version and VCS revision as the
// go tool stamped them, or "unknown".
func buildVersion() (version, revision string) {
	b := ReadBuild()
	return b.Version, b.Revision
}
