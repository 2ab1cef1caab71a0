package agent

import (
	"context"
	"fmt"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestShard_CoversEachOnce(t *testing.T) {
	var ahus []string
	for i := 0; i < 600; i++ {
		ahus = append(ahus, fmt.Sprintf("AHU-%03d", i))
	}
	owner := func(n int) map[string]int {
		m := map[string]int{}
		for _, a := range ahus {
			owners := 0
			for i := 0; i < n; i++ {
				if (Shard{i, n}).Owns("campus-north", a) {
					m[a] = i
					owners++
				}
			}
			require.Equal(t, 1, owners, "%s has exactly one owner among %d", a, n)
		}
		return m
	}
	four, five := owner(4), owner(5)
	// Balance: each of 4 replicas takes about a quarter (binomial spread,
	// 600 units: 150 ± 3σ ≈ 150 ± 32).
	counts := map[int]int{}
	for _, i := range four {
		counts[i]++
	}
	for i := 0; i < 4; i++ {
		assert.InDelta(t, 150, counts[i], 32, "replica %d", i)
	}
	// Going from 4 to 5 replicas moves only the units the new replica wins
	// (about a fifth), never a unit between two old replicas.
	moved := 0
	for _, a := range ahus {
		if four[a] != five[a] {
			moved++
			assert.Equal(t, 4, five[a], "%s moved between old replicas", a)
		}
	}
	assert.InDelta(t, 120, moved, 35)
}

func TestParseShard(t *testing.T) {
	sh, err := ParseShard("2/3")
	require.NoError(t, err)
	assert.Equal(t, Shard{2, 3}, sh)
	for _, bad := range []string{"3/3", "-1/2", "1", "a/b", "0/0", "0/3x", "+1/3", "1/ 3"} {
		_, err := ParseShard(bad)
		assert.ErrorContains(t, err, "i/n", bad)
	}
	assert.True(t, Shard{}.Owns("x", "y"), "the zero shard owns everything")
}

// TestServe_CatchUpAndShutdown: the agent runs at once on start, and stops
// promptly when its context ends.
func TestServe_CatchUpAndShutdown(t *testing.T) {
	cfg := runnerConfig(t)
	store, src := newMemResults(), &spanSource{}
	r := &Runner{Cfg: cfg, Source: src, Store: store, Log: zerolog.Nop(),
		Clock: func() time.Time { return time.Date(2026, 7, 14, 10, 7, 0, 0, time.UTC) }}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error)
	go func() { done <- r.Serve(ctx, 5*time.Second) }()
	require.Eventually(t, func() bool {
		store.mu.Lock()
		defer store.mu.Unlock()
		return len(store.cp) == 2
	}, 5*time.Second, 10*time.Millisecond)
	cancel()
	select {
	case err := <-done:
		require.NoError(t, err)
	case <-time.After(5 * time.Second):
		t.Fatal("Serve did not stop")
	}
}
