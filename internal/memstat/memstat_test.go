package memstat

import (
	"os"
	"runtime"
	"testing"
)

func TestReadGrowsWithMemoryTouched(t *testing.T) {
	before := Read()
	if before.Resident <= 0 || before.Peak < before.Resident {
		t.Fatalf("stats %+v", before)
	}
	if _, err := os.Stat("/proc/self/status"); err == nil && !before.Exact {
		t.Error("/proc/self/status exists but was not read")
	}
	// Touch 64 MiB: the resident set and its peak must grow by about that.
	buf := make([]byte, 64<<20)
	for i := range buf {
		buf[i] = byte(i)
	}
	after := Read()
	if grow := after.Peak - before.Resident; grow < 48<<20 {
		t.Errorf("peak grew by %d bytes after touching 64 MiB", grow)
	}
	runtime.KeepAlive(buf)
}

func TestFormat(t *testing.T) {
	cases := map[int64]string{
		812 << 20:  "812 MB",
		3584 << 20: "3.5 GB",
		12 << 30:   "12 GB",
		1<<30 - 1:  "1024 MB",
	}
	for b, want := range cases {
		if got := Format(b); got != want {
			t.Errorf("Format(%d) = %q, want %q", b, got, want)
		}
	}
}
