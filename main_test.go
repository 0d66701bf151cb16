package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestHeadlessCommandsPrintNoToolkitLog builds the program and runs
// headless commands under LANG=C.UTF-8 with LANGUAGE unset (the default of
// Debian's containers), where the toolkit's translation package complains
// about the locale while it is initialised: nothing of that may reach the
// error stream, which a pipe here receives, so the progress must come as
// plain lines (no carriage returns).
func TestHeadlessCommandsPrintNoToolkitLog(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the program; skipped with -short")
	}
	dir := t.TempDir()
	bin := filepath.Join(dir, "lodestone")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	var env []string
	for _, e := range os.Environ() {
		k, _, _ := strings.Cut(e, "=")
		switch k {
		case "LANG", "LANGUAGE", "LC_ALL", "LC_MESSAGES":
		default:
			env = append(env, e)
		}
	}
	env = append(env, "LANG=C.UTF-8")
	for _, args := range [][]string{
		{"help"},
		{"example", "--out", filepath.Join(dir, "ex"), "--cells", "300", "--genes", "100"},
	} {
		cmd := exec.Command(bin, args...)
		cmd.Env = env
		var stdout, stderr bytes.Buffer
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		if err := cmd.Run(); err != nil {
			t.Fatalf("%v: %v\n%s", args, err, stderr.String())
		}
		errs := stderr.String()
		if strings.Contains(errs, "Fyne") || strings.Contains(errs, "locale") || strings.Contains(errs, "\r") {
			t.Errorf("%v wrote to its error stream:\n%q", args, errs)
		}
		if args[0] == "help" && errs != "" {
			t.Errorf("help wrote %q to its error stream", errs)
		}
		if args[0] == "example" {
			for _, l := range strings.Split(strings.TrimSuffix(errs, "\n"), "\n") {
				if !strings.HasPrefix(l, "generating") && !strings.HasPrefix(l, "writing") {
					t.Errorf("example's progress line %q", l)
				}
			}
		}
	}
}
