// Package memstat reads how much memory the process holds: its resident set
// now and at its peak, as the operating system counts them (what
// /usr/bin/time -v reports as the maximum resident set size).
package memstat

import (
	"bufio"
	"bytes"
	"os"
	"runtime/metrics"
	"strconv"
)

// Stats is the memory of the process in bytes.
type Stats struct {
	Resident int64 // resident set now
	Peak     int64 // largest resident set so far
	// Exact reports whether the figures come from the operating system
	// (Linux: /proc/self/status). Elsewhere they are the memory the Go
	// runtime has mapped (now and at its largest seen by Read), which
	// bounds the resident set from above.
	Exact bool
}

// peakMapped is the largest runtime total Read has seen, where the
// operating system gives no peak.
var peakMapped int64

// Read returns the memory of the process now.
func Read() Stats {
	if s, ok := readProc(); ok {
		return s
	}
	sample := []metrics.Sample{{Name: "/memory/classes/total:bytes"}}
	metrics.Read(sample)
	v := int64(sample[0].Value.Uint64())
	peakMapped = max(peakMapped, v)
	return Stats{Resident: v, Peak: peakMapped}
}

// readProc reads VmRSS and VmHWM from /proc/self/status.
func readProc() (Stats, bool) {
	data, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return Stats{}, false
	}
	var s Stats
	found := 0
	sc := bufio.NewScanner(bytes.NewReader(data))
	for sc.Scan() {
		line := sc.Bytes()
		var dst *int64
		switch {
		case bytes.HasPrefix(line, []byte("VmRSS:")):
			dst = &s.Resident
		case bytes.HasPrefix(line, []byte("VmHWM:")):
			dst = &s.Peak
		default:
			continue
		}
		f := bytes.Fields(line)
		if len(f) != 3 || string(f[2]) != "kB" {
			return Stats{}, false
		}
		kb, err := strconv.ParseInt(string(f[1]), 10, 64)
		if err != nil {
			return Stats{}, false
		}
		*dst = kb << 10
		found++
	}
	s.Exact = found == 2
	return s, s.Exact
}

// Format writes a number of bytes for people: "812 MB", "3.4 GB".
func Format(b int64) string {
	switch {
	case b >= 10<<30:
		return strconv.FormatFloat(float64(b)/(1<<30), 'f', 0, 64) + " GB"
	case b >= 1<<30:
		return strconv.FormatFloat(float64(b)/(1<<30), 'f', 1, 64) + " GB"
	}
	return strconv.FormatFloat(float64(b)/(1<<20), 'f', 0, 64) + " MB"
}
