package cputime

import (
	"runtime"
	"testing"
	"time"
)

// TestUsedCountsWork spins until Used has grown by 50 ms, which a busy
// goroutine reaches in well under a second of wall time even on a loaded
// machine; if 10 s of spinning never get there, Used does not count work.
func TestUsedCountsWork(t *testing.T) {
	if runtime.GOOS == "windows" || runtime.GOOS == "plan9" {
		t.Skip("Used reads getrusage, a Unix call")
	}
	start, deadline := Used(), time.Now().Add(10*time.Second)
	x := 1.0
	for Used()-start < 50*time.Millisecond {
		if time.Now().After(deadline) {
			t.Fatalf("10 s of spinning counted %v of processor time (x = %g)", Used()-start, x)
		}
		for i := 0; i < 100000; i++ {
			x = x*1.0000001 + 1e-9
		}
	}
}
