package cputime

import (
	"runtime"
	"testing"
	"time"
)

// TestUsedCountsWork spins one goroutine for 200 ms of wall time and
// requires the processor time to grow by at least half of that (the
// goroutine may be descheduled on a busy machine, but not for most of it).
func TestUsedCountsWork(t *testing.T) {
	if runtime.GOOS == "windows" || runtime.GOOS == "plan9" {
		t.Skip("Used reads getrusage, a Unix call")
	}
	start := Used()
	x := 1.0
	for end := time.Now().Add(200 * time.Millisecond); time.Now().Before(end); {
		x = x*1.0000001 + 1e-9
	}
	if got := Used() - start; got < 100*time.Millisecond {
		t.Fatalf("200 ms of spinning counted %v of processor time (x = %g)", got, x)
	}
}
