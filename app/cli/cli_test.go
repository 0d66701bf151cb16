package cli

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func run(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := Run(args, &out, &errb)
	return code, out.String(), errb.String()
}

// writeExample writes a small example atlas and returns its folder.
func writeExample(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	code, out, errs := run(t, "example", "--out", dir, "--cells", "1200", "--genes", "300", "--quiet")
	if code != ExitOK {
		t.Fatalf("example: status %d: %s", code, errs)
	}
	if !strings.Contains(out, "wrote") {
		t.Fatalf("example printed %q", out)
	}
	return dir
}

func TestExampleThenEmbedWritesLayout(t *testing.T) {
	dir := writeExample(t)
	for _, f := range []string{"counts.mtx", "cells.tsv", "genes.tsv", "annotations.tsv"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Fatalf("example did not write %s", f)
		}
	}
	out := filepath.Join(t.TempDir(), "layout.csv")
	code, _, errs := run(t, "embed", "--in", dir, "--out", out, "--iterations", "120", "--pcs", "15", "--genes", "200", "--min-genes", "40",
		"--attraction", "4", "--quiet")
	if code != ExitOK {
		t.Fatalf("embed: status %d: %s", code, errs)
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(rows[0], ",") != "id,x,y" {
		t.Fatalf("header %v", rows[0])
	}
	if len(rows) < 1000 || len(rows) > 1201 {
		t.Fatalf("%d layout rows for 1200 cells (minus QC)", len(rows)-1)
	}
	for _, r := range rows[1:] {
		for _, v := range r[1:] {
			if _, err := strconv.ParseFloat(v, 64); err != nil {
				t.Fatalf("row %v: %v", r, err)
			}
		}
	}

	// Continue from that layout at the spectral end.
	out2 := filepath.Join(t.TempDir(), "spectral.csv")
	code, _, errs = run(t, "embed", "--in", dir, "--out", out2, "--init", out, "--pcs", "15", "--genes", "200", "--min-genes", "40",
		"--attraction", "inf", "--quiet")
	if code != ExitOK {
		t.Fatalf("embed --init layout --attraction inf: status %d: %s", code, errs)
	}
}

// TestEmbedTail checks --tail: 1 gives t-SNE's map byte for byte, 0.5
// another, and a tail outside the range is refused with status 2.
func TestEmbedTail(t *testing.T) {
	dir := writeExample(t)
	common := []string{"embed", "--in", dir, "--iterations", "100", "--pcs", "10", "--genes", "200", "--min-genes", "40", "--quiet"}
	layouts := map[string][]byte{}
	for _, tail := range []string{"", "1", "0.5"} {
		out := filepath.Join(t.TempDir(), "layout.csv")
		args := append(append([]string(nil), common...), "--out", out)
		if tail != "" {
			args = append(args, "--tail", tail)
		}
		if code, _, errs := run(t, args...); code != ExitOK {
			t.Fatalf("embed --tail %q: status %d: %s", tail, code, errs)
		}
		b, err := os.ReadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		layouts[tail] = b
	}
	if !bytes.Equal(layouts[""], layouts["1"]) {
		t.Error("--tail 1 differs from the default")
	}
	if bytes.Equal(layouts[""], layouts["0.5"]) {
		t.Error("--tail 0.5 gives the default map")
	}
	for _, bad := range []string{"0.01", "100", "x"} {
		out := filepath.Join(t.TempDir(), "layout.csv")
		if code, _, errs := run(t, append(append([]string(nil), common...), "--out", out, "--tail", bad)...); code != ExitUsage || !strings.Contains(errs, "tail") {
			t.Errorf("--tail %s: status %d, %q; want %d naming the flag", bad, code, errs, ExitUsage)
		}
	}
}

func TestBadFlagsAndInputsExitTwo(t *testing.T) {
	missing := filepath.Join(t.TempDir(), "nothing-here.mtx")
	cases := [][]string{
		{"embed", "--out", "x.csv"},
		{"embed", "--in", missing, "--out", "x.csv"},
		{"embed", "--in", missing, "--out", "x.csv", "--attraction", "0.1"},
		{"embed", "--bogus"},
		{"embed", "--in", missing, "--out", "x.csv", "--metric", "manhattan"},
		{"nosuchcommand"},
		{"example"},
	}
	for _, c := range cases {
		code, _, errs := run(t, c...)
		if code != ExitUsage {
			t.Errorf("%v: status %d, want %d (stderr %q)", c, code, ExitUsage, errs)
		}
		if strings.Count(strings.TrimSpace(errs), "\n") != 0 || errs == "" {
			t.Errorf("%v: error is not one line: %q", c, errs)
		}
	}
}

func TestAttractionFlag(t *testing.T) {
	var a attractionFlag
	for in, want := range map[string]string{"1": "1", "30": "30", "inf": "inf", "∞": "inf", "0.5": "0.5"} {
		if err := a.Set(in); err != nil || a.String() != want {
			t.Errorf("Set(%q): %v, %q", in, err, a.String())
		}
	}
	for _, bad := range []string{"0.4", "-1", "x", "NaN", ""} {
		if a.Set(bad) == nil {
			t.Errorf("Set(%q) accepted", bad)
		}
	}
}

// smallFlags are preparation flags that suit the small test atlas.
var smallFlags = []string{"--pcs", "15", "--genes", "200", "--min-genes", "40"}

func TestScoreAndCluster(t *testing.T) {
	dir := writeExample(t)
	layout := filepath.Join(t.TempDir(), "layout.csv")
	// 400 iterations: the example's two runs are disconnected in the
	// graph of this small atlas, and during early exaggeration (250
	// iterations) each shrinks almost to a point; 50 more iterations do not
	// open it again, 150 do.
	args := append([]string{"embed", "--in", dir, "--out", layout, "--iterations", "400", "--quiet"}, smallFlags...)
	if code, _, errs := run(t, args...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	args = append([]string{"score", "--in", dir, "--layout", layout, "--label", "state", "--sample", "500"}, smallFlags...)
	code, out, errs := run(t, args...)
	if code != ExitOK {
		t.Fatalf("score: status %d: %s", code, errs)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != 4 {
		t.Fatalf("score printed %q", out)
	}
	for i, name := range []string{"knn_preservation", "trustworthiness", "label_accuracy", "distance_correlation"} {
		f := strings.Fields(lines[i])
		v, err := strconv.ParseFloat(f[1], 64)
		if f[0] != name || err != nil || v < 0 || v > 1 {
			t.Fatalf("line %q, want %s and a value in [0,1]", lines[i], name)
		}
	}
	// A map of the generated states should keep them apart: label accuracy
	// well above chance (1/9).
	if v, _ := strconv.ParseFloat(strings.Fields(lines[2])[1], 64); v < 0.5 {
		t.Errorf("label accuracy %v is low for a t-SNE map of the example's states", v)
	}

	// --tail adds the map's KL divergence for that kernel: positive, and
	// another value for another tail.
	kls := map[string]float64{}
	for _, tail := range []string{"1", "0.5"} {
		code, out, errs := run(t, append([]string{"score", "--in", dir, "--layout", layout, "--sample", "500", "--tail", tail}, smallFlags...)...)
		lines := strings.Split(strings.TrimSpace(out), "\n")
		f := strings.Fields(lines[len(lines)-1])
		if code != ExitOK || len(lines) != 4 || f[0] != "kl_divergence" {
			t.Fatalf("score --tail %s: status %d, printed %q (%s)", tail, code, out, errs)
		}
		kls[tail], _ = strconv.ParseFloat(f[1], 64)
	}
	if !(kls["1"] > 0) || kls["1"] == kls["0.5"] {
		t.Errorf("KL divergences %v", kls)
	}

	clusters := filepath.Join(t.TempDir(), "clusters.csv")
	args = append([]string{"cluster", "--in", dir, "--out", clusters, "--quiet"}, smallFlags...)
	if code, out, errs = run(t, args...); code != ExitOK || !strings.Contains(out, "clusters, modularity") {
		t.Fatalf("cluster: status %d: %s %s", code, out, errs)
	}
	b, _ := os.ReadFile(clusters)
	if !strings.HasPrefix(string(b), "id,cluster\n") || strings.Count(string(b), "\n") < 1000 {
		t.Fatalf("clusters file starts %q", string(b)[:min(60, len(b))])
	}
}

func TestBenchPrintsItsTables(t *testing.T) {
	code, out, errs := run(t, "bench", "--sizes", "1500", "--sections", "knn,embed", "--iterations", "30")
	if code != ExitOK {
		t.Fatalf("bench: %s", errs)
	}
	for _, want := range []string{"k nearest neighbours", "embedding", "ms/iteration", "1500"} {
		if !strings.Contains(out, want) {
			t.Errorf("bench output lacks %q:\n%s", want, out)
		}
	}
	for _, bad := range []string{"12", "1000000000"} {
		if code, _, _ := run(t, "bench", "--sizes", bad); code != ExitUsage {
			t.Errorf("bench --sizes %s: status %d", bad, code)
		}
	}
}
