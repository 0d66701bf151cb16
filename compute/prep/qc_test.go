package prep

import (
	"context"
	"errors"
	"fmt"
	"lodestone/compute/synth"
	"math"
	"reflect"
	"slices"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// csrFromRows builds a CSR matrix from per-row maps column → value; a value
// of 0 in a map is stored explicitly.
func csrFromRows(cols int, rows []map[int]float32) *sparse.CSR {
	m := &sparse.CSR{Rows: len(rows), Cols: cols, RowPtr: make([]int64, len(rows)+1)}
	for i, r := range rows {
		var idx []int
		for j := range r {
			idx = append(idx, j)
		}
		slices.Sort(idx)
		for _, j := range idx {
			m.ColIdx = append(m.ColIdx, int32(j))
			m.Val = append(m.Val, r[j])
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	return m
}

// qcExample is a hand-made dataset in which every filter removes something.
//
//	genes: 0 A, 1 MT-CO1, 2 B, 3 mt-Nd1, 4 C, 5 D, 6 E, 7 F, 8 G, 9 H
//	cell 0: A 5, MT-CO1 5, B 3, C 1   total 14, 4 genes, mito 5/14   kept
//	cell 1: nothing                                                  no counts
//	cell 2: A 1                       total 1                        < 2 counts
//	cell 3: A 2, B 2, mt-Nd1 6, C 2, D 1  total 13, 5 genes, mito 6/13  kept
//	cell 4: A 100, B 50, C 10, E 4    total 164                      > 100 counts
//	cell 5: A 1, B 1, C 1, D 0 (stored zero)  total 3, 3 genes       kept
//	cell 6: MT-CO1 9, D 1             total 10, 2 genes              < 3 genes
//	cell 7: MT-CO1 8, A 1, B 1        total 10, mito 0.8             mito > 0.5
//	cell 8: F 2, G 2, H 2             total 6, 3 genes               passes the cell filters
//
// Among cells 0, 3, 5, 8 the genes are detected in A 3, MT-CO1 1, B 3,
// mt-Nd1 1, C 3, D 1 (the stored zero of cell 5 does not count), E 0, F 1,
// G 1, H 1 cells. E goes as undetected, six genes as detected in fewer than
// 2 cells, leaving A, B, C; cell 8 then has no counts left and goes too.
func qcExample() (*atlas.Dataset, QCOptions) {
	rows := []map[int]float32{
		{0: 5, 1: 5, 2: 3, 4: 1},
		{},
		{0: 1},
		{0: 2, 2: 2, 3: 6, 4: 2, 5: 1},
		{0: 100, 2: 50, 4: 10, 6: 4},
		{0: 1, 2: 1, 4: 1, 5: 0},
		{1: 9, 5: 1},
		{1: 8, 0: 1, 2: 1},
		{7: 2, 8: 2, 9: 2},
	}
	d := &atlas.Dataset{
		GeneIDs:     []string{"g0", "g1", "g2", "g3", "g4", "g5", "g6", "g7", "g8", "g9"},
		GeneSymbols: []string{"A", "MT-CO1", "B", "mt-Nd1", "C", "D", "E", "F", "G", "H"},
		Counts:      sparse.FromCSR(csrFromRows(10, rows)),
	}
	for i := range rows {
		d.CellIDs = append(d.CellIDs, string(rune('a'+i)))
	}
	opt := QCOptions{MinGenes: 3, MinCells: 2, MinCounts: 2, MaxCounts: 100, MaxMitoFraction: 0.5}
	return d, opt
}

// QC of the hand-worked example: each filter's removals, the kept indices
// and the metrics, all derived by hand in the comment of qcExample.
func TestQCHandExample(t *testing.T) {
	d, opt := qcExample()
	for _, threads := range []int{1, 2, 4} {
		opt.Threads = threads
		cells, genes, rep, err := QC(context.Background(), d, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(cells, []int{0, 3, 5}) || !slices.Equal(genes, []int{0, 2, 4}) {
			t.Fatalf("kept cells %v genes %v, want [0 3 5] [0 2 4]", cells, genes)
		}
		want := []FilterStep{
			{"cells without counts", 1, 0},
			{"cells with fewer than 2 counts", 1, 0},
			{"cells with more than 100 counts", 1, 0},
			{"cells with fewer than 3 detected genes", 1, 0},
			{"cells with a mitochondrial fraction above 0.5", 1, 0},
			{"genes detected in no kept cell", 0, 1},
			{"genes detected in fewer than 2 cells", 0, 6},
			{"cells left without counts in the kept genes", 1, 0},
		}
		if !slices.Equal(rep.Filters, want) {
			t.Errorf("filters\n got %v\nwant %v", rep.Filters, want)
		}
		if rep.Cells != 9 || rep.Genes != 10 || rep.CellsKept != 3 || rep.GenesKept != 3 || rep.MitoGenes != 2 {
			t.Errorf("report sizes %d %d %d %d mito %d", rep.Cells, rep.Genes, rep.CellsKept, rep.GenesKept, rep.MitoGenes)
		}
		wantTotal := []float32{14, 0, 1, 13, 164, 3, 10, 10, 6}
		wantGenes := []float32{4, 0, 1, 5, 4, 3, 2, 3, 3}
		wantMito := []float32{5.0 / 14, 0, 0, 6.0 / 13, 0, 0, 0.9, 0.8, 0}
		if !slices.Equal(rep.All.TotalCounts, wantTotal) || !slices.Equal(rep.All.DetectedGenes, wantGenes) {
			t.Errorf("totals %v genes %v", rep.All.TotalCounts, rep.All.DetectedGenes)
		}
		for i, w := range wantMito {
			if math.Abs(float64(rep.All.MitoFraction[i]-w)) > 1e-7 {
				t.Errorf("cell %d: mito fraction %v, want %v", i, rep.All.MitoFraction[i], w)
			}
		}
		if !slices.Equal(rep.Kept.TotalCounts, []float32{14, 13, 3}) || len(rep.Kept.MitoFraction) != 3 {
			t.Errorf("kept totals %v", rep.Kept.TotalCounts)
		}
		if !slices.Equal(rep.GeneCells, []int32{3, 1, 3, 1, 3, 1, 0, 1, 1, 1}) {
			t.Errorf("gene detection %v", rep.GeneCells)
		}
	}
}

// QC metrics of a random matrix against a direct computation, and the
// filters against direct application of the thresholds.
func TestQCMatchesDirectComputation(t *testing.T) {
	counts := synth.Counts(700, 120, 25, 3)
	symbols := make([]string, counts.Cols)
	for j := range symbols {
		symbols[j] = "G" + string(rune('0'+j%10))
		if j%17 == 0 {
			symbols[j] = "MT-" + symbols[j]
		}
	}
	d := &atlas.Dataset{Counts: sparse.FromCSR(counts), GeneSymbols: symbols}
	opt := QCOptions{MinGenes: 25, MinCells: 90, MinCounts: 40, MaxCounts: 150, MaxMitoFraction: 0.3}
	cells, genes, rep, err := QC(context.Background(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	x := denseOf(counts)
	var wantCells []int
	for i := range counts.Rows {
		var total, mito float64
		det := 0
		for j := range counts.Cols {
			v := x.At(i, j)
			total += v
			if v > 0 {
				det++
			}
			if IsMitochondrial(symbols[j]) {
				mito += v
			}
		}
		if float64(rep.All.TotalCounts[i]) != total || int(rep.All.DetectedGenes[i]) != det || math.Abs(float64(rep.All.MitoFraction[i])-mito/total) > 1e-7 {
			t.Fatalf("cell %d: metrics %v %v %v, direct %v %v %v", i, rep.All.TotalCounts[i], rep.All.DetectedGenes[i], rep.All.MitoFraction[i], total, det, mito/total)
		}
		if total >= opt.MinCounts && total <= opt.MaxCounts && det >= opt.MinGenes && mito/total <= opt.MaxMitoFraction {
			wantCells = append(wantCells, i)
		}
	}
	var wantGenes []int
	for j := range counts.Cols {
		n := 0
		for _, i := range wantCells {
			if x.At(i, j) > 0 {
				n++
			}
		}
		if n >= opt.MinCells {
			wantGenes = append(wantGenes, j)
		}
	}
	if !slices.Equal(genes, wantGenes) {
		t.Fatalf("genes %v, direct %v", genes, wantGenes)
	}
	wantCells = slices.DeleteFunc(wantCells, func(i int) bool {
		for _, j := range wantGenes {
			if x.At(i, j) > 0 {
				return false
			}
		}
		return true
	})
	if !slices.Equal(cells, wantCells) {
		t.Fatalf("%d cells kept, direct %d", len(cells), len(wantCells))
	}
	if len(cells) == 0 || len(cells) == counts.Rows {
		t.Fatalf("the thresholds keep %d of %d cells; the test needs some of each", len(cells), counts.Rows)
	}
}

// Bad input gives errors that say what and where.
func TestQCBadInput(t *testing.T) {
	d, opt := qcExample()
	c := d.Counts.ToCSR()
	c.Val[7] = -1
	d.Counts = sparse.FromCSR(c)
	_, _, _, err := QC(context.Background(), d, opt)
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrNegative) || e.Row != 3 || e.Col != int(c.ColIdx[7]) {
		t.Errorf("negative count: got %v", err)
	}
	c.Val[7] = float32(math.Inf(1))
	d.Counts = sparse.FromCSR(c)
	if _, _, _, err := QC(context.Background(), d, opt); !errors.Is(err, ErrNotFinite) {
		t.Errorf("infinite count: got %v", err)
	}
	d, _ = qcExample()
	d.CellIDs = d.CellIDs[:3]
	if _, _, _, err := QC(context.Background(), d, opt); !errors.Is(err, ErrShape) {
		t.Errorf("short cell IDs: got %v", err)
	}
	d, _ = qcExample()
	if _, _, _, err := QC(context.Background(), d, QCOptions{MinGenes: -1}); !errors.Is(err, ErrOption) {
		t.Errorf("negative option: got %v", err)
	}
	if _, _, _, err := QC(context.Background(), &atlas.Dataset{Table: atlas.NewDense(2, 2)}, opt); !errors.Is(err, ErrNoMatrix) {
		t.Errorf("no counts: got %v", err)
	}
	_, _, rep, err := QC(context.Background(), d, QCOptions{MinGenes: 1000})
	if !errors.Is(err, ErrTooFewCells) || rep == nil || rep.Filters[1].Cells != 8 {
		t.Errorf("no cell kept: got %v and report %+v", err, rep)
	}
}

// A cancelled context stops QC with the context's error.
func TestQCCancel(t *testing.T) {
	d, opt := qcExample()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, _, _, err := QC(ctx, d, opt); !errors.Is(err, context.Canceled) {
		t.Errorf("got %v, want context.Canceled", err)
	}
}

// Normalisation against the direct formula log(1 + x·target/Σx) in float64,
// for a matrix with an empty row and a stored zero.
func TestNormalizeMatchesDirectComputation(t *testing.T) {
	counts := synth.Counts(300, 50, 12, 4)
	counts.RowPtr = append(counts.RowPtr, counts.RowPtr[counts.Rows]) // an empty last row
	counts.Rows++
	counts.Val[3] = 0 // a stored zero
	for _, threads := range []int{1, 3} {
		norm, err := Normalize(context.Background(), counts, 1e4, threads, nil)
		if err != nil {
			t.Fatal(err)
		}
		if &norm.ColIdx[0] != &counts.ColIdx[0] || norm.NNZ() != counts.NNZ() {
			t.Fatal("the result does not share the pattern of the input")
		}
		x := denseOf(counts)
		for i := range counts.Rows {
			var total float64
			for j := range counts.Cols {
				total += x.At(i, j)
			}
			for j := range counts.Cols {
				want := 0.0
				if total > 0 {
					want = math.Log1p(x.At(i, j) * 1e4 / total)
				}
				if got := float64(norm.At(i, j)); math.Abs(got-want) > 1e-6*max(1, want) {
					t.Fatalf("(%d, %d): %v, direct %v", i, j, got, want)
				}
			}
		}
	}
}

func TestNormalizeBadInput(t *testing.T) {
	counts := synth.Counts(10, 8, 3, 5)
	if _, err := Normalize(context.Background(), counts, 0, 0, nil); !errors.Is(err, ErrOption) {
		t.Errorf("zero target: got %v", err)
	}
	counts.Val[4] = float32(math.NaN())
	_, err := Normalize(context.Background(), counts, 1e4, 0, nil)
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrNotFinite) || e.Row != 1 || e.Col != int(counts.ColIdx[4]) {
		t.Errorf("NaN: got %v", err)
	}
}

// QC and the normalisation read the tally gathered while the counts were
// built; without one they read the entries. Both ways give the same report,
// kept cells and genes, and factors, bit for bit: with large counts and
// mitochondrial genes, whether QC keeps most cells (the removed cells'
// genes are then taken off the tally) or few.
func TestTallyEqualsEntries(t *testing.T) {
	counts := synth.Counts(600, 150, 30, 5)
	for k := range counts.Val {
		if k%97 == 0 {
			counts.Val[k] = float32(300 + k)
		}
	}
	// Genes 140 … 149 are detected in the first 20 cells only: QC removes
	// them, and the factors leave their counts out.
	for i := 20; i < counts.Rows; i++ {
		for k := counts.RowPtr[i]; k < counts.RowPtr[i+1]; k++ {
			if counts.ColIdx[k] >= 140 {
				counts.Val[k] = 0
			}
		}
	}
	symbols := make([]string, counts.Cols)
	for j := range symbols {
		symbols[j] = fmt.Sprintf("G%d", j)
		if j%13 == 0 {
			symbols[j] = "MT-" + symbols[j]
		}
	}
	tallied := sparse.FromCSR(counts)
	if tallied.Tally == nil || len(tallied.LargeAt) == 0 {
		t.Fatal("the test matrix should have a tally and large counts")
	}
	plain := *tallied
	plain.Tally = nil
	ctx := context.Background()
	opt := QCOptions{MinGenes: 20, MinCells: 40, MaxMitoFraction: 0.5}
	_, _, first, err := QC(ctx, &atlas.Dataset{Counts: tallied, GeneSymbols: symbols}, opt)
	if err != nil {
		t.Fatal(err)
	}
	totals := slices.Clone(first.All.TotalCounts)
	slices.Sort(totals)
	few := opt
	few.MinCounts = float64(totals[len(totals)*3/4])
	for _, o := range []QCOptions{opt, few} {
		cells, genes, rep, err := QC(ctx, &atlas.Dataset{Counts: tallied, GeneSymbols: symbols}, o)
		if err != nil {
			t.Fatal(err)
		}
		wantCells, wantGenes, want, err := QC(ctx, &atlas.Dataset{Counts: &plain, GeneSymbols: symbols}, o)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(cells, wantCells) || !slices.Equal(genes, wantGenes) || !reflect.DeepEqual(rep, want) {
			t.Fatalf("MinCounts %v: QC with the tally differs from QC of the entries", o.MinCounts)
		}
		if len(genes) == counts.Cols || (o.MinCounts > 0) != (2*len(cells) < counts.Rows) {
			t.Fatalf("MinCounts %v keeps %d of %d cells and %d of %d genes", o.MinCounts, len(cells), counts.Rows, len(genes), counts.Cols)
		}
		scales := make([][]float64, 2)
		for k, m := range []*sparse.Counts{tallied, &plain} {
			v, err := sparse.NewView(m, cells, genes, 0)
			if err != nil {
				t.Fatal(err)
			}
			if v, err = NormalizeView(ctx, v, DefaultTarget, 0, nil); err != nil {
				t.Fatal(err)
			}
			scales[k] = v.Scale()
		}
		if !slices.Equal(scales[0], scales[1]) {
			t.Errorf("MinCounts %v: the factors from the tally differ from those of the entries", o.MinCounts)
		}
	}
}
