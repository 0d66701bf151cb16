package cli

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"lodestone/app/session"
)

// TestSweep runs a sweep from a fresh map of a small atlas and from a
// session holding that same map (embed's defaults make the window's first
// map: 750 iterations at attraction 1): both write the same maps and
// scores, bit for bit. Each map's scores are the ones score gives for its
// layout file (the same fidelity options).
func TestSweep(t *testing.T) {
	dir := writeExample(t)
	flags := append([]string{"--threads", "2", "--quiet"}, smallFlags...)
	fresh := filepath.Join(t.TempDir(), "fresh")
	args := append([]string{"sweep", "--in", dir, "--values", "4,1.5,inf", "--iterations", "80", "--label", "state", "--out", fresh}, flags...)
	code, out, errs := run(t, args...)
	if code != ExitOK || !strings.Contains(out, "3 maps") {
		t.Fatalf("sweep: status %d: %s %s", code, out, errs)
	}
	scores, err := os.ReadFile(filepath.Join(fresh, "scores.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(scores)), "\n")
	if len(lines) != 4 || lines[0] != "attraction,tail,knn_preservation,trustworthiness,label_accuracy,distance_correlation" {
		t.Fatalf("scores.csv:\n%s", scores)
	}
	for i, v := range []string{"4", "1.5", "inf"} {
		f := strings.Split(lines[i+1], ",")
		if f[0] != v || f[1] != "1" || len(f) != 6 {
			t.Fatalf("row %d: %q, want attraction %s, tail 1 and four scores", i+1, lines[i+1], v)
		}
		for _, s := range f[2:] {
			if x, err := strconv.ParseFloat(s, 64); err != nil || x < 0 || x > 1 {
				t.Fatalf("row %q: score %q", lines[i+1], s)
			}
		}
		if _, err := os.Stat(filepath.Join(fresh, "attraction-"+v+".csv")); err != nil {
			t.Fatal(err)
		}
	}

	// The same sweep from a session of the fresh map.
	sess := filepath.Join(t.TempDir(), "map"+session.Extension)
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--session", sess}, flags...)...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	fromSession := filepath.Join(t.TempDir(), "from-session")
	code, _, errs = run(t, "sweep", "--session", sess, "--values", "4,1.5,inf", "--iterations", "80", "--label", "state", "--out", fromSession, "--quiet")
	if code != ExitOK {
		t.Fatalf("sweep --session: %s", errs)
	}
	for _, name := range []string{"scores.csv", "attraction-4.csv", "attraction-1.5.csv", "attraction-inf.csv"} {
		a, _ := os.ReadFile(filepath.Join(fresh, name))
		b, err := os.ReadFile(filepath.Join(fromSession, name))
		if err != nil || string(a) != string(b) {
			t.Fatalf("%s differs between the sweep of --in and of the session (%v)", name, err)
		}
	}

	// score reproduces each map's scores.
	f := strings.Split(lines[1], ",")
	args = append([]string{"score", "--in", dir, "--layout", filepath.Join(fresh, "attraction-4.csv"), "--label", "state"}, flags...)
	code, out, errs = run(t, args...)
	if code != ExitOK {
		t.Fatalf("score: %s", errs)
	}
	for i, line := range strings.Split(strings.TrimSpace(out), "\n") {
		want, _ := strconv.ParseFloat(f[i+2], 64)
		name, got, _ := strings.Cut(line, " ")
		if w := strconv.FormatFloat(want, 'f', 6, 64); got != w {
			t.Errorf("score prints %s %s; the sweep's scores.csv has %s", name, got, w)
		}
	}

	// score --session: the same numbers from the session's inputs and
	// settings, for a layout file or the session's own map.
	code, out2, errs := run(t, "score", "--session", sess, "--layout", filepath.Join(fresh, "attraction-4.csv"), "--label", "state")
	if code != ExitOK || out2 != out {
		t.Fatalf("score --session: status %d, printed %q, want %q (%s)", code, out2, out, errs)
	}
	if code, out2, errs = run(t, "score", "--session", sess); code != ExitOK || !strings.HasPrefix(out2, "knn_preservation ") {
		t.Fatalf("score --session of its map: status %d, %q %s", code, out2, errs)
	}

	// A sweep of the kernel's tail at attraction 4, from the session's map.
	tails := filepath.Join(t.TempDir(), "tails")
	code, _, errs = run(t, "sweep", "--session", sess, "--tails", "0.5,2", "--attraction", "4", "--iterations", "80", "--out", tails, "--quiet")
	if code != ExitOK {
		t.Fatalf("sweep --tails: %s", errs)
	}
	b, _ := os.ReadFile(filepath.Join(tails, "scores.csv"))
	rows := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(rows) != 3 || !strings.HasPrefix(rows[1], "4,0.5,") || !strings.HasPrefix(rows[2], "4,2,") {
		t.Fatalf("scores.csv of the tails:\n%s", b)
	}
	for _, name := range []string{"tail-0.5.csv", "tail-2.csv"} {
		if _, err := os.Stat(filepath.Join(tails, name)); err != nil {
			t.Fatal(err)
		}
	}

	// From a session at ∞ with the grain at 2, as the window opens it: an
	// attraction sweep takes the grain's tail, a tail sweep needs a finite
	// attraction.
	spectral := filepath.Join(t.TempDir(), "spectral"+session.Extension)
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--attraction", "inf", "--tail", "2", "--session", spectral}, flags...)...); code != ExitOK {
		t.Fatalf("embed at inf: %s", errs)
	}
	grain := filepath.Join(t.TempDir(), "grain")
	if code, _, errs = run(t, "sweep", "--session", spectral, "--values", "4", "--iterations", "20", "--out", grain, "--quiet"); code != ExitOK {
		t.Fatalf("sweep from the spectral session: %s", errs)
	}
	if b, _ := os.ReadFile(filepath.Join(grain, "scores.csv")); !strings.Contains(string(b), "\n4,2,") {
		t.Fatalf("scores.csv of a sweep from a session with the grain at 2:\n%s", b)
	}

	for _, bad := range [][]string{
		{"sweep", "--session", spectral, "--tails", "0.5", "--out", grain},
		{"sweep", "--in", dir, "--tails", "0.5", "--attraction", "inf", "--out", grain},
		{"sweep", "--in", dir, "--values", "4", "--tails", "2", "--out", fresh},
		{"sweep", "--in", dir, "--tails", "2,0.01", "--out", fresh},
		{"sweep", "--in", dir, "--tails", "2", "--tail", "3", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4", "--attraction", "3", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4", "--tail", "100", "--out", fresh},
		{"score", "--session", sess, "--layout", filepath.Join(fresh, "attraction-4.csv"), "--seed", "3"},
		{"score", "--in", dir},
		{"sweep", "--in", dir, "--out", fresh},
		{"sweep", "--in", dir, "--values", "4,x", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4,0.1", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4,4", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4", "--iterations", "0", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4", "--label", "nonexistent", "--out", fresh},
		{"sweep", "--in", dir, "--values", "4", "--k", "0", "--out", fresh},
		{"sweep", "--session", sess, "--values", "4", "--genes", "100", "--out", fresh},
		{"sweep", "--session", filepath.Join(dir, "cells.tsv"), "--values", "4", "--out", fresh},
		{"sweep", "--values", "4", "--out", fresh},
	} {
		code, _, errs := run(t, append(bad, "--quiet")...)
		if code != ExitUsage || strings.Count(strings.TrimSpace(errs), "\n") != 0 || errs == "" {
			t.Errorf("%v: status %d, stderr %q; want %d and one line", bad, code, errs, ExitUsage)
		}
	}
}
