package markers

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// scipyRankSum runs scipy.stats.mannwhitneyu(x, y, use_continuity=c,
// alternative="two-sided", method="asymptotic") for every gene, x the
// group's values and y the reference's (zeros included), and returns U
// (scipy's statistic, for x), p, the z whose two-sided p is p
// (norm.isf(p/2)), and from numpy the means of x and of expm1(x), the share
// of x > 0, likewise for y. NaN (an all-tied gene without continuity
// correction, 0/0 in scipy) comes back as null.
const scipyRankSum = `
import json, sys, math
import numpy as np
from scipy.stats import mannwhitneyu, norm
d = json.load(sys.stdin)
X = np.array(d["x"], dtype=np.float64)
side = np.array(d["side"])
out = []
for g in range(X.shape[1]):
    x, y = X[side == 1, g], X[side == 2, g]
    r = mannwhitneyu(x, y, use_continuity=d["continuity"], alternative="two-sided", method="asymptotic")
    p = float(r.pvalue)
    z = None if math.isnan(p) else float(norm.isf(p / 2))
    out.append({"u": float(r.statistic), "p": None if math.isnan(p) else p, "z": z,
                "mean": [x.mean(), y.mean()], "mexp": [np.expm1(x).mean(), np.expm1(y).mean()],
                "frac": [(x > 0).mean(), (y > 0).mean()]})
print(json.dumps(out))
`

type scipyGene struct {
	U    float64    `json:"u"`
	P    *float64   `json:"p"`
	Z    *float64   `json:"z"`
	Mean [2]float64 `json:"mean"`
	MExp [2]float64 `json:"mexp"`
	Frac [2]float64 `json:"frac"`
}

// testMatrix returns a matrix whose genes cover the cases that matter:
// random sparse genes with many ties, a gene never expressed, a gene with one
// value in every cell, genes expressed only in the group or only elsewhere,
// a dense gene with distinct values, a gene expressed in one cell, and a
// stored zero.
func testMatrix(cells int, inGroup []bool, seed uint64) *sparse.CSR {
	rng := rand.New(rand.NewPCG(seed, 5))
	base := randomExpression(cells, 30, 0.3, inGroup, 10, seed)
	dense := make([][]float32, cells)
	for c := range dense {
		dense[c] = make([]float32, base.Cols+6)
		for j := 0; j < base.Cols; j++ {
			dense[c][j] = base.At(c, j)
		}
		g := base.Cols
		dense[c][g] = 0                                        // never expressed
		dense[c][g+1] = float32(math.Log1p(2))                 // the same everywhere
		dense[c][g+2] = float32(rng.IntN(3)) * b2f(inGroup[c]) // only in the group
		dense[c][g+3] = float32(rng.IntN(2)) * b2f(!inGroup[c])
		dense[c][g+4] = float32(rng.Float64() + 0.1) // dense, no ties
		if c == cells/2 {
			dense[c][g+5] = 3 // one cell
		}
	}
	m := &sparse.CSR{Rows: cells, Cols: base.Cols + 6, RowPtr: make([]int64, cells+1)}
	for c, row := range dense {
		for j, v := range row {
			if v != 0 || (c == 0 && j == 0) { // keep one stored zero
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, v)
			}
		}
		m.RowPtr[c+1] = int64(len(m.ColIdx))
	}
	return m
}

func b2f(b bool) float32 {
	if b {
		return 1
	}
	return 0
}

func relClose(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(math.Abs(want), 1e-300)
}

func TestRankScipy(t *testing.T) {
	// Reference: scipy 1.10's stats.mannwhitneyu (asymptotic, two-sided, tie
	// corrected) for U and p, with and without continuity correction, to
	// 1e-8 relative; Z against norm.isf(p/2) with Z's sign that of
	// U − n₁n₂/2; means, fractions and fold change against numpy. Groups:
	// a random group against the rest, and against a second group that
	// leaves some cells out of the comparison.
	rng := rand.New(rand.NewPCG(11, 12))
	const cells = 240
	inGroup := make([]bool, cells)
	other := make([]bool, cells)
	for c := range inGroup {
		inGroup[c] = rng.IntN(4) == 0
		other[c] = !inGroup[c] && rng.IntN(3) != 0
	}
	x := testMatrix(cells, inGroup, 3)
	e, err := NewExpression(context.Background(), viewOf(x))
	if err != nil {
		t.Fatal(err)
	}
	dense := make([][]float64, cells)
	for c := range dense {
		dense[c] = make([]float64, x.Cols)
		for j := range dense[c] {
			dense[c][j] = float64(x.At(c, j))
		}
	}
	for _, ref := range [][]bool{nil, other} {
		side := make([]int, cells)
		n1, n2 := 0, 0
		for c := range side {
			switch {
			case inGroup[c]:
				side[c] = 1
				n1++
			case ref == nil || ref[c]:
				side[c] = 2
				n2++
			}
		}
		for _, continuity := range []bool{true, false} {
			var want []scipyGene
			pyref.JSON(t, "scipy.stats, numpy", scipyRankSum, map[string]any{
				"x": dense, "side": side, "continuity": continuity}, &want)
			res, err := e.Rank(context.Background(), inGroup, ref, Options{NoContinuityCorrection: !continuity})
			if err != nil {
				t.Fatal(err)
			}
			if len(res) != x.Cols {
				t.Fatalf("%d results for %d genes", len(res), x.Cols)
			}
			for _, r := range res {
				w := want[r.Gene]
				tag := func() string {
					return fmt.Sprintf("gene %d (reference nil: %v, continuity: %v)", r.Gene, ref == nil, continuity)
				}
				if r.U != w.U {
					t.Errorf("%s: U = %v, scipy %v", tag(), r.U, w.U)
				}
				if w.P == nil {
					// scipy's 0/0 for a gene whose values all tie:
					// we define Z = 0, P = 1.
					if r.P != 1 || r.Z != 0 {
						t.Errorf("%s: all tied: P = %v, Z = %v, want 1 and 0", tag(), r.P, r.Z)
					}
				} else {
					if !relClose(r.P, *w.P, 1e-8) {
						t.Errorf("%s: P = %.17g, scipy %.17g", tag(), r.P, *w.P)
					}
					wz := math.Copysign(*w.Z, r.U-float64(n1*n2)/2)
					if math.Abs(r.Z-wz) > 1e-8*math.Max(1, math.Abs(wz)) || (r.Z != 0 && math.Signbit(r.Z) != math.Signbit(r.U-float64(n1*n2)/2)) {
						t.Errorf("%s: Z = %.17g, from scipy's p %.17g", tag(), r.Z, wz)
					}
				}
				lfc := math.Log2((w.MExp[0] + DefaultPseudocount) / (w.MExp[1] + DefaultPseudocount))
				for _, q := range [][3]float64{
					{r.MeanIn, w.Mean[0]}, {r.MeanOut, w.Mean[1]},
					{r.FractionIn, w.Frac[0]}, {r.FractionOut, w.Frac[1]},
					{r.LogFoldChange, lfc},
				} {
					if !relClose(q[0], q[1], 1e-12) && math.Abs(q[0]-q[1]) > 1e-12 {
						t.Errorf("%s: %v, numpy %v", tag(), q[0], q[1])
					}
				}
				for _, v := range []float64{r.U, r.Z, r.P, r.Q, r.LogFoldChange} {
					if math.IsNaN(v) || math.IsInf(v, 0) {
						t.Errorf("%s: not finite: %+v", tag(), r)
					}
				}
			}
		}
	}
}

func TestRankAllZeroGene(t *testing.T) {
	// A gene nobody expresses: every value ties, so U = n₁n₂/2 exactly
	// (Mann & Whitney 1947: U + U' = n₁n₂ and both are equal), Z = 0,
	// P = 1, fold change log₂(ε/ε) = 0, no NaN.
	x := &sparse.CSR{Rows: 5, Cols: 2, RowPtr: []int64{0, 1, 1, 2, 2, 2}, ColIdx: []int32{1, 1}, Val: []float32{1, 2}}
	in := []bool{true, true, false, false, false}
	for _, opt := range []Options{{}, {NoContinuityCorrection: true}} {
		res, err := Rank(context.Background(), viewOf(x), in, nil, opt)
		if err != nil {
			t.Fatal(err)
		}
		r := res[slices.IndexFunc(res, func(r Result) bool { return r.Gene == 0 })]
		want := Result{Gene: 0, U: 3, Z: 0, P: 1, Q: 1}
		if r != want {
			t.Errorf("%+v: all-zero gene gives %+v, want %+v", opt, r, want)
		}
	}
}

func TestRankOrder(t *testing.T) {
	// Sorted by descending Z, ties by larger fold change, then smaller gene;
	// each gene once (common practice for marker tables).
	in := make([]bool, 300)
	for c := range in {
		in[c] = c%5 == 0
	}
	x := testMatrix(len(in), in, 8)
	res, err := Rank(context.Background(), viewOf(x), in, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	seen := make([]bool, x.Cols)
	for i, r := range res {
		if seen[r.Gene] {
			t.Fatalf("gene %d twice", r.Gene)
		}
		seen[r.Gene] = true
		if i == 0 {
			continue
		}
		a := res[i-1]
		ok := a.Z > r.Z || a.Z == r.Z && (a.LogFoldChange > r.LogFoldChange ||
			a.LogFoldChange == r.LogFoldChange && a.Gene < r.Gene)
		if !ok {
			t.Fatalf("rows %d and %d out of order: %+v, %+v", i-1, i, a, r)
		}
	}
	// The boosted genes (0…9) and the group-only gene (x.Cols−4) are
	// markers: they must lead the table.
	for _, r := range res[:5] {
		if r.Gene >= 10 && r.Gene != x.Cols-4 {
			t.Errorf("gene %d among the first five: %+v", r.Gene, r)
		}
	}
}

func TestRankThreads(t *testing.T) {
	// The same results, bit for bit, for any number of threads.
	in := make([]bool, 500)
	for c := range in {
		in[c] = c%3 == 0
	}
	x := randomExpression(len(in), 200, 0.1, in, 20, 4)
	e, err := NewExpression(context.Background(), viewOf(x))
	if err != nil {
		t.Fatal(err)
	}
	first, err := e.Rank(context.Background(), in, nil, Options{Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, threads := range []int{2, 3, 8} {
		got, err := e.Rank(context.Background(), in, nil, Options{Threads: threads})
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(first, got) {
			t.Fatalf("%d threads differ from one", threads)
		}
	}
}

func TestRankErrors(t *testing.T) {
	x := testMatrix(20, make([]bool, 20), 1)
	e, err := NewExpression(context.Background(), viewOf(x))
	if err != nil {
		t.Fatal(err)
	}
	none := make([]bool, 20)
	all := make([]bool, 20)
	some := make([]bool, 20)
	for c := range all {
		all[c] = true
		some[c] = c < 5
	}
	overlap := make([]bool, 20)
	overlap[3] = true
	for _, tc := range []struct {
		name     string
		in, ref  []bool
		opt      Options
		want     error
		cell     int
		contains string
	}{
		{"empty group", none, nil, Options{}, ErrEmptyGroup, -1, ""},
		{"group holds all", all, nil, Options{}, ErrEmptyReference, -1, "all 20 cells"},
		{"empty reference", some, none, Options{}, ErrEmptyReference, -1, ""},
		{"overlap", some, overlap, Options{}, ErrOverlap, 3, ""},
		{"short group", some[:19], nil, Options{}, ErrMaskLength, -1, ""},
		{"short reference", some, none[:3], Options{}, ErrMaskLength, -1, ""},
	} {
		_, err := e.Rank(context.Background(), tc.in, tc.ref, tc.opt)
		var ie *InputError
		if !errors.Is(err, tc.want) || !errors.As(err, &ie) || ie.Cell != tc.cell {
			t.Errorf("%s: err = %v, want %v at cell %d", tc.name, err, tc.want, tc.cell)
		}
	}
	if _, err := e.Rank(context.Background(), some, nil, Options{Pseudocount: -1}); !errors.Is(err, ErrOption) {
		t.Errorf("negative pseudocount: err = %v", err)
	}

	bad := testMatrix(20, make([]bool, 20), 1)
	bad.Val[7] = -1
	cell := 0
	for bad.RowPtr[cell+1] <= 7 {
		cell++
	}
	_, err = NewExpression(context.Background(), viewOf(bad))
	var ie *InputError
	if !errors.Is(err, ErrValue) || !errors.As(err, &ie) || ie.Cell != cell || ie.Gene != int(bad.ColIdx[7]) {
		t.Errorf("negative value: err = %v, want ErrValue at cell %d, gene %d", err, cell, bad.ColIdx[7])
	}
	bad.Val[7] = float32(math.NaN())
	if _, err := NewExpression(context.Background(), viewOf(bad)); !errors.Is(err, ErrValue) {
		t.Errorf("NaN value: err = %v", err)
	}
	if _, err := Rank(context.Background(), nil, some, nil, Options{}); !errors.Is(err, ErrMatrix) {
		t.Errorf("nil matrix: err = %v", err)
	}
}

func TestRankCancel(t *testing.T) {
	in := make([]bool, 200)
	in[0] = true
	x := randomExpression(200, 500, 0.1, nil, 0, 6)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Rank(ctx, viewOf(x), in, nil, Options{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled: err = %v", err)
	}
}

func TestRankProgress(t *testing.T) {
	in := make([]bool, 200)
	in[0] = true
	x := randomExpression(200, 300, 0.1, nil, 0, 6)
	var last, total int64
	_, err := Rank(context.Background(), viewOf(x), in, nil, Options{Progress: func(d, n int64) { last, total = d, n }})
	if err != nil {
		t.Fatal(err)
	}
	if last != 300 || total != 300 {
		t.Errorf("last progress %d of %d, want 300 of 300", last, total)
	}
}

func TestRankExactPermutation(t *testing.T) {
	// References, both exact slow computations:
	//   - U by its definition (Mann & Whitney 1947), counting the pairs
	//     (group cell, reference cell) where the group's value is larger,
	//     ties counting ½;
	//   - the mean n₁n₂/2 and the tie-corrected variance σ² of U, as the
	//     mean and variance of U over all C(n, n₁) ways to choose the group
	//     among the compared cells with the values held fixed (the
	//     permutation distribution the normal approximation stands for).
	// Z must equal (U − mean)/σ, shrunk by ½ with continuity correction,
	// and P the two-sided normal tail 2Φ(−|Z|) = erfc(|Z|/√2).
	rng := rand.New(rand.NewPCG(31, 32))
	const cells = 13
	for trial := 0; trial < 20; trial++ {
		// Values from a small set, so zeros and ties abound.
		x := &sparse.CSR{Rows: cells, Cols: 4, RowPtr: make([]int64, cells+1)}
		for c := 0; c < cells; c++ {
			for g := 0; g < 4; g++ {
				if v := float32(rng.IntN(4-g%2)) / 2; v != 0 {
					x.ColIdx = append(x.ColIdx, int32(g))
					x.Val = append(x.Val, v)
				}
			}
			x.RowPtr[c+1] = int64(len(x.ColIdx))
		}
		in := make([]bool, cells)
		var ref []bool
		if trial%2 == 1 {
			ref = make([]bool, cells)
		}
		var compared []int
		for c := 0; c < cells; c++ {
			switch {
			case c < 5:
				in[c] = true
			case ref != nil && c >= 11:
				continue // outside the comparison
			case ref != nil:
				ref[c] = true
			}
			compared = append(compared, c)
		}
		perm := rng.Perm(cells) // shuffle which cells are in the group
		shuffled := func(m []bool) []bool {
			if m == nil {
				return nil
			}
			out := make([]bool, cells)
			for c := range m {
				out[perm[c]] = m[c]
			}
			return out
		}
		in, ref = shuffled(in), shuffled(ref)
		for c := range compared {
			compared[c] = perm[compared[c]]
		}
		slices.Sort(compared)

		for _, continuity := range []bool{true, false} {
			res, err := Rank(context.Background(), viewOf(x), in, ref, Options{NoContinuityCorrection: !continuity})
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range res {
				vals := make([]float64, cells)
				for c := range vals {
					vals[c] = float64(x.At(c, r.Gene))
				}
				uOf := func(group []bool) float64 {
					var u float64
					for _, i := range compared {
						for _, j := range compared {
							if group[i] && !group[j] {
								switch {
								case vals[i] > vals[j]:
									u++
								case vals[i] == vals[j]:
									u += 0.5
								}
							}
						}
					}
					return u
				}
				u := uOf(in)
				// Permutation distribution: every choice of 5 of the compared cells.
				var sum, sum2, count float64
				var choose func(start, left int, group []bool)
				choose = func(start, left int, group []bool) {
					if left == 0 {
						v := uOf(group)
						sum, sum2, count = sum+v, sum2+v*v, count+1
						return
					}
					for k := start; k <= len(compared)-left; k++ {
						group[compared[k]] = true
						choose(k+1, left-1, group)
						group[compared[k]] = false
					}
				}
				choose(0, 5, make([]bool, cells))
				mean := sum / count
				variance := sum2/count - mean*mean
				n1n2 := 5 * float64(len(compared)-5)
				if r.U != u || mean != n1n2/2 {
					t.Fatalf("trial %d gene %d: U = %v, pair count %v; permutation mean %v, want %v", trial, r.Gene, r.U, u, mean, n1n2/2)
				}
				d := u - mean
				if continuity {
					d = math.Copysign(max(math.Abs(d)-0.5, 0), d)
				}
				wantZ, wantP := 0.0, 1.0
				if variance > 1e-9 {
					wantZ = d / math.Sqrt(variance)
					wantP = math.Erfc(math.Abs(wantZ) / math.Sqrt2)
				}
				if math.Abs(r.Z-wantZ) > 1e-12*math.Max(1, math.Abs(wantZ)) || !relClose(r.P, wantP, 1e-12) {
					t.Errorf("trial %d gene %d (continuity %v): Z = %.17g, P = %.17g; permutation gives %.17g, %.17g",
						trial, r.Gene, continuity, r.Z, r.P, wantZ, wantP)
				}
			}
		}
	}
}
