//go:build !unix

package testkit

import "time"

// CPUTime is not known here: 0 (see the unix version).
func CPUTime() time.Duration { return 0 }
