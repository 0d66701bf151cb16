package prep

import (
	"cmp"
	"context"
	"errors"
	"lodestone/compute/synth"
	"math"
	"slices"
	"testing"

	"lodestone/compute/sparse"
)

// logMatrix returns the matrix of log(1+x) for the given linear values
// (rows of cells), storing only non-zeros.
func logMatrix(linear [][]float64) *sparse.CSR {
	rows := make([]map[int]float32, len(linear))
	for i, r := range linear {
		rows[i] = map[int]float32{}
		for j, v := range r {
			if v != 0 {
				rows[i][j] = float32(math.Log1p(v))
			}
		}
	}
	return csrFromRows(len(linear[0]), rows)
}

// Mean-binned normalised dispersion (Zheng et al. 2017) worked by hand on 4
// cells × 7 genes with 2 bins. Linear values per gene (cells 1–4), mean μ,
// variance σ² = Σ(x−μ)²/3, dispersion d = σ²/μ:
//
//	g0: 1 1 1 1   constant: not ranked
//	g1: 0 0 0 4   μ 1  σ² (1+1+1+9)/3 = 4     d 4
//	g2: 1 0 1 2   μ 1  σ² (0+1+0+1)/3 = 2/3   d 2/3
//	g3: 0 0 2 2   μ 1  σ² (1+1+1+1)/3 = 4/3   d 4/3
//	g4: 0 2 2 4   μ 2  σ² (4+0+0+4)/3 = 8/3   d 4/3
//	g5: 0 0 4 4   μ 2  σ² (4+4+4+4)/3 = 16/3  d 8/3
//	g6: 1 2 2 3   μ 2  σ² (1+0+0+1)/3 = 2/3   d 1/3
//
// Sorted by mean the six ranked genes are g1 g2 g3 | g4 g5 g6, positions
// 0–2 in bin ⌊2·r/6⌋ = 0 and 3–5 in bin 1.
// Bin 0: d = 4, 2/3, 4/3; median 4/3; |d − 4/3| = 8/3, 2/3, 0; MAD 2/3;
// scores g1 (4 − 4/3)/(2/3) = 4, g2 (2/3 − 4/3)/(2/3) = −1, g3 0.
// Bin 1: d = 4/3, 8/3, 1/3; median 4/3; |d − 4/3| = 0, 4/3, 1; MAD 1;
// scores g4 0, g5 4/3, g6 −1.
// The top three: g1 (4), g5 (4/3), then g3 and g4 tie at 0 and the smaller
// column, g3, wins: genes 1, 3, 5.
func TestSelectGenesHandExample(t *testing.T) {
	norm := logMatrix([][]float64{
		{1, 0, 1, 0, 0, 0, 1},
		{1, 0, 0, 0, 2, 0, 2},
		{1, 0, 1, 2, 2, 4, 2},
		{1, 4, 2, 2, 4, 4, 3},
	})
	sel, err := selectGenes(context.Background(), csrSource{norm}, 3, 2, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(sel.Genes, []int{1, 3, 5}) {
		t.Errorf("genes %v, want [1 3 5]", sel.Genes)
	}
	wantMean := []float64{1, 1, 1, 1, 2, 2, 2}
	wantDisp := []float64{0, 4, 2.0 / 3, 4.0 / 3, 4.0 / 3, 8.0 / 3, 1.0 / 3}
	wantScore := []float64{0, 4, -1, 0, 0, 4.0 / 3, -1}
	wantBin := []int{-1, 0, 0, 0, 1, 1, 1}
	for j := range 7 {
		// The values pass through float32 logarithms: about 1e-7 relative.
		if math.Abs(sel.Mean[j]-wantMean[j]) > 1e-6 || math.Abs(sel.Dispersion[j]-wantDisp[j]) > 1e-5 || math.Abs(sel.Score[j]-wantScore[j]) > 1e-5 {
			t.Errorf("gene %d: mean %.7f dispersion %.7f score %.7f, by hand %.7f %.7f %.7f", j, sel.Mean[j], sel.Dispersion[j], sel.Score[j], wantMean[j], wantDisp[j], wantScore[j])
		}
		if sel.Bin[j] != wantBin[j] || sel.Ranked[j] != (j != 0) {
			t.Errorf("gene %d: bin %d ranked %v, by hand %d %v", j, sel.Bin[j], sel.Ranked[j], wantBin[j], j != 0)
		}
	}
}

// Genes of equal mean share a bin even across an equal-count boundary: with
// means 1, 2, 2, 3 and 2 bins the third gene joins the first bin.
func TestSelectGenesTiedMeansShareBin(t *testing.T) {
	norm := logMatrix([][]float64{
		{0, 0, 0, 1},
		{1, 2, 2, 3},
		{1, 2, 2, 3},
		{2, 4, 4, 5},
	})
	sel, err := selectGenes(context.Background(), csrSource{norm}, 4, 2, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(sel.Bin, []int{0, 0, 0, 1}) {
		t.Errorf("bins %v, want [0 0 0 1]", sel.Bin)
	}
}

// SelectGenes with 20 bins against a direct, unoptimised computation of the
// same definition on a random matrix (dense float64 moments, a full sort,
// medians by sorting), with constant and all-zero genes mixed in.
func TestSelectGenesMatchesDirectComputation(t *testing.T) {
	counts := synth.Counts(400, 300, 40, 6)
	norm, err := Normalize(context.Background(), counts, DefaultTarget, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	var keep []int
	for j := range 300 {
		if j%50 != 7 { // drop 6 columns to make room for 6 flat ones
			keep = append(keep, j)
		}
	}
	norm = norm.SelectCols(keep)
	withFlat := &sparse.CSR{Rows: norm.Rows, Cols: norm.Cols + 6, RowPtr: make([]int64, norm.Rows+1)}
	for i := range norm.Rows {
		cols, vals := norm.Row(i)
		for k, j := range cols {
			withFlat.ColIdx = append(withFlat.ColIdx, j)
			withFlat.Val = append(withFlat.Val, vals[k])
		}
		for c := range 3 { // three constant genes, then three without counts
			withFlat.ColIdx = append(withFlat.ColIdx, int32(norm.Cols+c))
			withFlat.Val = append(withFlat.Val, 0.5)
		}
		withFlat.RowPtr[i+1] = int64(len(withFlat.ColIdx))
	}
	const n = 100
	sel, err := SelectGenes(context.Background(), withFlat, n, 3, nil)
	if err != nil {
		t.Fatal(err)
	}

	x := denseOf(withFlat)
	rows, g := x.Dims()
	mean := make([]float64, g)
	disp := make([]float64, g)
	var ranked []int
	for j := range g {
		var s float64
		for i := range rows {
			s += math.Expm1(x.At(i, j))
		}
		mu := s / float64(rows)
		var ss float64
		first := math.Expm1(x.At(0, j))
		constant := true
		for i := range rows {
			v := math.Expm1(x.At(i, j))
			ss += (v - mu) * (v - mu)
			constant = constant && v == first
		}
		mean[j] = mu
		if !constant {
			disp[j] = ss / float64(rows-1) / mu
			ranked = append(ranked, j)
		}
	}
	if len(ranked) != g-6 {
		t.Fatalf("%d ranked genes, want %d", len(ranked), g-6)
	}
	slices.SortFunc(ranked, func(a, b int) int { return cmp.Or(cmp.Compare(mean[a], mean[b]), cmp.Compare(a, b)) })
	score := make([]float64, g)
	m := len(ranked)
	for b := range MeanBins {
		var members []int
		for r, j := range ranked {
			if MeanBins*r/m == b {
				members = append(members, j)
			}
		}
		d := make([]float64, len(members))
		for k, j := range members {
			d[k] = disp[j]
		}
		slices.Sort(d)
		med := (d[(len(d)-1)/2] + d[len(d)/2]) / 2
		for k, j := range members {
			d[k] = math.Abs(disp[j] - med)
		}
		slices.Sort(d)
		mad := (d[(len(d)-1)/2] + d[len(d)/2]) / 2
		for _, j := range members {
			score[j] = (disp[j] - med) / mad
		}
	}
	byScore := slices.Clone(ranked)
	slices.SortFunc(byScore, func(a, b int) int { return cmp.Or(cmp.Compare(score[b], score[a]), cmp.Compare(a, b)) })
	want := slices.Sorted(slices.Values(byScore[:n]))

	for j := range g {
		if math.Abs(sel.Mean[j]-mean[j]) > 1e-9*max(1, mean[j]) || math.Abs(sel.Dispersion[j]-disp[j]) > 1e-9*max(1, disp[j]) || math.Abs(sel.Score[j]-score[j]) > 1e-7 {
			t.Fatalf("gene %d: mean %v dispersion %v score %v; direct %v %v %v", j, sel.Mean[j], sel.Dispersion[j], sel.Score[j], mean[j], disp[j], score[j])
		}
		if math.IsNaN(sel.Score[j]) || math.IsNaN(sel.Dispersion[j]) {
			t.Fatalf("gene %d: NaN", j)
		}
	}
	if !slices.Equal(sel.Genes, want) {
		t.Errorf("genes differ from the direct computation:\n got %v\nwant %v", sel.Genes, want)
	}
}

// Asking for more genes than vary keeps all that vary, with a note.
func TestSelectGenesFewerThanAsked(t *testing.T) {
	norm := logMatrix([][]float64{{1, 0, 2}, {1, 3, 0}, {1, 1, 1}})
	sel, err := SelectGenes(context.Background(), norm, 2000, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(sel.Genes, []int{1, 2}) || len(sel.Notes) != 1 {
		t.Errorf("genes %v notes %q", sel.Genes, sel.Notes)
	}
}

func TestSelectGenesBadInput(t *testing.T) {
	norm := logMatrix([][]float64{{1, 0, 2}, {1, 3, 0}})
	if _, err := SelectGenes(context.Background(), norm, 0, 0, nil); !errors.Is(err, ErrOption) {
		t.Errorf("n = 0: got %v", err)
	}
	one := logMatrix([][]float64{{1, 0, 2}})
	if _, err := SelectGenes(context.Background(), one, 5, 0, nil); !errors.Is(err, ErrTooFewCells) {
		t.Errorf("one cell: got %v", err)
	}
	flat := logMatrix([][]float64{{1, 0, 2}, {1, 0, 2}})
	if _, err := SelectGenes(context.Background(), flat, 5, 0, nil); !errors.Is(err, ErrTooFewGenes) {
		t.Errorf("no varying gene: got %v", err)
	}
	norm.Val[2] = float32(math.NaN())
	_, err := SelectGenes(context.Background(), norm, 5, 0, nil)
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrNotFinite) || e.Row != 1 || e.Col != 0 {
		t.Errorf("NaN: got %v", err)
	}
}
