package pipeline

import (
	"context"
	"math"
	"strings"
	"sync"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
	"lodestone/sampledata"
)

func smallAtlas(t *testing.T, cells int) *atlas.Dataset {
	t.Helper()
	opt := sampledata.DefaultOptions()
	opt.Cells, opt.Genes = cells, 400
	d, _, err := sampledata.Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// TestPrepareChainsTheStages checks the shapes and invariants that the
// window and the commands rely on.
func TestPrepareChainsTheStages(t *testing.T) {
	d := smallAtlas(t, 1500)
	s := Default()
	s.Prep.PCA.Components = 20
	s.Prep.Genes = 200
	var stages []string
	var mu sync.Mutex // reports come from several goroutines
	p, err := Prepare(context.Background(), d, s, func(stage string, done, total int64) {
		mu.Lock()
		defer mu.Unlock()
		if len(stages) == 0 || stages[len(stages)-1] != stage {
			stages = append(stages, stage)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	n := p.Cells()
	if n == 0 || n > d.Cells() || p.Features.Rows != n || p.Features.Cols != 20 {
		t.Fatalf("%d cells kept of %d, features %d×%d", n, d.Cells(), p.Features.Rows, p.Features.Cols)
	}
	// The generator makes some low-quality cells that QC removes.
	if n == d.Cells() {
		t.Errorf("QC removed no cell, though the example has damaged cells")
	}
	for _, c := range p.Annotations {
		if c.Len() != n {
			t.Fatalf("annotation %q has %d values for %d cells", c.Name, c.Len(), n)
		}
	}
	if rows, cols := p.Expression.Dims(); rows != n || cols != len(p.GeneIDs) || len(p.GeneSymbols) != len(p.GeneIDs) {
		t.Fatalf("expression %d×%d for %d cells and %d genes", rows, cols, n, len(p.GeneIDs))
	}
	if p.Graph.N != n || p.Graph.K != 90 {
		t.Fatalf("graph %d×%d, want %d×90", p.Graph.N, p.Graph.K, n)
	}
	checkAffinities(t, p.P, n)
	if len(p.Init) != 2*n {
		t.Fatalf("initial layout has %d coordinates for %d cells", len(p.Init), n)
	}
	// The PCA initialisation has standard deviation 1e-4 along x (common practice).
	var sx, sxx float64
	for i := 0; i < n; i++ {
		x := float64(p.Init[2*i])
		sx += x
		sxx += x * x
	}
	sd := math.Sqrt((sxx - sx*sx/float64(n)) / float64(n-1))
	if math.Abs(sd-1e-4) > 1e-6 {
		t.Errorf("initial layout sd %.3g, want 1e-4", sd)
	}
	want := []string{"qc", "normalize", "genes", "pca", StageNeighbors, StageAffinities, StageInit}
	if strings.Join(stages, ",") != strings.Join(want, ",") {
		t.Errorf("stages reported %v, want %v", stages, want)
	}
}

func checkAffinities(t *testing.T, P *sparse.CSR, n int) {
	t.Helper()
	if err := P.Validate(); err != nil || P.Rows != n || P.Cols != n {
		t.Fatalf("P %d×%d: %v", P.Rows, P.Cols, err)
	}
	sum := 0.0
	for i := 0; i < n; i++ {
		cols, vals := P.Row(i)
		for k, j := range cols {
			sum += float64(vals[k])
			if math.Abs(float64(vals[k]-P.At(int(j), i))) > 1e-9 {
				t.Fatalf("P not symmetric at (%d,%d)", i, j)
			}
		}
	}
	if math.Abs(sum-1) > 1e-4 {
		t.Fatalf("P sums to %v", sum)
	}
}

func TestPrepareSpectralInitAndSmallGraph(t *testing.T) {
	d := smallAtlas(t, 600)
	s := Default()
	s.Prep.PCA.Components = 10
	s.Prep.Genes = 150
	s.Perplexity = 10
	s.Init = InitSpectral
	p, err := Prepare(context.Background(), d, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if p.Graph.K != 30 {
		t.Fatalf("graph K = %d, want ⌈3·10⌉ = 30", p.Graph.K)
	}
	checkAffinities(t, p.P, p.Cells())
}

func TestPrepareRejectsTooFewCells(t *testing.T) {
	d := smallAtlas(t, 1500)
	keep := []int{0}
	d.Counts = d.Counts.SelectRowsCols(keep, nil)
	d.CellIDs = d.CellIDs[:1]
	for i := range d.Annotations {
		c := &d.Annotations[i]
		if c.Kind == atlas.Categorical {
			c.Codes = c.Codes[:1]
		} else {
			c.Values = c.Values[:1]
		}
	}
	if _, err := Prepare(context.Background(), d, Default(), nil); err == nil {
		t.Fatal("Prepare accepted a single cell")
	}
}
