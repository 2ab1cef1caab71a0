//go:build unix

package testkit

import (
	"syscall"
	"time"
)

// CPUTime returns the processor time (user and system) the process has
// used so far. On a shared, loaded machine a benchmark's processor time
// beside its reference's is steadier than their wall times, which depend on
// what else runs; 0 where it is not known.
func CPUTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
