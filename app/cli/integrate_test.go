package cli

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// writeMeta writes the example's annotation table with three more columns
// that cannot name batches: plate (one value), lane (a batch of 5 cells)
// and donor (one cell without a value), and returns its path.
func writeMeta(t *testing.T, dir string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "annotations.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimRight(string(b), "\n"), "\n")
	for i := range lines {
		switch {
		case i == 0:
			lines[i] += "\tplate\tlane\tdonor"
		default:
			lane, donor := "a", []string{"x", "y"}[i%2]
			if i <= 5 {
				lane = "b"
			}
			if i == 7 {
				donor = ""
			}
			lines[i] += "\tp1\t" + lane + "\t" + donor
		}
	}
	path := filepath.Join(t.TempDir(), "meta.tsv")
	if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestIntegrateFlagErrors checks that a batch column that cannot be
// integrated ends embed, cluster and score with status 2 and one line
// naming the column and the problem, and that bad parameters do too.
func TestIntegrateFlagErrors(t *testing.T) {
	dir := writeExample(t)
	meta := writeMeta(t, dir)
	layout := filepath.Join(t.TempDir(), "l.csv")
	for _, tc := range []struct {
		flags []string
		want  string
	}{
		{[]string{"--integrate", "nowhere"}, `column "nowhere" does not exist`},
		{[]string{"--integrate", "maturation"}, `column "maturation" is not a categorical column`},
		{[]string{"--integrate", "plate"}, `column "plate" has only one value`},
		{[]string{"--integrate", "lane"}, `column "lane" has a batch with too few cells ("b" has 5;`},
		{[]string{"--integrate", "donor"}, `column "donor" has cells without a value (1 of 1200`},
		{[]string{"--integrate", "batch,batch"}, `column "batch" is named twice`},
		{[]string{"--integrate", "batch", "--integrate-theta", "1,2"}, "2 values for 1 --integrate columns"},
		{[]string{"--integrate", "batch", "--integrate-lambda", "0"}, "not a positive number"},
		{[]string{"--integrate-theta", "2"}, "need --integrate"},
		{[]string{"--integrate", "batch", "--integrate-sigma", "-1"}, "--integrate-sigma"},
		{[]string{"--integrate", "batch", "--integrate-genes", "some"}, `--integrate-genes "some": want within or pooled`},
	} {
		for _, cmd := range [][]string{
			{"embed", "--in", dir, "--meta", meta, "--out", layout},
			{"cluster", "--in", dir, "--meta", meta, "--out", layout},
			{"score", "--in", dir, "--meta", meta, "--layout", layout},
		} {
			args := append(append(cmd, tc.flags...), "--quiet")
			code, _, errs := run(t, args...)
			if code != ExitUsage || !strings.Contains(errs, tc.want) || strings.Count(strings.TrimSpace(errs), "\n") != 0 {
				t.Errorf("%s %v: status %d, stderr %q (want %d and one line with %q)", cmd[0], tc.flags, code, errs, ExitUsage, tc.want)
			}
		}
	}
}

// TestIntegratedScores embeds a small example atlas with all its genes
// (the batch effect lives in them) with and without integrating its runs
// and scores both maps: the runs' mixing rises from near 0 to near 1, the
// states stay apart, and the output names each score.
func TestIntegratedScores(t *testing.T) {
	dir := t.TempDir()
	if code, _, errs := run(t, "example", "--out", dir, "--cells", "1500", "--quiet"); code != ExitOK {
		t.Fatalf("example: %s", errs)
	}
	smallFlags := []string{"--pcs", "20", "--min-genes", "40"}
	mixing := map[bool]map[string]float64{}
	for _, integrated := range []bool{false, true} {
		flags := append([]string{}, smallFlags...)
		if integrated {
			flags = append(flags, "--integrate", "batch")
		}
		layout := filepath.Join(t.TempDir(), "layout.csv")
		args := append([]string{"embed", "--in", dir, "--out", layout, "--iterations", "400", "--quiet"}, flags...)
		if code, _, errs := run(t, args...); code != ExitOK {
			t.Fatalf("embed: %s", errs)
		}
		args = append([]string{"score", "--in", dir, "--layout", layout, "--label", "state", "--mixing", "batch", "--sample", "600"}, flags...)
		code, out, errs := run(t, args...)
		if code != ExitOK {
			t.Fatalf("score: status %d: %s", code, errs)
		}
		got := map[string]float64{}
		for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
			f := strings.Fields(line)
			v, err := strconv.ParseFloat(f[1], 64)
			if len(f) != 2 || err != nil {
				t.Fatalf("score printed %q", line)
			}
			got[f[0]] = v
		}
		for _, name := range []string{"sample_mixing_map", "sample_mixing_components", "type_mixing_map", "type_mixing_components"} {
			if _, ok := got[name]; !ok {
				t.Fatalf("score printed no %s: %q", name, out)
			}
		}
		mixing[integrated] = got
		t.Logf("integrated %v: %v", integrated, got)
	}
	before, after := mixing[false], mixing[true]
	if before["sample_mixing_map"] > 0.2 || after["sample_mixing_map"] < 0.6 || after["sample_mixing_components"] < 0.6 {
		t.Errorf("run mixing in the map %.3f → %.3f, in the components → %.3f (want ≤ 0.2, then ≥ 0.6)",
			before["sample_mixing_map"], after["sample_mixing_map"], after["sample_mixing_components"])
	}
	if after["type_mixing_map"] > 0.3 {
		t.Errorf("states mix %.3f in the integrated map (want ≤ 0.3)", after["type_mixing_map"])
	}

	// sweep with --integrate scores the runs' and states' mixing of each
	// map (the runs by default, the first --integrate column), as score
	// scores that map's layout.
	out := t.TempDir()
	args := append([]string{"sweep", "--in", dir, "--values", "2", "--iterations", "100", "--label", "state", "--sample", "600",
		"--out", out, "--quiet", "--integrate", "batch"}, smallFlags...)
	if code, _, errs := run(t, args...); code != ExitOK {
		t.Fatalf("sweep: status %d: %s", code, errs)
	}
	b, err := os.ReadFile(filepath.Join(out, "scores.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(lines) != 2 || !strings.HasSuffix(lines[0], ",sample_mixing,type_mixing") {
		t.Fatalf("sweep's scores.csv:\n%s", b)
	}
	f := strings.Split(lines[1], ",")
	args = append([]string{"score", "--in", dir, "--layout", filepath.Join(out, "attraction-2.csv"), "--label", "state",
		"--sample", "600", "--integrate", "batch"}, smallFlags...)
	code, printed, errs := run(t, args...)
	if code != ExitOK {
		t.Fatalf("score of the sweep's map: status %d: %s", code, errs)
	}
	for k, name := range map[int]string{len(f) - 2: "sample_mixing_map", len(f) - 1: "type_mixing_map"} {
		v, err := strconv.ParseFloat(f[k], 64)
		if err != nil || !strings.Contains(printed, name+" "+strconv.FormatFloat(v, 'f', 6, 64)+"\n") {
			t.Errorf("sweep's %s %q, score printed:\n%s", name, f[k], printed)
		}
	}
}
