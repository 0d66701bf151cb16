package prep

import (
	"context"
	"errors"
	"lodestone/compute/synth"
	"math"
	"slices"
	"sync"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// testOptions are small settings for test matrices.
func testOptions() Options {
	opt := DefaultOptions()
	opt.QC.MinGenes = 30
	opt.QC.MinCells = 5
	opt.Genes = 120
	opt.PCA.Components = 10
	opt.PCA.Seed = 7
	return opt
}

// Prepare on counts equals the stages run one after another by hand.
func TestPrepareCountsEqualsStages(t *testing.T) {
	counts := synth.Counts(500, 200, 40, 8)
	// Ten cells fall below the detected-genes threshold.
	for i := 0; i < 500; i += 50 {
		counts.Val[counts.RowPtr[i]] = 0
	}
	d := &atlas.Dataset{Counts: sparse.FromCSR(counts)}
	opt := testOptions()
	opt.QC.MinGenes = 40
	var (
		mu     sync.Mutex // progress arrives from several goroutines
		stages []string
	)
	opt.Progress = func(stage string, done, total int64) {
		mu.Lock()
		defer mu.Unlock()
		if len(stages) == 0 || stages[len(stages)-1] != stage {
			stages = append(stages, stage)
		}
		if done > total {
			t.Errorf("%s: progress %d of %d", stage, done, total)
		}
	}
	res, err := Prepare(context.Background(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(stages, []string{"qc", "normalize", "genes", "pca"}) {
		t.Errorf("stages reported %v", stages)
	}

	ctx := context.Background()
	cells, genes, qc, err := QC(ctx, d, opt.QC)
	if err != nil {
		t.Fatal(err)
	}
	if len(cells) == 500 || qc.Filters[1].Cells != 10 {
		t.Fatalf("the test matrix should lose its 10 thinned cells: %+v", qc.Filters)
	}
	norm, err := Normalize(ctx, counts.SelectRows(cells).SelectCols(genes), opt.Target, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	sel, err := SelectGenes(ctx, norm, opt.Genes, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := RunPCA(ctx, norm.SelectCols(sel.Genes), opt.PCA)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(res.Cells, cells) || !slices.Equal(res.KeptGenes, genes) || !slices.Equal(res.Genes.Genes, sel.Genes) {
		t.Fatal("kept cells, genes or selection differ from the stages")
	}
	sameValues(t, res.Normalized, norm)
	if res.Features.Rows != len(cells) || res.Features.Cols != 10 || !slices.Equal(res.Features.Data, p.Scores.Data) {
		t.Fatal("features differ from the principal components of the stages")
	}
}

// A narrow table is used as it is; a wide one of non-negative integers is
// treated as counts; a wide one of other numbers goes through DensePCA.
func TestPrepareTables(t *testing.T) {
	ctx := context.Background()
	narrow := atlas.NewDense(50, 20)
	for i := range narrow.Data {
		narrow.Data[i] = float32(math.Sin(float64(i)))
	}
	res, err := Prepare(ctx, &atlas.Dataset{Table: narrow}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	if res.Features != narrow || len(res.Cells) != 50 || res.PCA != nil {
		t.Error("a narrow table is not used as it is")
	}

	counts := synth.Counts(300, 150, 45, 9)
	x := denseOf(counts)
	wide := atlas.NewDense(300, 150)
	for i := range 300 {
		for j := range 150 {
			wide.Data[i*150+j] = float32(x.At(i, j))
		}
	}
	res, err = Prepare(ctx, &atlas.Dataset{Table: wide}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	direct, err := Prepare(ctx, &atlas.Dataset{Counts: sparse.FromCSR(counts)}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	if res.QC == nil || !slices.Equal(res.Features.Data, direct.Features.Data) {
		t.Error("a wide table of counts is not prepared like the same counts")
	}

	for i := range wide.Data {
		wide.Data[i] += 0.25
	}
	res, err = Prepare(ctx, &atlas.Dataset{Table: wide}, testOptions())
	if err != nil {
		t.Fatal(err)
	}
	p, err := DensePCA(ctx, wide, testOptions().PCA)
	if err != nil {
		t.Fatal(err)
	}
	if res.QC != nil || res.Normalized != nil || !slices.Equal(res.Features.Data, p.Scores.Data) {
		t.Error("a wide table of non-counts is not reduced by DensePCA")
	}
}

func TestPrepareBadInput(t *testing.T) {
	ctx := context.Background()
	if _, err := Prepare(ctx, &atlas.Dataset{}, testOptions()); !errors.Is(err, ErrNoMatrix) {
		t.Errorf("empty dataset: got %v", err)
	}
	tab := atlas.NewDense(10, 3)
	tab.Data[3*3+2] = float32(math.NaN())
	_, err := Prepare(ctx, &atlas.Dataset{Table: tab}, testOptions())
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrNotFinite) || e.Row != 3 || e.Col != 2 {
		t.Errorf("NaN in a table: got %v", err)
	}
	counts := synth.Counts(40, 100, 20, 10)
	opt := testOptions()
	opt.QC.MinGenes = 20
	opt.QC.MaxCounts = 20 // no cell has so few counts with 20 genes of ≥ 1
	if _, err := Prepare(ctx, &atlas.Dataset{Counts: sparse.FromCSR(counts)}, opt); !errors.Is(err, ErrTooFewCells) {
		t.Errorf("no cell passes QC: got %v", err)
	}
	one := &sparse.CSR{Rows: 2, Cols: 3, RowPtr: []int64{0, 3, 3}, ColIdx: []int32{0, 1, 2}, Val: []float32{1, 2, 3}}
	if _, err := Prepare(ctx, &atlas.Dataset{Counts: sparse.FromCSR(one)}, Options{}); !errors.Is(err, ErrTooFewCells) {
		t.Errorf("one cell left: got %v", err)
	}
}

// floatStages runs normalisation, gene selection and PCA one after another
// on the float matrix counts, for the cells and genes res kept.
func floatStages(t *testing.T, ctx context.Context, counts *sparse.CSR, res *Result, opt Options) (*sparse.CSR, *GeneSelection, *PCA) {
	t.Helper()
	norm, err := Normalize(ctx, counts.SelectRows(res.Cells).SelectCols(res.KeptGenes), opt.Target, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	sel, err := SelectGenes(ctx, norm, opt.Genes, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := RunPCA(ctx, norm.SelectCols(sel.Genes), opt.PCA)
	if err != nil {
		t.Fatal(err)
	}
	return norm, sel, p
}

// sameValues checks that the view v holds exactly the non-zero entries of m,
// bit for bit.
func sameValues(t *testing.T, v *sparse.View, m *sparse.CSR) {
	t.Helper()
	rows, cols := v.Dims()
	if rows != m.Rows || cols != m.Cols {
		t.Fatalf("view %d×%d, matrix %d×%d", rows, cols, m.Rows, m.Cols)
	}
	var vc []int32
	var vv []float32
	for i := 0; i < m.Rows; i++ {
		vc, vv = v.Row(i, vc, vv)
		mc, mv := m.Row(i)
		k := 0
		for t2, c := range mc {
			if mv[t2] == 0 {
				continue
			}
			if k >= len(vc) || vc[k] != c || math.Float32bits(vv[k]) != math.Float32bits(mv[t2]) {
				t.Fatalf("row %d: view differs from the matrix at column %d", i, c)
			}
			k++
		}
		if k != len(vc) {
			t.Fatalf("row %d: %d entries in the view, %d non-zero in the matrix", i, len(vc), k)
		}
	}
}

// Real values (normalised elsewhere, say) take the same path as counts,
// held as float32: Prepare equals the stages on the float32 matrix, bit for
// bit, as for counts.
func TestPrepareRealValuesEqualsStages(t *testing.T) {
	counts := synth.Counts(400, 150, 40, 11)
	for k := range counts.Val {
		counts.Val[k] *= 1.37
	}
	d := &atlas.Dataset{Counts: sparse.FromCSR(counts)}
	if !d.Counts.IsReal() {
		t.Fatal("the test matrix should hold real values")
	}
	ctx := context.Background()
	opt := testOptions()
	res, err := Prepare(ctx, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	norm, sel, p := floatStages(t, ctx, counts, res, opt)
	sameValues(t, res.Normalized, norm)
	if !slices.Equal(res.Genes.Genes, sel.Genes) || !slices.Equal(res.Features.Data, p.Scores.Data) {
		t.Fatal("gene selection or features differ from the stages")
	}
}
