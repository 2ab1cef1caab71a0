package main

import (
	"fmt"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/testkit"
)

// TestParseShard_Forms: --shard takes "i/n" and a StatefulSet pod name with
// n. The expected indexes follow the Kubernetes StatefulSet documentation
// ("Pod Identity"): the pods of a StatefulSet named NAME with N replicas are
// NAME-0 ... NAME-(N-1), so the ordinal is what follows the last '-'.
func TestParseShard_Forms(t *testing.T) {
	tests := []struct {
		name string
		in   string
		want agent.Shard
	}{
		{name: "index", in: "0/3", want: agent.Shard{Index: 0, Count: 3}},
		{name: "last index", in: "2/3", want: agent.Shard{Index: 2, Count: 3}},
		{name: "single replica", in: "0/1", want: agent.Shard{Index: 0, Count: 1}},
		{name: "pod name", in: "dewline-2/3", want: agent.Shard{Index: 2, Count: 3}},
		{name: "pod name first", in: "dewline-0/3", want: agent.Shard{Index: 0, Count: 3}},
		{name: "pod name with dashes", in: "air-agent-west-1/2", want: agent.Shard{Index: 1, Count: 2}},
		{name: "pod name ending in digits", in: "ahu2-agent-10/12", want: agent.Shard{Index: 10, Count: 12}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := parseShard(tc.in)
			require.NoError(t, err)
			assert.Equal(t, tc.want, got)
		})
	}
}

// TestParseShard_Errors: a bad --shard is a usage error (exit 2) that names
// the flag, the value and the forms that work, plus what is wrong with it.
func TestParseShard_Errors(t *testing.T) {
	tests := []struct {
		name string
		in   string
		want string // besides the flag, the value and the forms
	}{
		{name: "index not below n", in: "3/2", want: "index 3 is not below n = 2"},
		{name: "index equal to n", in: "2/2", want: "index 2 is not below n = 2"},
		{name: "ordinal not below replicas", in: "dewline-3/3", want: "pod ordinal 3 is not below n = 3; n must be the StatefulSet's spec.replicas"},
		{name: "no replicas", in: "0/0", want: "at least 1"},
		{name: "no slash", in: "1", want: "at least 1"},
		{name: "negative index", in: "-1/3", want: "is not a pod name"},
		{name: "signed replicas", in: "0/+3", want: "whole number"},
		{name: "garbage after n", in: "0/3x", want: "whole number"},
		{name: "two slashes", in: "0/3/4", want: "whole number"},
		{name: "name without ordinal", in: "dewline/3", want: "no replica index"},
		{name: "ordinal not a number", in: "dewline-x/3", want: "no replica index"},
		{name: "name ends in dash", in: "dewline--1/3", want: "is not a pod name"},
		{name: "pod name not expanded", in: "$(POD_NAME)/3", want: "POD_NAME from metadata.name"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := parseShard(tc.in)
			require.Error(t, err)
			var ue *usageError
			require.ErrorAs(t, err, &ue, "a command-line mistake exits 2")
			msg := err.Error()
			assert.Contains(t, msg, "--shard")
			assert.Contains(t, msg, `"`+tc.in+`"`, "names the bad value")
			assert.Contains(t, msg, "i/n", "names the plain form")
			assert.Contains(t, msg, "dewline-0/3", "names the pod-name form")
			assert.Contains(t, msg, tc.want)
		})
	}
}

// TestParseShard_Command: the pod-name form reaches the agent through the
// command line, and a bad one exits 2 before anything is opened.
func TestParseShard_Command(t *testing.T) {
	dir := t.TempDir()
	cfg, _ := writeScenario(t, dir)
	code, _, errOut := runCLI(t, "run", "--config", cfg, "--shard", "dewline-5/3")
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, `--shard "dewline-5/3"`)

	// One replica of one: the pod-name form owns every air handler, like 0/1.
	code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfg, "--shard", "dewline-0/1", "--dry-run", "--as-of", "2026-07-15T12:07")
	require.Equal(t, 0, code, errOut)
	assert.Contains(t, out, "dry run: nothing written")
}

// TestShard_ThreeReplicasWriteEveryHourOnce runs three replicas
// (--shard 0/3, 1/3, 2/3) of one site against the real InfluxDB server. Their
// dry runs together print every hour of every air handler exactly once
// (each dewline_hourly line is one write), and their real runs store those
// hours: each air handler is taken by one replica, and InfluxDB holds one
// point per air handler and hour.
func TestShard_ThreeReplicasWriteEveryHourOnce(t *testing.T) {
	url, _ := testkit.InfluxDB(t)
	db := freshDB(t, url, "dewline_shard3")
	var ahus []string
	for i := 1; i <= 12; i++ {
		ahus = append(ahus, fmt.Sprintf("AHU-%d", i))
	}
	dir := t.TempDir()
	cfg := site{store: influxStore(url, db, "10s"), meas: "shard_trend", schedule: "{backfill: 6h, lookback: 3h}", ahus: ahus}.write(t, dir, "site.yaml")
	from := time.Date(2026, 7, 14, 5, 0, 0, 0, time.UTC)
	importTrends(t, dir, cfg, ahus, from, 10*time.Hour)
	// 09:30 in Chicago (CDT) is 14:30 UTC: the last complete hour starts at
	// 13:00 UTC, and the 6 hours of backfill start at 08:00 UTC.
	const asOf = "2026-07-14T09:30"
	first, end := time.Date(2026, 7, 14, 8, 0, 0, 0, time.UTC), time.Date(2026, 7, 14, 14, 0, 0, 0, time.UTC)
	const hours = 6

	hourly := regexp.MustCompile(`(?m)^dewline_hourly,ahu=(\S+?),\S* .* (\d+)$`)
	written := map[string]int{} // "ahu hour" -> lines
	for i := 0; i < 3; i++ {
		r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--dry-run", "--as-of", asOf, "--shard", fmt.Sprintf("%d/3", i))
		require.Equal(t, 0, r.code, r.stderr)
		for _, m := range hourly.FindAllStringSubmatch(r.stdout, -1) {
			ns, err := strconv.ParseInt(m[2], 10, 64)
			require.NoError(t, err)
			written[m[1]+" "+time.Unix(0, ns).UTC().Format(time.RFC3339)]++
		}
	}
	assert.Len(t, written, len(ahus)*hours, "every air handler's every hour, once")
	for _, id := range ahus {
		for h := first; h.Before(end); h = h.Add(time.Hour) {
			assert.Equal(t, 1, written[id+" "+h.Format(time.RFC3339)], "%s %s is written by exactly one replica", id, h.Format(time.RFC3339))
		}
	}

	taken := map[string]int{}
	for i := 0; i < 3; i++ {
		r := runDewline(t, runBound, "--log-level", "warn", "run", "--config", cfg, "--once", "--as-of", asOf, "--shard", fmt.Sprintf("%d/3", i))
		require.Equal(t, 0, r.code, r.stderr)
		rep := onceReport(t, r.stdout)
		assert.NotEmpty(t, rep, "replica %d owns some of 12 air handlers", i)
		for id, o := range rep {
			taken[id]++
			assert.Equal(t, hours, o.hours, id)
		}
	}
	stored := hoursPerAHU(t, url, db, first, end)
	for _, id := range ahus {
		assert.Equal(t, 1, taken[id], "%s is taken by exactly one replica", id)
		require.Len(t, stored[id], hours, id)
		for ms, n := range stored[id] {
			assert.Equal(t, 1, n, "%s at %s: one point", id, time.UnixMilli(ms).UTC().Format(time.RFC3339))
		}
	}
}

// TestRun_EmptyShard: the split by hash can leave a replica without any air
// handler even with fewer replicas than air handlers. Such a replica is no
// error: --once and --dry-run say so and exit 0, for one site as for
// several, the long-running agent stays up and ready with a note and runs
// nothing, and each warns once, naming the shard and the fix.
func TestRun_EmptyShard(t *testing.T) {
	dir := t.TempDir()
	cfgPath, data := writeScenario(t, dir)
	mustCLI(t, "--log-level", "warn", "import", "--config", cfgPath, data)
	cfg, err := config.Load(cfgPath)
	require.NoError(t, err)
	// The one air handler goes to one of two replicas; the other is empty.
	shard := "dewline-0/2"
	if !(agent.Shard{Index: 1, Count: 2}).Owns(cfg.Site.ID, "AHU-7") {
		shard = "dewline-1/2"
	}
	warnedOnce := func(t *testing.T, logs string) {
		t.Helper()
		assert.Equal(t, 1, strings.Count(logs, `"message":"this shard owns no air handler"`), logs)
		assert.Contains(t, logs, `"shard":"`+shard+`"`)
		assert.Contains(t, logs, "run fewer replicas")
		assert.Contains(t, logs, "takes air handlers as the configuration grows")
	}

	t.Run("once", func(t *testing.T) {
		code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfgPath, "--once", "--as-of", "2026-07-15T12:07", "--shard", shard)
		require.Equal(t, 0, code, errOut)
		assert.Contains(t, out, "no air handler in this shard")
		warnedOnce(t, errOut)
		assert.Empty(t, storedHours(t, filepath.Join(dir, "test.db")), "nothing is run, not every air handler")
	})
	t.Run("dry run", func(t *testing.T) {
		code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", cfgPath, "--dry-run", "--as-of", "2026-07-15T12:07", "--shard", shard)
		require.Equal(t, 0, code, errOut)
		assert.NotContains(t, out, "dewline_hourly")
		warnedOnce(t, errOut)
	})
	t.Run("several sites", func(t *testing.T) {
		// Two sites of one air handler each, and a replica of many that
		// owns neither.
		sites := filepath.Join(dir, "sites")
		require.NoError(t, os.MkdirAll(sites, 0o700))
		for _, id := range []string{"north", "south"} {
			text := strings.Replace(analyzeConfig, "site: {", "site: {id: "+id+", ", 1)
			require.NoError(t, os.WriteFile(filepath.Join(sites, id+".yaml"), []byte(text), 0o600))
		}
		i := 0
		for (agent.Shard{Index: i, Count: 8}).Owns("north", "AHU-7") || (agent.Shard{Index: i, Count: 8}).Owns("south", "AHU-7") {
			i++
		}
		many := fmt.Sprintf("%d/8", i)
		code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", sites, "--once", "--as-of", "2026-07-15T12:07", "--shard", many)
		require.Equal(t, 0, code, errOut)
		assert.Contains(t, out, "north: no air handler in this shard")
		assert.Contains(t, out, "south: no air handler in this shard")
		assert.Equal(t, 1, strings.Count(errOut, `"message":"this shard owns no air handler"`), errOut)
		assert.Contains(t, errOut, `"shard":"`+many+`"`)
	})
	t.Run("agent", func(t *testing.T) {
		text, err := os.ReadFile(cfgPath)
		require.NoError(t, err)
		agentCfg := filepath.Join(dir, "agent.yaml")
		require.NoError(t, os.WriteFile(agentCfg, append(text, "http: {listen: \"127.0.0.1:0\"}\n"...), 0o600))
		p := startDewline(t, "run", "--config", agentCfg, "--shard", shard)
		base := "http://" + p.httpAddr(t)
		status, body := httpGet(t, base, "/readyz")
		assert.Equal(t, http.StatusOK, status, body)
		assert.Contains(t, body, `"status":"ready"`)
		assert.Contains(t, body, `"note":"this shard owns no air handler`)
		status, _ = httpGet(t, base, "/healthz")
		assert.Equal(t, http.StatusOK, status)
		p.stop(t, 30*time.Second)
		assert.NoError(t, p.err, "up until stopped, then a clean exit")
		logs := p.stderrText()
		warnedOnce(t, logs)
		assert.NotContains(t, logs, `"run done"`, "runs nothing")
		assert.Empty(t, storedHours(t, filepath.Join(dir, "test.db")))
	})
}
