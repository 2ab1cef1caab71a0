package wait

import (
	"context"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestSleep(t *testing.T) {
	t.Run("waits the duration", func(t *testing.T) {
		start := time.Now()
		require.NoError(t, Sleep(context.Background(), 20*time.Millisecond))
		assert.GreaterOrEqual(t, time.Since(start), 20*time.Millisecond)
	})
	t.Run("ends with the context", func(t *testing.T) {
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		assert.ErrorIs(t, Sleep(ctx, time.Hour), context.Canceled)
	})
}
