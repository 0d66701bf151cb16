// Package cputime measures the processor time of the running process, which
// Lodestone's benchmarks report beside the wall time: on a shared machine
// the wall time also counts other processes' turns, and the ratio of the two
// shows how well a stage uses its threads.
package cputime

import (
	"testing"
	"time"
)

// Report reports, as the metric "cpu-ms/op", the processor time per
// operation of b since start, a value of Used.
func Report(b *testing.B, start time.Duration) {
	b.ReportMetric(float64((Used()-start).Microseconds())/1000/float64(b.N), "cpu-ms/op")
}
