package main

import (
	"os"
	"path/filepath"
	"regexp"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
)

// The README is the front door: its configuration examples must load and
// every command it names must exist.
func TestReadme_ExamplesHold(t *testing.T) {
	text, err := os.ReadFile("../../README.md")
	require.NoError(t, err)
	readme := string(text)

	blocks := regexp.MustCompile("(?s)```yaml\n(.*?)```").FindAllStringSubmatch(readme, -1)
	require.NotEmpty(t, blocks)
	for i, b := range blocks {
		path := filepath.Join(t.TempDir(), "readme.yaml")
		require.NoError(t, os.WriteFile(path, []byte(b[1]), 0o644))
		_, err := config.Load(path)
		assert.NoError(t, err, "README yaml block %d", i+1)
	}

	// Commands in shell blocks and in code spans.
	uses := regexp.MustCompile("(?m)(?:^(?:\\./dewline|go run \\./cmd/dewline) |`dewline )([a-z]+)").FindAllStringSubmatch(readme, -1)
	require.NotEmpty(t, uses)
	for _, m := range uses {
		if _, ok := commands[m[1]]; !ok {
			t.Errorf("README names \"dewline %s\", which is not a command", m[1])
		}
	}
	for _, f := range regexp.MustCompile(`\]\(((?:deploy|testdata)/[^)#]+)\)`).FindAllStringSubmatch(readme, -1) {
		_, err := os.Stat(filepath.Join("../..", f[1]))
		assert.NoError(t, err, "README links %s", f[1])
	}
}
