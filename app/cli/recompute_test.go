package cli

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"lodestone/app/session"
)

// TestRecompute embeds a map continued from a prior layout and writes it
// both as CSV and as a session; recompute writes the same CSV, byte for
// byte, and says the map is identical. A session whose inputs are gone, or a
// file that is not a session, is refused with exit status 2.
func TestRecompute(t *testing.T) {
	dir := writeExample(t)
	flags := append([]string{"--threads", "2", "--quiet"}, smallFlags...)
	prior := filepath.Join(t.TempDir(), "prior.csv")
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--out", prior, "--iterations", "100"}, flags...)...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	direct := filepath.Join(t.TempDir(), "direct.csv")
	sess := filepath.Join(t.TempDir(), "map"+session.Extension)
	args := append([]string{"embed", "--in", dir, "--init", prior, "--attraction", "6", "--iterations", "90", "--out", direct, "--session", sess}, flags...)
	if code, _, errs := run(t, args...); code != ExitOK {
		t.Fatalf("embed --init: %s", errs)
	}
	again := filepath.Join(t.TempDir(), "again.csv")
	code, out, errs := run(t, "recompute", "--session", sess, "--out", again, "--quiet")
	if code != ExitOK || !strings.Contains(out, "identical to the stored map, bit for bit") {
		t.Fatalf("recompute: status %d: %s %s", code, out, errs)
	}
	a, _ := os.ReadFile(direct)
	b, _ := os.ReadFile(again)
	if len(a) == 0 || string(a) != string(b) {
		t.Fatal("the recomputed layout differs from the one embed wrote")
	}

	// Inputs gone, flags missing, not a session.
	moved := t.TempDir()
	if err := os.Rename(filepath.Join(dir, "counts.mtx"), filepath.Join(moved, "counts.mtx")); err != nil {
		t.Fatal(err)
	}
	for _, bad := range [][]string{
		{"recompute", "--session", sess, "--out", again},
		{"recompute", "--session", sess},
		{"recompute", "--out", again},
		{"recompute", "--session", prior, "--out", again},
		{"recompute", "--session", sess, "--out", again, "--threads", "3"},
	} {
		code, _, errs := run(t, append(bad, "--quiet")...)
		if code != ExitUsage || strings.Count(strings.TrimSpace(errs), "\n") != 0 || errs == "" {
			t.Errorf("%v: status %d, stderr %q; want %d and one line", bad, code, errs, ExitUsage)
		}
	}
}
