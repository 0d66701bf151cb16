package cli

import (
	"errors"
	"flag"
	"fmt"
	"go/ast"
	"go/parser"
	"go/token"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
)

// errStop ends a command right after its flags are parsed (see afterParse).
var errStop = errors.New("stopped after parsing")

// commandFlags returns the flag set of every command, made by running it
// with -h.
func commandFlags(t testing.TB) map[string]*flags {
	t.Helper()
	got := map[string]*flags{}
	var cur string
	flagsMade = func(f *flags) { got[cur] = f }
	defer func() { flagsMade = nil }()
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		cur = n
		Run([]string{n, "-h"}, io.Discard, io.Discard)
		if got[n] == nil {
			t.Fatalf("command %s made no flag set", n)
		}
	}
	return got
}

// parseOnly runs a command with args, stopping after its flags are parsed
// and checked; it returns the exit status and the error stream.
func parseOnly(args ...string) (int, string) {
	afterParse = func(*flags) error { return errStop }
	defer func() { afterParse = nil }()
	var errb strings.Builder
	code := Run(args, io.Discard, &errb)
	return code, errb.String()
}

func isFloatFlag(fl *flag.Flag) bool {
	g, ok := fl.Value.(flag.Getter)
	if !ok {
		return false
	}
	_, ok = g.Get().(float64)
	return ok
}

// TestEveryNumericFlagIsBounded checks every numeric flag of every command
// (the window's own are in app): it has a bound; values just outside it and
// NaN are refused before the command does anything, with exit status 2 and
// a message naming the flag, the value and the range; values at its ends
// (and 0 where 0 means "automatic") pass; a clamping bound lowers a value
// above it, saying so.
func TestEveryNumericFlagIsBounded(t *testing.T) {
	num := func(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }
	checked := 0
	for cmd, fs := range commandFlags(t) {
		fs.VisitAll(func(fl *flag.Flag) {
			if _, ok := numericValue(fl); !ok {
				return
			}
			b, ok := boundOf(cmd, fl.Name)
			if !ok {
				t.Errorf("%s --%s has no entry in bounds", cmd, fl.Name)
				return
			}
			checked++
			arg := func(v string) []string { return []string{cmd, "--" + fl.Name + "=" + v} }
			refused := func(v string) {
				code, errs := parseOnly(arg(v)...)
				if code != ExitUsage || !strings.Contains(errs, "--"+fl.Name+" ") || !strings.Contains(errs, "want") {
					t.Errorf("%s --%s=%s: status %d, %q; want 2 and a message naming the flag and its range", cmd, fl.Name, v, code, errs)
				}
			}
			passes := func(v string) {
				if code, errs := parseOnly(arg(v)...); code != ExitFailed || !strings.Contains(errs, errStop.Error()) {
					t.Errorf("%s --%s=%s: status %d, %q; want it accepted", cmd, fl.Name, v, code, errs)
				}
			}
			isFloat := isFloatFlag(fl)
			if isFloat {
				refused("NaN")
				refused("Inf")
			}
			if math.IsInf(b.lo, -1) {
				return
			}
			passes(num(b.lo + map[bool]float64{true: 0.5, false: 0}[b.loOpen]))
			passes(num(b.hi))
			below := b.lo - 1
			if b.loOpen || (isFloat && b.lo > 0) {
				below = b.lo
			}
			if !(b.zero != "" && below == 0) && !(below == b.lo && !b.loOpen) {
				refused(num(below))
			}
			if b.zero != "" {
				passes("0")
				refused("-1")
			}
			if b.clamp == "" {
				refused(num(b.hi + 1))
				return
			}
			code, errs := parseOnly(arg(num(b.hi * 10))...)
			if code != ExitFailed || !strings.Contains(errs, fmt.Sprintf("warning: --%s %s lowered to %s", fl.Name, num(b.hi*10), num(b.hi))) {
				t.Errorf("%s --%s=%s: status %d, %q; want it lowered to %s with a warning", cmd, fl.Name, num(b.hi*10), code, errs, num(b.hi))
			}
		})
	}
	if checked < 20 {
		t.Fatalf("only %d numeric flags checked", checked)
	}
}

// TestPathFlagsAreDeclared checks that every flag naming a file is
// declared as an input or an output, so that the same-file check sees it.
func TestPathFlagsAreDeclared(t *testing.T) {
	for cmd, fs := range commandFlags(t) {
		roles := fs.pathFlags()
		fs.VisitAll(func(fl *flag.Flag) {
			u := strings.ToLower(fl.Usage)
			looksLikePath := strings.Contains(u, "file") || strings.Contains(u, "csv") || strings.Contains(u, "table") ||
				strings.Contains(u, "session") || strings.HasPrefix(u, "old name of")
			_, declared := roles[fl.Name]
			switch {
			case fl.Name == "out" && (cmd == "example" || cmd == "sweep"), fl.Name == "init":
				// A folder, and a choice that may name a file: checked by the command.
			case fl.Name == "by" || fl.Name == "group" || fl.Name == "against":
				// Names of a column, its values or a session's groups.
			case looksLikePath && !declared:
				if _, num := numericValue(fl); !num && fl.Name != "label-header" && fl.Name != "matrix-rows" && fl.Name != "label" && fl.Name != "paint" {
					t.Errorf("%s --%s (%q) names a file but is not declared with inputPath or outputPath", cmd, fl.Name, fl.Usage)
				}
			}
		})
	}
}

// TestEveryInputErrorExitsTwo reads the sentinel errors of the packages
// whose errors reach the commands and checks that each ends a command with
// status 2 (bad input or usage), except the few that mean a fault of ours.
func TestEveryInputErrorExitsTwo(t *testing.T) {
	ours := map[string]bool{
		"inconsistent shape":                       true, // prep.ErrShape: a dataset built wrongly
		"malformed sparse matrix":                  true, // prep.ErrMalformed
		"dataset holds neither counts nor a table": true, // prep.ErrNoMatrix
		"lengths do not match":                     true, // integrate.ErrShape: components built wrongly
		"value is NaN or infinite":                 true, // integrate.ErrNotFinite: components computed wrongly
	}
	classified := map[string]bool{}
	for _, e := range inputErrors {
		classified[e.Error()] = true
	}
	seen := 0
	for _, dir := range []string{"../../compute/ingest", "../../compute/prep", "../../compute/pipeline", "../../compute/integrate", "../session", "../restore", "../../sampledata", "../../internal/atomicfile"} {
		pkgs, err := parser.ParseDir(token.NewFileSet(), dir, nil, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range pkgs {
			for name, f := range p.Files {
				if strings.HasSuffix(name, "_test.go") {
					continue
				}
				ast.Inspect(f, func(n ast.Node) bool {
					vs, ok := n.(*ast.ValueSpec)
					if !ok || len(vs.Values) != 1 || !strings.HasPrefix(vs.Names[0].Name, "Err") || !vs.Names[0].IsExported() {
						return true
					}
					call, ok := vs.Values[0].(*ast.CallExpr)
					if !ok || len(call.Args) != 1 {
						return true
					}
					lit, ok := call.Args[0].(*ast.BasicLit)
					if !ok {
						return true
					}
					msg, _ := strconv.Unquote(lit.Value)
					seen++
					if !classified[msg] && !ours[msg] {
						t.Errorf("%s.%s (%q) is neither in inputErrors nor marked as a fault of ours", filepath.Base(dir), vs.Names[0].Name, msg)
					}
					return true
				})
			}
		}
	}
	if seen < 30 {
		t.Fatalf("found only %d sentinel errors", seen)
	}
	for _, e := range inputErrors {
		if got := exitStatus(fmt.Errorf("wrapped: %w", e)); got != ExitUsage {
			t.Errorf("%v: status %d", e, got)
		}
	}
	if got := exitStatus(errors.New("an internal error")); got != ExitFailed {
		t.Errorf("internal error: status %d", got)
	}
}
