package agent

import "time"

// Clock returns the current time; tests inject their own.
type Clock func() time.Time
