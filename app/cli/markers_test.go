package cli

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"lodestone/app/session"
	"lodestone/app/tables"
	"lodestone/compute/ingest"
	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// countsAtlas writes a generated atlas of counts into a new folder:
// counts.mtx (cells × genes), cells.tsv, genes.tsv (even genes with a
// symbol, odd ones without) and annotations.tsv with a column "kind" of
// three values. Kind "a" raises the first ten genes. Each cell's counts add
// up to one of 1,000, 2,000, 2,500, 4,000 or 5,000, so that the counts per
// 10,000 are exact binary fractions and equal ratios tie exactly, as they
// do in float32 and float64 alike. It returns the folder, the counts and
// the kinds.
func countsAtlas(t *testing.T, cells, genes int) (string, [][]int, []string) {
	t.Helper()
	rng := rand.New(rand.NewPCG(31, 32))
	totals := []int{1000, 2000, 2500, 4000, 5000}
	counts := make([][]int, cells)
	kinds := make([]string, cells)
	m := &sparse.CSR{Rows: cells, Cols: genes, RowPtr: make([]int64, cells+1)}
	for c := range counts {
		kinds[c] = []string{"a", "b", "b", "c"}[rng.IntN(4)]
		w := make([]float64, genes)
		sum := 0.0
		for g := range w {
			p := 0.35
			if g < 10 && kinds[c] == "a" {
				p = 0.8
			}
			if rng.Float64() < p || g == c%genes { // every gene in some cell, every cell some gene
				w[g] = rng.ExpFloat64()
				if g < 10 && kinds[c] == "a" {
					w[g] *= 4
				}
			}
			sum += w[g]
		}
		counts[c] = make([]int, genes)
		total := totals[rng.IntN(len(totals))]
		for n := 0; n < total; n++ {
			u := rng.Float64() * sum
			g := 0
			for ; g < genes-1 && (u >= w[g] || w[g] == 0); g++ {
				u -= w[g]
			}
			if w[g] == 0 { // rounding at the end: the last gene with weight
				for g = genes - 1; w[g] == 0; g-- {
				}
			}
			counts[c][g]++
		}
		for g, v := range counts[c] {
			if v > 0 {
				m.ColIdx = append(m.ColIdx, int32(g))
				m.Val = append(m.Val, float32(v))
			}
		}
		m.RowPtr[c+1] = int64(len(m.ColIdx))
	}
	dir := t.TempDir()
	var mtx strings.Builder
	if err := ingest.WriteMatrixMarket(&mtx, sparse.FromCSR(m)); err != nil {
		t.Fatal(err)
	}
	var cellsTSV, genesTSV, annot strings.Builder
	annot.WriteString("cell\tkind\n")
	for c := range cells {
		fmt.Fprintf(&cellsTSV, "cell-%d\n", c)
		fmt.Fprintf(&annot, "cell-%d\t%s\n", c, kinds[c])
	}
	for g := range genes {
		if g%2 == 0 {
			fmt.Fprintf(&genesTSV, "G%d\tSYM%d\n", g, g)
		} else {
			fmt.Fprintf(&genesTSV, "G%d\n", g)
		}
	}
	for name, text := range map[string]string{"counts.mtx": mtx.String(), "cells.tsv": cellsTSV.String(),
		"genes.tsv": genesTSV.String(), "annotations.tsv": annot.String()} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir, counts, kinds
}

// scipyMarkers normalises the counts itself (counts per 10,000 of each cell,
// log(1 + x), stored as float32 as Lodestone stores expression) and, for
// every gene, runs scipy.stats.mannwhitneyu(group, rest,
// use_continuity=True, alternative="two-sided", method="asymptotic"); z is
// norm.isf(p/2) with the sign of U − n₁n₂/2; the fold change, percentages
// and Benjamini–Hochberg q-values (Benjamini & Hochberg 1995, step-up from
// the largest p) come from numpy.
const scipyMarkers = `
import json, sys, math
import numpy as np
from scipy.stats import mannwhitneyu, norm
d = json.load(sys.stdin)
C = np.array(d["counts"], dtype=np.float64)
X = np.log1p(C * (1e4 / C.sum(axis=1))[:, None]).astype(np.float32).astype(np.float64)
side = np.array(d["side"])
out = []
for g in range(X.shape[1]):
    x, y = X[side == 1, g], X[side == 2, g]
    r = mannwhitneyu(x, y, use_continuity=True, alternative="two-sided", method="asymptotic")
    p = float(r.pvalue)
    dev = float(r.statistic) - len(x) * len(y) / 2
    z = math.copysign(float(norm.isf(p / 2)), dev) if dev != 0 else 0.0
    lfc = math.log2((np.expm1(x).mean() + 1e-9) / (np.expm1(y).mean() + 1e-9))
    out.append({"p": p, "z": z, "lfc": lfc, "pin": 100 * float((x > 0).mean()), "prest": 100 * float((y > 0).mean())})
p = np.array([o["p"] for o in out])
m = len(p)
order = np.argsort(p, kind="stable")
q = np.minimum(1, np.minimum.accumulate((p[order] * m / np.arange(1, m + 1))[::-1])[::-1])
for k, g in enumerate(order):
    out[g]["q"] = float(q[k])
print(json.dumps(out))
`

type scipyMarker struct {
	P, Z, LFC, Pin, Prest, Q float64
}

// TestMarkersAgainstScipy runs the markers command on a generated atlas
// (kind "a" against all other cells, and against kind "c") and checks every
// gene against scipy's Mann–Whitney U test on expression that numpy
// normalises from the counts: p, z, fold change and q to 1e-8, percentages
// to 1e-10; rows in the Markers tab's order (descending z), every gene present, symbols as the label file
// gives them.
func TestMarkersAgainstScipy(t *testing.T) {
	const cells, genes = 400, 60
	dir, counts, kinds := countsAtlas(t, cells, genes)
	flags := []string{"--min-genes", "1", "--min-cells", "1", "--pcs", "5", "--genes", "30", "--quiet"}
	for _, against := range []string{"", "c"} {
		out := filepath.Join(t.TempDir(), "markers.csv")
		args := append([]string{"markers", "--in", dir, "--by", "kind", "--group", "a", "--out", out}, flags...)
		if against != "" {
			args = append(args, "--against", against)
		}
		code, stdout, errs := run(t, args...)
		if code != ExitOK {
			t.Fatalf("%v: status %d: %s", args, code, errs)
		}
		if !strings.Contains(stdout, fmt.Sprintf("%d genes ranked", genes)) {
			t.Errorf("markers printed %q", stdout)
		}
		f, err := os.Open(out)
		if err != nil {
			t.Fatal(err)
		}
		rows, err := tables.ReadMarkers(f, out)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		side := make([]int, cells)
		for c, k := range kinds {
			switch {
			case k == "a":
				side[c] = 1
			case against == "" || k == against:
				side[c] = 2
			}
		}
		var want []scipyMarker
		pyref.JSON(t, "scipy.stats, numpy", scipyMarkers, map[string]any{"counts": counts, "side": side}, &want)
		if len(rows) != genes {
			t.Fatalf("%d rows for %d genes", len(rows), genes)
		}
		rel := func(got, want, tol float64) bool {
			return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
		}
		for i, r := range rows {
			var g int
			if _, err := fmt.Sscanf(r.Gene, "G%d", &g); err != nil || g < 0 || g >= genes {
				t.Fatalf("row %d names gene %q", i+2, r.Gene)
			}
			wantSym := ""
			if g%2 == 0 {
				wantSym = fmt.Sprintf("SYM%d", g)
			}
			w := want[g]
			tag := fmt.Sprintf("against %q, gene %s", against, r.Gene)
			if r.Symbol != wantSym {
				t.Errorf("%s: symbol %q, want %q", tag, r.Symbol, wantSym)
			}
			if math.Abs(r.P-w.P) > 1e-8*w.P || !rel(r.Z, w.Z, 1e-8) || !rel(r.LogFoldChange, w.LFC, 1e-8) || math.Abs(r.Q-w.Q) > 1e-8*w.Q {
				t.Errorf("%s: p %.17g z %.17g lfc %.17g q %.17g; scipy p %.17g z %.17g lfc %.17g q %.17g",
					tag, r.P, r.Z, r.LogFoldChange, r.Q, w.P, w.Z, w.LFC, w.Q)
			}
			if math.Abs(r.PercentIn-w.Pin) > 1e-10 || math.Abs(r.PercentRest-w.Prest) > 1e-10 {
				t.Errorf("%s: %% in %v, rest %v; numpy %v, %v", tag, r.PercentIn, r.PercentRest, w.Pin, w.Prest)
			}
			if i > 0 && r.Z > rows[i-1].Z {
				t.Errorf("row %d: z %v after %v: not sorted by descending z", i+2, r.Z, rows[i-1].Z)
			}
		}
		if rows[0].Z < 5 || !strings.HasPrefix(rows[0].Gene, "G") {
			t.Errorf("the top marker %+v is not one of the raised genes", rows[0])
		}
	}
}

// TestMarkersOfASessionGroup stores the cells of kind "a" as a group of a
// session and ranks the group's markers through --session: the table is
// the one --by kind --group a gives, byte for byte.
func TestMarkersOfASessionGroup(t *testing.T) {
	dir, _, kinds := countsAtlas(t, 300, 40)
	flags := []string{"--min-genes", "1", "--min-cells", "1", "--pcs", "5", "--genes", "30", "--quiet"}
	sess := filepath.Join(t.TempDir(), "map"+session.Extension)
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--session", sess, "--iterations", "50"}, flags...)...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	s, err := session.Read(sess)
	if err != nil {
		t.Fatal(err)
	}
	var members []uint32
	for c, k := range kinds {
		if k == "a" {
			members = append(members, uint32(c))
		}
	}
	s.Groups = []session.Group{{Name: "chosen cells", Colour: session.Colour{R: 1}, Members: members}}
	if err := session.Write(sess, s); err != nil {
		t.Fatal(err)
	}
	byColumn := filepath.Join(t.TempDir(), "by-column.csv")
	if code, _, errs := run(t, append([]string{"markers", "--in", dir, "--by", "kind", "--group", "a", "--out", byColumn}, flags...)...); code != ExitOK {
		t.Fatalf("markers --by: %s", errs)
	}
	byGroup := filepath.Join(t.TempDir(), "by-group.csv")
	if code, _, errs := run(t, "markers", "--session", sess, "--group", "chosen cells", "--out", byGroup, "--quiet"); code != ExitOK {
		t.Fatalf("markers --session: %s", errs)
	}
	a, _ := os.ReadFile(byColumn)
	b, _ := os.ReadFile(byGroup)
	if len(a) == 0 || string(a) != string(b) {
		t.Fatalf("the session's group gives another table than the column:\n%.300s\n---\n%.300s", a, b)
	}
	// The session's columns serve --by too.
	byBoth := filepath.Join(t.TempDir(), "by-both.csv")
	if code, _, errs := run(t, "markers", "--session", sess, "--by", "kind", "--group", "a", "--out", byBoth, "--quiet"); code != ExitOK {
		t.Fatalf("markers --session --by: %s", errs)
	}
	if c, _ := os.ReadFile(byBoth); string(c) != string(a) {
		t.Fatal("--session --by kind gives another table than --in --by kind")
	}
	for _, bad := range [][]string{
		{"markers", "--session", sess, "--out", byGroup},
		{"markers", "--session", sess, "--group", "nobody", "--out", byGroup},
		{"markers", "--session", sess, "--group", "chosen cells", "--pcs", "7", "--out", byGroup},
		{"markers", "--session", sess, "--by", "kind", "--group", "z", "--out", byGroup},
		{"markers", "--session", sess, "--by", "total counts", "--group", "a", "--out", byGroup},
		{"markers", "--session", sess, "--by", "kind", "--group", "a", "--against", "a", "--out", byGroup},
		{"markers", "--session", filepath.Join(dir, "counts.mtx"), "--group", "a", "--out", byGroup},
		{"markers", "--in", dir, "--group", "a", "--out", byGroup},
		{"markers", "--in", dir, "--by", "kind", "--group", "a"},
		{"markers", "--in", filepath.Join(dir, "nothing.mtx"), "--by", "kind", "--group", "a", "--out", byGroup},
	} {
		code, _, errs := run(t, append(bad, "--quiet")...)
		if code != ExitUsage || strings.Count(strings.TrimSpace(errs), "\n") != 0 || errs == "" {
			t.Errorf("%v: status %d, stderr %q; want %d and one line", bad, code, errs, ExitUsage)
		}
	}
}
