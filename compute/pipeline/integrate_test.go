package pipeline

import (
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/integrate"
	"lodestone/compute/quality"
	"lodestone/sampledata"
)

// TestExampleRunsIntegrate checks the example atlas's batch effect end to
// end: without integration the two runs are apart among the neighbours in
// the components (batch mixing near 0), with it they mix (near 1, as
// chance), while the states stay apart (type mixing near 0) — in the
// components and in the neighbour graph the map is drawn from.
func TestExampleRunsIntegrate(t *testing.T) {
	opt := sampledata.DefaultOptions()
	opt.Cells = 4000
	d, _, err := sampledata.Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	s := Default()
	s.Prep.PCA.Components = 30
	plain, err := Prepare(context.Background(), d, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	s.Integrate = Integration{Columns: []string{sampledata.ColumnBatch}}
	var stages []string
	integrated, err := Prepare(context.Background(), d, s, func(stage string, done, total int64) {
		if len(stages) == 0 || stages[len(stages)-1] != stage {
			stages = append(stages, stage)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(stages, " "), "pca "+StageIntegrate+" "+StageNeighbors) {
		t.Errorf("stages %v: integration must come between PCA and the neighbours", stages)
	}
	r := integrated.Integrated
	if r == nil || !r.Converged || integrated.Uncorrected == nil || plain.Uncorrected != nil || plain.Integrated != nil {
		t.Fatalf("integration report %+v", r)
	}
	if in := integrated.Settings.Integrate; in.Clusters != r.Clusters || len(in.Theta) != 1 || in.Theta[0] != integrate.DefaultTheta ||
		in.Lambda[0] != integrate.DefaultLambda || in.Sigma != integrate.DefaultSigma || in.Rounds != integrate.DefaultRounds {
		t.Errorf("settings record %+v, want every parameter as used", in)
	}
	batch := findColumn(plain.Annotations, sampledata.ColumnBatch)
	state := findColumn(plain.Annotations, sampledata.ColumnState)
	o := quality.MixingOptions{Batches: batch.Codes, Types: state.Codes, Seed: 1}
	before, err := quality.SpaceMixing(context.Background(), plain.Features, o)
	if err != nil {
		t.Fatal(err)
	}
	after, err := quality.SpaceMixing(context.Background(), integrated.Features, o)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("batch mixing %.3f → %.3f; state mixing %.3f → %.3f", before.Batch, after.Batch, before.Types, after.Types)
	if before.Batch > 0.1 || after.Batch < 0.7 || after.Types > 0.15 {
		t.Errorf("batch mixing %.3f → %.3f (want ≤ 0.1, then ≥ 0.7), state mixing after %.3f (want ≤ 0.15)", before.Batch, after.Batch, after.Types)
	}
	// The graph is built on the corrected components.
	if share := otherRun(integrated, batch.Codes); share < 0.3 {
		t.Errorf("only %.3f of graph neighbours are from the other run after integration", share)
	}
	if share := otherRun(plain, batch.Codes); share > 0.05 {
		t.Errorf("%.3f of graph neighbours are from the other run without integration", share)
	}
}

// TestGenesWithinRuns checks the gene selection made when integrating the
// example's runs: within each run and combined, it takes fewer of the
// handling genes (raised in run 2 only, a technical difference) than the
// selection on all cells pooled, as without integration.
func TestGenesWithinRuns(t *testing.T) {
	opt := sampledata.DefaultOptions()
	opt.Cells = 3000
	d, truth, err := sampledata.Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	handling := map[int]bool{}
	for _, g := range truth.HandlingGenes {
		handling[g] = true
	}
	selected := map[bool]int{}
	for _, pooled := range []bool{false, true} {
		s := Default()
		s.Prep.PCA.Components = 20
		s.Prep.Genes = 500 // of 2,000: a real choice
		s.Integrate = Integration{Columns: []string{sampledata.ColumnBatch}, PooledGenes: pooled}
		p, err := Features(context.Background(), d, s, nil)
		if err != nil {
			t.Fatal(err)
		}
		g := p.Prep.Genes
		if want := map[bool]int{false: 2, true: 0}[pooled]; g.Batches != want || p.Settings.Integrate.PooledGenes != pooled {
			t.Errorf("pooled %v: genes selected within %d batches (want %d)", pooled, g.Batches, want)
		}
		for _, j := range g.Genes {
			if handling[p.Prep.KeptGenes[j]] {
				selected[pooled]++
			}
		}
	}
	t.Logf("handling genes among the 500 selected: %d pooled, %d within runs (of %d)", selected[true], selected[false], len(handling))
	if selected[false] >= selected[true] {
		t.Errorf("%d handling genes selected within runs, %d pooled", selected[false], selected[true])
	}
}

// otherRun returns the share of graph neighbours from the other batch.
func otherRun(p *Prepared, batch []int32) float64 {
	other := 0
	for i := 0; i < p.Graph.N; i++ {
		ids, _ := p.Graph.Neighbors(i)
		for _, j := range ids {
			if batch[j] != batch[i] {
				other++
			}
		}
	}
	return float64(other) / float64(len(p.Graph.Index))
}

// TestBadIntegrationColumns checks that each bad batch column is refused
// before any computation, with a message naming the column and the problem.
func TestBadIntegrationColumns(t *testing.T) {
	d := smallAtlas(t, 400)
	n := d.Cells()
	one := atlas.Column{Name: "plate", Kind: atlas.Categorical, Levels: []string{"p1"}, Codes: make([]int32, n)}
	small := atlas.Column{Name: "lane", Kind: atlas.Categorical, Levels: []string{"a", "b"}, Codes: make([]int32, n)}
	for i := 0; i < 5; i++ {
		small.Codes[i] = 1
	}
	holes := atlas.Column{Name: "donor", Kind: atlas.Categorical, Levels: []string{"x", "y"}, Codes: make([]int32, n)}
	for i := range holes.Codes {
		holes.Codes[i] = int32(i % 2)
	}
	holes.Codes[17] = atlas.Missing
	d.Annotations = append(d.Annotations, one, small, holes)
	for _, tc := range []struct {
		column string
		err    error
		want   string
	}{
		{"nowhere", integrate.ErrNoColumn, `"batch"`},
		{sampledata.ColumnMaturation, integrate.ErrNotCategorical, "numbers"},
		{"plate", integrate.ErrOneBatch, `every cell is "p1"`},
		{"lane", integrate.ErrSmallBatch, `"b" has 5`},
		{"donor", integrate.ErrMissing, "1 of"},
	} {
		s := Default()
		s.Integrate = Integration{Columns: []string{tc.column}}
		calls := 0
		_, err := Prepare(context.Background(), d, s, func(string, int64, int64) { calls++ })
		var be *integrate.BatchError
		if !errors.Is(err, tc.err) || !errors.As(err, &be) || be.Column != tc.column || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("column %q: %v (want %v mentioning %s)", tc.column, err, tc.err, tc.want)
		}
		if calls != 0 {
			t.Errorf("column %q: %d progress reports before the refusal", tc.column, calls)
		}
	}
	s := Default()
	s.Integrate = Integration{Columns: []string{"batch", "batch"}}
	if _, err := Prepare(context.Background(), d, s, nil); !errors.Is(err, integrate.ErrRepeated) {
		t.Errorf("a column named twice: %v", err)
	}
}

// TestMixingOfAMap checks pipeline.Mixing on a prepared atlas: the map is
// the first two corrected components, and the scores equal quality's on the
// same inputs.
func TestMixingOfAMap(t *testing.T) {
	d := smallAtlas(t, 800)
	s := Default()
	s.Prep.PCA.Components = 10
	s.Prep.Genes = 200
	p, err := Features(context.Background(), d, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	layout := make([]float32, 2*p.Cells())
	for i := 0; i < p.Cells(); i++ {
		layout[2*i], layout[2*i+1] = p.Features.At(i, 0), p.Features.At(i, 1)
	}
	m, err := Mixing(context.Background(), p, layout, sampledata.ColumnBatch, sampledata.ColumnState, quality.MixingOptions{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	batch := findColumn(p.Annotations, sampledata.ColumnBatch)
	state := findColumn(p.Annotations, sampledata.ColumnState)
	want, err := quality.MapMixing(context.Background(), layout, quality.MixingOptions{Seed: 3, Batches: batch.Codes, Types: state.Codes})
	if err != nil {
		t.Fatal(err)
	}
	if m.Map != want || math.IsNaN(m.Space.Batch) || math.IsNaN(m.Space.Types) {
		t.Errorf("map scores %+v, want %+v; space %+v", m.Map, want, m.Space)
	}
	if _, err := Mixing(context.Background(), p, layout, sampledata.ColumnMaturation, "", quality.MixingOptions{}); !errors.Is(err, integrate.ErrNotCategorical) {
		t.Errorf("mixing of a numeric column: %v", err)
	}
}
