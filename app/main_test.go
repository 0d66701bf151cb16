package app

import (
	"bytes"
	"fmt"
	"strings"
	"testing"

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
