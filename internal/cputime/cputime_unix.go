//go:build unix

package cputime

import (
	"syscall"
	"time"
)

// Used returns the processor time, user and system, that this process has
// used so far (getrusage), or 0 when the system does not say.
func Used() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
