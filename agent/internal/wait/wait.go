// Package wait holds the one context-aware sleep of the agent's packages
// (the HTTP server's pause after failed logins, the webhook's retries),
// so neither owns the other's helper.
package wait

import (
	"context"
	"time"
)

// Sleep waits for d or until ctx ends, and then returns ctx's error.
func Sleep(ctx context.Context, d time.Duration) error {
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case <-ctx.Done():
		return ctx.Err()
	case <-t.C:
		return nil
	}
}
