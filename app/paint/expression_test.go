package paint

import (
	"context"
	"math/rand/v2"
	"reflect"
	"testing"

	"lodestone/compute/markers"
	"lodestone/compute/sparse"
)

// TestExpressionPlotChoosesTheTopMarkers checks the plot's choice of genes
// against its definition: of results in any order, the first n with a
// positive fold change in Rank's order (z down, then fold change down, then
// gene index up), named by GeneName, with a size that grows with genes and
// groups.
func TestExpressionPlotChoosesTheTopMarkers(t *testing.T) {
	res := []markers.Result{
		{Gene: 0, Z: 3, LogFoldChange: 1},
		{Gene: 1, Z: 5, LogFoldChange: -0.2}, // lower in the group: left out
		{Gene: 2, Z: 3, LogFoldChange: 2},    // same z as gene 0, larger fold change: first
		{Gene: 3, Z: 4, LogFoldChange: 0.5},
		{Gene: 4, Z: 3, LogFoldChange: 1}, // ties gene 0 in z and fold change: after it
		{Gene: 5, Z: -2, LogFoldChange: 0.1},
	}
	want := []string{"D", "g2", "A", "E"}
	ids := []string{"g0", "g1", "g2", "g3", "g4", "g5"}
	syms := []string{"A", "B", "", "D", "E", ""}
	x := &sparse.CSR{Rows: 3, Cols: 6, RowPtr: []int64{0, 1, 2, 2}, ColIdx: []int32{0, 3}, Val: []float32{1, 2}}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 5 {
		rng.Shuffle(len(res), func(i, j int) { res[i], res[j] = res[j], res[i] })
		tab, size, err := ExpressionPlot(context.Background(), x, res, 4, ids, syms, []int32{0, 1, -1}, []string{"p", "q"})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(tab.Genes, want) || !reflect.DeepEqual(tab.Groups, []string{"p", "q"}) {
			t.Fatalf("genes %q groups %q, want %q", tab.Genes, tab.Groups, want)
		}
		if size.WidthPx != 200+70*4 || size.HeightPx != 260+36*2 {
			t.Fatalf("size %+v", size)
		}
	}
	tab, _, err := ExpressionPlot(context.Background(), x, res, 10, ids, syms, []int32{0, 1, -1}, []string{"p", "q"})
	if err != nil || len(tab.Genes) != 5 {
		t.Fatalf("n above the genes higher in the group: %v, %q", err, tab.Genes)
	}
}
