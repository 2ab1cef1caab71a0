package main

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent"
)

// TestPortfolio_ShardAcrossSites: "dewline run --once --shard i/n" given
// two sites (a folder of their configurations) whose air handlers share
// ids spreads the pairs (site, air handler) of both over the replicas:
// every pair is computed by exactly one replica, the one rendezvous
// hashing on the site id and the air-handler id names.
func TestPortfolio_ShardAcrossSites(t *testing.T) {
	dir := t.TempDir()
	_, data := writeScenario(t, dir)
	sitesDir := filepath.Join(dir, "sites")
	require.NoError(t, os.MkdirAll(sitesDir, 0o700))
	ids := []string{"AHU-1", "AHU-2", "AHU-3", "AHU-4", "AHU-5", "AHU-6"}
	block := analyzeConfig[strings.Index(analyzeConfig, "  - id: AHU-7"):]
	head := analyzeConfig[:strings.Index(analyzeConfig, "  - id: AHU-7")]
	for _, site := range []string{"north", "south"} {
		var b strings.Builder
		b.WriteString(strings.Replace(strings.Replace(head, "site: {", "site: {id: "+site+", name: "+site+", ", 1),
			"path: test.db", "path: "+site+".db", 1))
		for _, id := range ids {
			b.WriteString(strings.Replace(block, "AHU-7", id, 1))
		}
		cfg := filepath.Join(sitesDir, site+".yaml")
		require.NoError(t, os.WriteFile(cfg, []byte(b.String()), 0o600))
		code, _, errOut := runCLI(t, "--log-level", "warn", "import", "--config", cfg, data)
		require.Equal(t, 0, code, errOut)
	}

	const n = 3
	line := regexp.MustCompile(`(?m)^(north|south) (AHU-\d): (\d+) hours, checkpoint 2026-07-15T16:00:00Z`)
	owner := map[string]int{}
	perReplica := make([]int, n)
	for i := range n {
		code, out, errOut := runCLI(t, "--log-level", "warn", "run", "--config", sitesDir, "--once", "--as-of", "2026-07-15T12:07", "--shard", fmt.Sprintf("%d/%d", i, n))
		require.Equal(t, 0, code, errOut+out)
		for _, m := range line.FindAllStringSubmatch(out, -1) {
			key := m[1] + "/" + m[2]
			prev, dup := owner[key]
			require.False(t, dup, "%s computed by replicas %d and %d", key, prev, i)
			owner[key] = i
			perReplica[i]++
			assert.True(t, agent.Shard{Index: i, Count: n}.Owns(m[1], m[2]), key)
		}
	}
	require.Len(t, owner, 2*len(ids), "every air handler of every site is computed once: %v", owner)
	for i, c := range perReplica {
		assert.Positive(t, c, "replica %d has a share", i)
	}
	// The site is part of the key: some id goes to different replicas at
	// the two sites.
	split := 0
	for _, id := range ids {
		if owner["north/"+id] != owner["south/"+id] {
			split++
		}
	}
	assert.Positive(t, split, "assignment %v", owner)

	// Several sites are for the one-shot runs; two files of one site are refused.
	code, _, errOut := runCLI(t, "run", "--config", sitesDir)
	assert.Equal(t, 2, code)
	assert.Contains(t, errOut, "several sites (2 configurations) go with --once or --dry-run")
	dup := filepath.Join(dir, "north-again.yaml")
	text, err := os.ReadFile(filepath.Join(sitesDir, "north.yaml"))
	require.NoError(t, err)
	require.NoError(t, os.WriteFile(dup, text, 0o600))
	code, _, errOut = runCLI(t, "run", "--config", sitesDir, "--config", dup, "--once")
	assert.Equal(t, 1, code)
	assert.Contains(t, errOut, `both site "north"`)
}
