package prep

import (
	"cmp"
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"lodestone/compute/sparse"
)

// batchedLinear returns linear values for two batches of cells × genes:
// gene j has a Poisson-like spread around its own mean, and gene 0 is a
// technical shift: 1 in every cell of batch 0, 100 in every cell of batch 1
// (no variation within a batch).
func batchedLinear(cells, genes int, seed uint64) ([][]float64, []int32) {
	rng := rand.New(rand.NewPCG(seed, 1))
	x := make([][]float64, cells)
	batch := make([]int32, cells)
	for i := range x {
		batch[i] = int32(i % 2)
		x[i] = make([]float64, genes)
		for j := 1; j < genes; j++ {
			mean := 0.2 + 3*float64(j%17)/17
			x[i][j] = float64(int(rng.ExpFloat64() * mean * float64(1+j%5)))
		}
		x[i][0] = 1
		if batch[i] == 1 {
			x[i][0] = 100
		}
	}
	return x, batch
}

// TestSelectGenesWithinBatches checks SelectGenesWithin against its
// definition: each batch ranked by SelectGenes on its own rows, genes
// ordered by how many batches selected them, then by their mean
// normalised dispersion, then by column. A gene that only shifts between
// batches is chosen first by the pooled selection and not at all within
// batches.
func TestSelectGenesWithinBatches(t *testing.T) {
	linear, batch := batchedLinear(400, 120, 3)
	norm := logMatrix(linear)
	ctx := context.Background()
	const n = 30
	pooled, err := SelectGenes(ctx, norm, n, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Contains(pooled.Genes, 0) {
		t.Fatal("the pooled selection does not take the batch-shifted gene; the test's premise fails")
	}
	within, err := SelectGenesWithin(ctx, norm, batch, n, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if slices.Contains(within.Genes, 0) || within.Ranked[0] || within.Batches != 2 {
		t.Fatalf("within batches: gene 0 selected %v, ranked %v; %d batches", slices.Contains(within.Genes, 0), within.Ranked[0], within.Batches)
	}
	// The definition, from SelectGenes on each batch.
	var per []*GeneSelection
	for b := int32(0); b < 2; b++ {
		var rows []int
		for i, c := range batch {
			if c == b {
				rows = append(rows, i)
			}
		}
		s, err := SelectGenes(ctx, norm.SelectRows(rows), n, 1, nil)
		if err != nil {
			t.Fatal(err)
		}
		per = append(per, s)
	}
	count := make([]int, norm.Cols)
	score := make([]float64, norm.Cols)
	var genes []int
	for j := range norm.Cols {
		k := 0
		for _, s := range per {
			if slices.Contains(s.Genes, j) {
				count[j]++
			}
			if s.Ranked[j] {
				score[j] += s.Score[j]
				k++
			}
		}
		if k > 0 {
			score[j] /= float64(k)
			genes = append(genes, j)
		}
	}
	slices.SortFunc(genes, func(a, b int) int {
		return cmp.Or(cmp.Compare(count[b], count[a]), cmp.Compare(score[b], score[a]), cmp.Compare(a, b))
	})
	want := slices.Clone(genes[:n])
	slices.Sort(want)
	if !slices.Equal(within.Genes, want) {
		t.Fatalf("selected %v, want %v", within.Genes, want)
	}
	for _, j := range within.Genes {
		if within.InBatches[j] != count[j] {
			t.Fatalf("gene %d: in %d batches, want %d", j, within.InBatches[j], count[j])
		}
	}
	// One batch: the pooled selection.
	one, err := SelectGenesWithin(ctx, norm, make([]int32, len(batch)), n, 2, nil)
	if err != nil || !slices.Equal(one.Genes, pooled.Genes) {
		t.Fatalf("a single batch selects %v (%v), pooled %v", one.Genes, err, pooled.Genes)
	}
	// Bad codes.
	if _, err := SelectGenesWithin(ctx, norm, batch[:10], n, 2, nil); !errors.Is(err, ErrShape) {
		t.Errorf("short codes: %v", err)
	}
	bad := slices.Clone(batch)
	bad[5] = -1
	if _, err := SelectGenesWithin(ctx, norm, bad, n, 2, nil); !errors.Is(err, ErrOption) {
		t.Errorf("a cell without a batch: %v", err)
	}
}

// TestSelectGenesWithinView checks that the view path (the one Prepare
// takes) selects what the CSR path selects on the same log-normalised
// values: counts as a sparse.Counts, a view of a subset of its cells and
// genes normalised by NormalizeView, against Normalize on the same subset.
func TestSelectGenesWithinView(t *testing.T) {
	linear, batch := batchedLinear(300, 80, 9)
	counts := logMatrix(linear) // integers stored as log1p: undo below
	for k, v := range counts.Val {
		counts.Val[k] = float32(math.Round(math.Expm1(float64(v))))
	}
	ctx := context.Background()
	rows := make([]int, 0, 250)
	for i := 0; i < 300; i += 6 {
		rows = append(rows, i, i+1, i+2, i+3, i+5) // leave every sixth cell out
	}
	cols := make([]int, 0, 70)
	for j := 0; j < 80; j++ {
		if j%8 != 7 {
			cols = append(cols, j)
		}
	}
	sub, err := sparse.NewView(sparse.FromCSR(counts), rows, cols, 2)
	if err != nil {
		t.Fatal(err)
	}
	norm, err := NormalizeView(ctx, sub, DefaultTarget, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	codes := make([]int32, len(rows))
	for k, r := range rows {
		codes[k] = batch[r]
	}
	got, err := SelectGenesWithinView(ctx, norm, codes, 20, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	csrNorm, err := Normalize(ctx, counts.SelectRows(rows).SelectCols(cols), DefaultTarget, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	want, err := SelectGenesWithin(ctx, csrNorm, codes, 20, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got.Genes, want.Genes) || !slices.Equal(got.InBatches, want.InBatches) || !slices.Equal(got.Score, want.Score) {
		t.Fatalf("view path selects %v, CSR path %v", got.Genes, want.Genes)
	}
}
