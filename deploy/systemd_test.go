package deploy

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

const (
	unitPath    = "systemd/dewline.service"
	envExample  = "systemd/dewline.env.example"
	sysusersCfg = "systemd/dewline.sysusers"
)

// iniEntry is one assignment of a unit file.
type iniEntry struct {
	section, key, value string
	line                int
}

// parseINI reads a systemd unit file (systemd.syntax(7)): [Section] headers,
// Key=Value assignments, comments starting with '#' or ';', and lines
// continued with a trailing backslash. Anything else is an error.
func parseINI(r io.Reader) ([]iniEntry, error) {
	var out []iniEntry
	section := ""
	sc := bufio.NewScanner(r)
	var cont strings.Builder
	start := 0
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		if cont.Len() == 0 {
			if line == "" || line[0] == '#' || line[0] == ';' {
				continue
			}
			start = n
		}
		if more, ok := strings.CutSuffix(line, `\`); ok {
			cont.WriteString(strings.TrimSpace(more) + " ")
			continue
		}
		cont.WriteString(line)
		full := cont.String()
		cont.Reset()
		if strings.HasPrefix(full, "[") {
			if !strings.HasSuffix(full, "]") || len(full) < 3 {
				return nil, fmt.Errorf("line %d: bad section header %q", start, full)
			}
			section = full[1 : len(full)-1]
			continue
		}
		key, value, ok := strings.Cut(full, "=")
		key = strings.TrimSpace(key)
		if !ok || key == "" || strings.ContainsAny(key, " \t") {
			return nil, fmt.Errorf("line %d: want Key=Value, got %q", start, full)
		}
		if section == "" {
			return nil, fmt.Errorf("line %d: %s outside a section", start, key)
		}
		out = append(out, iniEntry{section: section, key: key, value: strings.TrimSpace(value), line: start})
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	if cont.Len() > 0 {
		return nil, fmt.Errorf("the file ends in a continued line")
	}
	return out, nil
}

// unitFile is a parsed unit with lookups.
type unitFile []iniEntry

// all returns every value of section.key, in order.
func (u unitFile) all(section, key string) []string {
	var out []string
	for _, e := range u {
		if e.section == section && e.key == key {
			out = append(out, e.value)
		}
	}
	return out
}

// last returns the effective (last) value of section.key and whether it is set.
func (u unitFile) last(section, key string) (string, bool) {
	v := u.all(section, key)
	if len(v) == 0 {
		return "", false
	}
	return v[len(v)-1], true
}

// words returns the space-separated words of every value of section.key.
func (u unitFile) words(section, key string) []string {
	var out []string
	for _, v := range u.all(section, key) {
		out = append(out, strings.Fields(v)...)
	}
	return out
}

func loadUnit(t *testing.T) unitFile {
	t.Helper()
	f, err := os.Open(unitPath)
	require.NoError(t, err)
	defer f.Close()
	u, err := parseINI(f)
	require.NoError(t, err, unitPath)
	return u
}

// systemdBool normalises a systemd boolean (systemd.syntax(7): 1, yes,
// true, on / 0, no, false, off).
func systemdBool(v string) string {
	switch strings.ToLower(v) {
	case "1", "yes", "true", "on":
		return "yes"
	case "0", "no", "false", "off":
		return "no"
	}
	return v
}

// systemdSpan parses a systemd time span such as 45s, 1min 30s or 90 (s).
func systemdSpan(v string) (time.Duration, error) {
	if n, err := strconv.Atoi(v); err == nil {
		return time.Duration(n) * time.Second, nil
	}
	s := strings.ReplaceAll(v, " ", "")
	for _, r := range []struct{ from, to string }{{"minutes", "m"}, {"minute", "m"}, {"min", "m"}, {"seconds", "s"}, {"second", "s"}, {"sec", "s"}, {"hours", "h"}, {"hour", "h"}, {"hr", "h"}} {
		s = strings.ReplaceAll(s, r.from, r.to)
	}
	return time.ParseDuration(s)
}

func TestDeploy_INIParser(t *testing.T) {
	u, err := parseINI(strings.NewReader("# c\n[A]\nX=1\n; c\nY = two words \\\n  more\n\n[B]\nX=\n"))
	require.NoError(t, err)
	assert.Equal(t, []iniEntry{{"A", "X", "1", 3}, {"A", "Y", "two words more", 5}, {"B", "X", "", 9}}, []iniEntry(u))
	for _, bad := range []string{"X=1\n", "[A]\nno equals\n", "[A\nX=1\n", "[A]\nX=1 \\\n"} {
		_, err := parseINI(strings.NewReader(bad))
		assert.Error(t, err, "%q", bad)
	}
}

// TestDeploy_SystemdUnit: the unit parses, carries the hardening settings,
// runs a command line that dewline accepts from the path the image uses,
// gives the agent time to finish a run, and reads its secrets from a file
// whose example lists every secret the configurations name.
func TestDeploy_SystemdUnit(t *testing.T) {
	u := loadUnit(t)
	for _, s := range []string{"Unit", "Service", "Install"} {
		found := false
		for _, e := range u {
			found = found || e.section == s
		}
		assert.True(t, found, "[%s] section", s)
	}

	// Hardening (systemd.exec(5)); "systemd-analyze security" weighs them.
	want := map[string]string{
		"NoNewPrivileges":         "yes",
		"ProtectSystem":           "strict",
		"ProtectHome":             "yes",
		"PrivateTmp":              "yes",
		"PrivateDevices":          "yes",
		"ProtectKernelTunables":   "yes",
		"ProtectKernelModules":    "yes",
		"ProtectKernelLogs":       "yes",
		"ProtectControlGroups":    "yes",
		"ProtectClock":            "yes",
		"ProtectHostname":         "yes",
		"RestrictNamespaces":      "yes",
		"RestrictRealtime":        "yes",
		"RestrictSUIDSGID":        "yes",
		"LockPersonality":         "yes",
		"MemoryDenyWriteExecute":  "yes",
		"SystemCallArchitectures": "native",
		"CapabilityBoundingSet":   "", // empty: no capability at all
		"AmbientCapabilities":     "",
		"Restart":                 "on-failure",
	}
	for key, v := range want {
		got, ok := u.last("Service", key)
		if assert.True(t, ok, "Service.%s is not set", key) {
			assert.Equal(t, v, systemdBool(got), "Service.%s", key)
		}
	}
	assert.Contains(t, u.words("Service", "SystemCallFilter"), "@system-service", "SystemCallFilter allows @system-service only")
	fams := u.words("Service", "RestrictAddressFamilies")
	assert.Subset(t, fams, []string{"AF_INET", "AF_INET6"}, "the agent talks TCP")
	for _, f := range fams {
		assert.False(t, strings.HasPrefix(f, "~"), "RestrictAddressFamilies is an allow list")
		assert.NotContains(t, []string{"AF_PACKET", "AF_NETLINK"}, f)
	}

	// A dedicated user that owns the state directory and nothing else.
	dynamic, _ := u.last("Service", "DynamicUser")
	user, _ := u.last("Service", "User")
	if systemdBool(dynamic) != "yes" {
		require.NotEmpty(t, user, "User= or DynamicUser=yes")
		assert.NotContains(t, []string{"root", "0"}, user)
		b, err := os.ReadFile(sysusersCfg)
		require.NoError(t, err, "a static user comes with its sysusers.d file")
		assert.Regexp(t, `(?m)^u\s+`+regexp.QuoteMeta(user)+`\s`, string(b), "%s creates the user %s", sysusersCfg, user)
	}
	state, ok := u.last("Service", "StateDirectory")
	require.True(t, ok, "StateDirectory= (embedded store, webhook queue)")
	stateDir := path.Join("/var/lib", state)
	assert.Contains(t, u.words("Service", "ReadWritePaths"), stateDir, "the state directory is the writable place")

	// ExecStart: the image's binary path and a command line dewline takes.
	exec, ok := u.last("Service", "ExecStart")
	require.True(t, ok, "ExecStart")
	assert.False(t, strings.ContainsAny(exec[:1], "+!"), "ExecStart must not run with full privileges")
	args := strings.Fields(strings.TrimLeft(exec, "-@:|"))
	require.NotEmpty(t, args)
	assert.Equal(t, dockerEntrypoint(t), args[0], "ExecStart runs the binary where the image has it")
	vals := checkRunCommandLine(t, unitPath+" ExecStart", args[1:])
	assert.Equal(t, "/etc/dewline/dewline.yaml", vals["config"])
	assert.Empty(t, vals["shard"], "one service, one replica")
	assert.Equal(t, "false", vals["once"], "the long-running agent")
	assert.Equal(t, "false", vals["dry-run"], "the long-running agent")

	// Stopping: SIGTERM (the agent handles SIGTERM and SIGINT), and time for
	// --grace plus the HTTP endpoint's 5 s shutdown (cmd/dewline/run.go).
	if sig, ok := u.last("Service", "KillSignal"); ok {
		assert.Contains(t, []string{"SIGTERM", "SIGINT", "TERM", "INT"}, sig)
	}
	grace, err := time.ParseDuration(vals["grace"])
	require.NoError(t, err)
	stopS, ok := u.last("Service", "TimeoutStopSec")
	require.True(t, ok, "TimeoutStopSec (the default 90s hides a stuck stop)")
	stop, err := systemdSpan(stopS)
	require.NoError(t, err, "TimeoutStopSec=%s", stopS)
	assert.Greater(t, stop, grace+5*time.Second, "TimeoutStopSec %v must exceed --grace %v plus 5 s", stop, grace)

	// Secrets: a mandatory EnvironmentFile next to the configuration.
	envFile, ok := u.last("Service", "EnvironmentFile")
	require.True(t, ok, "EnvironmentFile= for the secrets")
	assert.Equal(t, "/etc/dewline/dewline.env", envFile, "no '-': a missing secrets file is an error")
	assert.FileExists(t, envExample)
	installed, _ := u.last("Install", "WantedBy")
	assert.Equal(t, "multi-user.target", installed)
}

// TestDeploy_SystemdEnvExample: the example secrets file holds names only,
// and names every secret the example configurations and the ConfigMap use.
func TestDeploy_SystemdEnvExample(t *testing.T) {
	b, err := os.ReadFile(envExample)
	require.NoError(t, err)
	names := map[string]bool{}
	for n, line := range strings.Split(string(b), "\n") {
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		key, val, ok := strings.Cut(line, "=")
		require.True(t, ok, "%s:%d: KEY= lines only", envExample, n+1)
		assert.Regexp(t, envName, key, "%s:%d", envExample, n+1)
		assert.Empty(t, val, "%s:%d: %s must stay an empty placeholder: secrets are never committed", envExample, n+1, key)
		names[key] = true
	}
	for name, where := range allSecretEnvNames(t) {
		assert.True(t, names[name], "%s names %s, missing from %s", where, name, envExample)
	}
}
