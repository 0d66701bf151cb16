package cli

import (
	"bytes"
	"flag"
	"io"
	"math"
	"sort"
	"strings"
	"testing"
)

// FuzzFlags parses fuzzed command lines with every command's flags (the
// command stops right after parsing; nothing is read or written). Parsing
// must not panic and must end in a usage error (2) or an accepted command
// line whose every numeric flag lies within its bound.
func FuzzFlags(f *testing.F) {
	f.Add(uint8(0), "--perplexity\x00NaN")
	f.Add(uint8(1), "--threads=1000000\x00--pcs\x0050")
	f.Add(uint8(2), "--width\x00-5\x00--height\x0010")
	f.Add(uint8(3), "--resolution=0\x00--k\x00151")
	f.Add(uint8(4), "--out\x00a.csv\x00--session\x00./a.csv")
	f.Add(uint8(5), "--rows\x00x\x00--cell-labels\x00y\x00--label-header\x00both")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	f.Fuzz(func(t *testing.T, which uint8, line string) {
		cmd := names[int(which)%len(names)]
		args := append([]string{cmd}, strings.Split(line, "\x00")...)
		for _, a := range args[1:] {
			if a == "-h" || a == "-help" || a == "--help" || a == "--h" {
				return // prints the usage and ends with status 0
			}
		}
		var parsed *flags
		afterParse = func(fs *flags) error { parsed = fs; return errStop }
		defer func() { afterParse = nil }()
		var errb bytes.Buffer
		code := Run(args, io.Discard, &errb)
		switch {
		case code == ExitUsage:
			return
		case code != ExitFailed || parsed == nil:
			t.Fatalf("%q: status %d, stderr %q", args, code, errb.String())
		}
		parsed.VisitAll(func(fl *flag.Flag) {
			v, ok := numericValue(fl)
			if !ok || !parsed.set[fl.Name] {
				return
			}
			b, _ := boundOf(cmd, fl.Name)
			if math.IsNaN(v) || math.IsInf(v, 0) || (v != 0 || b.zero == "") && (v < b.lo || v > b.hi || b.loOpen && v == b.lo) {
				t.Fatalf("%q: --%s accepted as %v, outside %+v", args, fl.Name, v, b)
			}
		})
	})
}
