package app

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"runtime"
	"strings"
	"testing"

	"lodestone/app/window"
	"lodestone/compute/pipeline"
)

func TestWindowFlagsAreBounded(t *testing.T) {
	var warn bytes.Buffer
	o, err := windowOptions([]string{"--threads", "1000000"}, &warn)
	if err != nil || o.Threads != pipeline.MaxThreads || !strings.Contains(warn.String(), fmt.Sprintf("--threads 1000000 lowered to %d", pipeline.MaxThreads)) {
		t.Fatalf("threads %d, %v, %q", o.Threads, err, warn.String())
	}
	for _, bad := range [][]string{{"--threads", "-1"}, {"--selftest-dial", "NaN"}, {"--selftest-dial", "0.1"}} {
		if _, err := windowOptions(bad, &warn); err == nil || !strings.Contains(err.Error(), bad[0]) {
			t.Errorf("%v: error %v", bad, err)
		}
	}
}

// TestNoDisplayIsAClearError starts the window where there is no display
// (DISPLAY unset, as over a plain remote shell): Lodestone says so on one
// line and returns 1, where the toolkit would have stopped the process with
// a panic.
func TestNoDisplayIsAClearError(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("the DISPLAY variable is read on Linux and the BSDs")
	}
	t.Setenv("DISPLAY", "")
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	stderr := os.Stderr
	os.Stderr = w
	code := Main(nil)
	os.Stderr = stderr
	w.Close()
	said, _ := io.ReadAll(r)
	if code != 1 || string(said) != "lodestone: "+window.ErrNoDisplay.Error()+"\n" {
		t.Errorf("status %d, said %q", code, said)
	}
	if window.CheckDisplay(func(string) string { return ":0" }) != nil {
		t.Error("DISPLAY :0 refused")
	}
}
