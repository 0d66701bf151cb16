package cpufeat

import (
	"os"
	"strings"
	"testing"
)

// TestAgreesWithTheKernel compares the detection with the flags the Linux
// kernel lists in /proc/cpuinfo for the first processor (avx2 and fma; the
// kernel lists avx only when the OS saves the YMM registers).
func TestAgreesWithTheKernel(t *testing.T) {
	data, err := os.ReadFile("/proc/cpuinfo")
	if err != nil {
		t.Skipf("no /proc/cpuinfo: %v", err)
	}
	var flags map[string]bool
	for _, line := range strings.Split(string(data), "\n") {
		if name, value, ok := strings.Cut(line, ":"); ok && strings.TrimSpace(name) == "flags" {
			flags = map[string]bool{}
			for _, f := range strings.Fields(value) {
				flags[f] = true
			}
			break
		}
	}
	if flags == nil {
		t.Skip("/proc/cpuinfo lists no flags")
	}
	want := flags["avx"] && flags["avx2"] && flags["fma"]
	if AVX2FMA != want {
		t.Fatalf("AVX2FMA = %v, /proc/cpuinfo says avx, avx2 and fma: %v", AVX2FMA, want)
	}
}
