//go:build !unix

package cputime

import "time"

// Used returns 0: processor time is read only on Unix systems.
func Used() time.Duration { return 0 }
