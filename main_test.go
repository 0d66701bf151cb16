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
// plain lines (no carriage returns). It runs them again under a LANG that
// names a locale the C library lacks (one never generated on most machines;
// a server reached from a desktop that sends its own LANG is in that case),
// where the file dialogs' toolkit warns while it is initialised.
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
	for _, run := range []struct {
		lang string
		args []string
	}{
		{"C.UTF-8", []string{"help"}},
		{"C.UTF-8", []string{"example", "--out", filepath.Join(dir, "ex"), "--cells", "300", "--genes", "100"}},
		{"kl_GL.UTF-8", []string{"help"}},
		{"kl_GL.UTF-8", []string{"example", "--out", filepath.Join(dir, "ex2"), "--cells", "300", "--genes", "100"}},
	} {
		args := run.args
		cmd := exec.Command(bin, args...)
		cmd.Env = append(env[:len(env):len(env)], "LANG="+run.lang)
		var stdout, stderr bytes.Buffer
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		if err := cmd.Run(); err != nil {
			t.Fatalf("%v: %v\n%s", args, err, stderr.String())
		}
		errs := stderr.String()
		if strings.Contains(errs, "Fyne") || strings.Contains(errs, "Gtk") || strings.Contains(errs, "ocale") || strings.Contains(errs, "\r") {
			t.Errorf("LANG=%s %v wrote to its error stream:\n%q", run.lang, args, errs)
		}
		if args[0] == "help" && errs != "" {
			t.Errorf("LANG=%s help wrote %q to its error stream", run.lang, errs)
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
