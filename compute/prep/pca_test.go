package prep

import (
	"errors"
	"lodestone/compute/synth"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"context"
	"lodestone/compute/atlas"
	"testing"

	"lodestone/compute/sparse"
)

// normalizedRandom returns synth.Counts(n, g, perRow, seed) log-normalised.
func normalizedRandom(t testing.TB, n, g, perRow int, seed int64) *sparse.CSR {
	t.Helper()
	c := synth.Counts(n, g, perRow, seed)
	norm, err := Normalize(context.Background(), c, DefaultTarget, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	return norm
}

// Singular values of the centred matrix against gonum's exact SVD (mat.SVD
// of the densified matrix): relative error ≤ 1e-4 on the top 10, with the
// default oversampling and power iterations, for random sparse matrices with
// group structure (12 groups, so the top 10 components stand above the
// noise). Loadings and scores agree with the exact SVD up to sign.
func TestRunPCAMatchesExactSVD(t *testing.T) {
	for _, tc := range []struct {
		n, g        int
		seed        uint64
		standardize bool
	}{
		{320, 96, 1, false},
		{480, 160, 2, false},
		{400, 64, 3, false},
		{320, 96, 4, true},
	} {
		x := groupedSparse(tc.n, tc.g, 12, tc.seed)
		res, err := RunPCA(context.Background(), x, PCAOptions{Components: 10, Seed: int64(tc.seed), Standardize: tc.standardize})
		if err != nil {
			t.Fatal(err)
		}
		ref := newReferencePCA(t, denseOf(x), tc.standardize)
		comparePCA(t, res, ref, 1e-4, 1e-3)
	}
}

// A matrix of independent random entries has a flat spectrum, the hardest
// case for subspace iteration: the error of σ_t decays like
// (σ_{l+1}/σ_t)^(4q+2) in the number q of power iterations (Halko,
// Martinsson & Tropp 2011, §9.2). With enough iterations the top 10 singular
// values still match gonum's exact SVD to 1e-4.
func TestRunPCAFlatSpectrum(t *testing.T) {
	x := randomSparse(300, 80, 0.1, 7)
	ref := newReferencePCA(t, denseOf(x), false)
	res, err := RunPCA(context.Background(), x, PCAOptions{Components: 10, PowerIterations: 30, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	comparePCA(t, res, ref, 1e-4, 0)
}

// Standardisation with clipping against the dense computation (gonum's exact
// SVD of the explicitly standardised, clipped and centred matrix). Column 0
// is stored in every row but one with values near 5, so its one zero lies
// about 20 standard deviations below the mean and is clipped to −10; column
// 1 holds one large value that lies far above mean + 10 sd and is clipped to
// +10; column 2 is constant and must contribute nothing (no NaN).
func TestRunPCAStandardizeClipsExactly(t *testing.T) {
	const n = 400
	base := groupedSparse(n, 40, 6, 9)
	x := &sparse.CSR{Rows: n, Cols: 43, RowPtr: make([]int64, n+1)}
	rng := rand.New(rand.NewPCG(3, 4))
	for i := range n {
		if i != 7 {
			x.ColIdx = append(x.ColIdx, 0)
			x.Val = append(x.Val, float32(5+0.25*rng.NormFloat64()))
		}
		if i == 11 {
			x.ColIdx = append(x.ColIdx, 1)
			x.Val = append(x.Val, 1000)
		} else if i%3 == 0 {
			x.ColIdx = append(x.ColIdx, 1)
			x.Val = append(x.Val, float32(1+rng.Float64()))
		}
		x.ColIdx = append(x.ColIdx, 2)
		x.Val = append(x.Val, 3)
		cols, vals := base.Row(i)
		for k, j := range cols {
			x.ColIdx = append(x.ColIdx, j+3)
			x.Val = append(x.Val, vals[k])
		}
		x.RowPtr[i+1] = int64(len(x.ColIdx))
	}
	if err := x.Validate(); err != nil {
		t.Fatal(err)
	}
	ref := newReferencePCA(t, denseOf(x), true)
	if ref.clipped < 2 {
		t.Fatalf("the test matrix clips %d entries; it must clip the zero of column 0 and the outlier of column 1", ref.clipped)
	}
	// Without clipping each of the 42 varying columns would have variance 1.
	if math.Abs(ref.totalVar-42) < 1e-3 {
		t.Fatalf("total variance %v: clipping has no visible effect", ref.totalVar)
	}
	res, err := RunPCA(context.Background(), x, PCAOptions{Components: 5, Standardize: true, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	comparePCA(t, res, ref, 1e-4, 1e-3)
	if res.StdDev[2] != 0 {
		t.Errorf("constant column: standard deviation %v, want 0", res.StdDev[2])
	}
	for _, v := range res.Scores.Data {
		if math.IsNaN(float64(v)) {
			t.Fatal("NaN in the scores")
		}
	}
}

// DensePCA against gonum's exact SVD of the dense matrix, plain and
// standardised.
func TestDensePCAMatchesExactSVD(t *testing.T) {
	x := groupedSparse(300, 120, 12, 5)
	tab := atlas.NewDense(x.Rows, x.Cols)
	for i := range x.Rows {
		for j := range x.Cols {
			tab.Data[i*x.Cols+j] = x.At(i, j) + 0.5 // no zeros: a dense table
		}
	}
	for _, standardize := range []bool{false, true} {
		res, err := DensePCA(context.Background(), tab, PCAOptions{Components: 10, Standardize: standardize, Seed: 2})
		if err != nil {
			t.Fatal(err)
		}
		comparePCA(t, res, newReferencePCA(t, denseOfTable(tab), standardize), 1e-4, 1e-3)
	}
}

// The sparse and dense paths analyse the same matrix: their results agree
// to rounding.
func TestRunPCAAgreesWithDensePCA(t *testing.T) {
	x := groupedSparse(200, 50, 6, 6)
	tab := atlas.NewDense(x.Rows, x.Cols)
	for i := range x.Rows {
		for j := range x.Cols {
			tab.Data[i*x.Cols+j] = x.At(i, j)
		}
	}
	for _, standardize := range []bool{false, true} {
		opt := PCAOptions{Components: 5, Standardize: standardize, Seed: 3}
		a, err := RunPCA(context.Background(), x, opt)
		if err != nil {
			t.Fatal(err)
		}
		b, err := DensePCA(context.Background(), tab, opt)
		if err != nil {
			t.Fatal(err)
		}
		for c := range 5 {
			if math.Abs(a.SingularValues[c]-b.SingularValues[c]) > 1e-9*a.SingularValues[0] {
				t.Errorf("standardize=%v σ_%d: sparse %.12g, dense %.12g", standardize, c+1, a.SingularValues[c], b.SingularValues[c])
			}
		}
		for i := range a.Scores.Data {
			if math.Abs(float64(a.Scores.Data[i]-b.Scores.Data[i])) > 1e-4 {
				t.Fatalf("standardize=%v: score %d: sparse %v, dense %v", standardize, i, a.Scores.Data[i], b.Scores.Data[i])
			}
		}
	}
}

// The same seed and thread count give bit-identical results.
func TestRunPCADeterministic(t *testing.T) {
	x := groupedSparse(300, 60, 6, 8)
	for _, threads := range []int{1, 2, 3} {
		opt := PCAOptions{Components: 6, Seed: 42, Threads: threads}
		a, err := RunPCA(context.Background(), x, opt)
		if err != nil {
			t.Fatal(err)
		}
		b, err := RunPCA(context.Background(), x, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(a.Scores.Data, b.Scores.Data) || !slices.Equal(a.Loadings.Data, b.Loadings.Data) || !slices.Equal(a.SingularValues, b.SingularValues) {
			t.Errorf("threads=%d: two runs with the same seed differ", threads)
		}
	}
}

// Each loading vector has its entry of largest magnitude positive (the sign
// convention), and the loadings are orthonormal.
func TestRunPCASignConventionAndOrthonormality(t *testing.T) {
	x := groupedSparse(200, 50, 6, 10)
	res, err := RunPCA(context.Background(), x, PCAOptions{Components: 5, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	g, k := res.Loadings.Rows, res.Loadings.Cols
	for c := range k {
		best := 0
		for j := range g {
			if math.Abs(float64(res.Loadings.At(j, c))) > math.Abs(float64(res.Loadings.At(best, c))) {
				best = j
			}
		}
		if res.Loadings.At(best, c) <= 0 {
			t.Errorf("component %d: largest loading %v is not positive", c+1, res.Loadings.At(best, c))
		}
		for d := range k {
			var dot float64
			for j := range g {
				dot += float64(res.Loadings.At(j, c)) * float64(res.Loadings.At(j, d))
			}
			want := 0.0
			if c == d {
				want = 1
			}
			if math.Abs(dot-want) > 1e-6 {
				t.Errorf("loadings %d·%d = %v, want %v", c+1, d+1, dot, want)
			}
		}
	}
}

// More components than the matrix allows are lowered to min(N−1, G), with a
// note, and still match the exact SVD.
func TestRunPCAClampsComponents(t *testing.T) {
	x := groupedSparse(30, 4, 2, 11)
	res, err := RunPCA(context.Background(), x, PCAOptions{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if res.Scores.Cols != 4 || len(res.Notes) != 1 {
		t.Fatalf("%d components, notes %q; want 4 components and one note", res.Scores.Cols, res.Notes)
	}
	comparePCA(t, res, newReferencePCA(t, denseOf(x), false), 1e-10, 1e-5)

	y := groupedSparse(3, 10, 2, 12)
	res, err = RunPCA(context.Background(), y, PCAOptions{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if res.Scores.Cols != 2 {
		t.Fatalf("3 × 10 matrix: %d components, want 2", res.Scores.Cols)
	}
}

// Bad input gives errors that say what and where.
func TestRunPCABadInput(t *testing.T) {
	x := groupedSparse(20, 8, 2, 13)
	x.Val[5] = float32(math.NaN())
	_, err := RunPCA(context.Background(), x, PCAOptions{})
	var e *Error
	if !errors.As(err, &e) || !errors.Is(err, ErrNotFinite) {
		t.Fatalf("NaN: got %v, want an *Error wrapping ErrNotFinite", err)
	}
	row := sort.Search(x.Rows, func(i int) bool { return x.RowPtr[i+1] > 5 })
	if e.Row != row || e.Col != int(x.ColIdx[5]) {
		t.Errorf("NaN at (%d, %d) reported at (%d, %d)", row, x.ColIdx[5], e.Row, e.Col)
	}

	one := groupedSparse(1, 8, 1, 14)
	if _, err := RunPCA(context.Background(), one, PCAOptions{}); !errors.Is(err, ErrTooFewCells) {
		t.Errorf("one row: got %v, want ErrTooFewCells", err)
	}
	constant := &sparse.CSR{Rows: 3, Cols: 2, RowPtr: []int64{0, 1, 2, 3}, ColIdx: []int32{0, 0, 0}, Val: []float32{2, 2, 2}}
	if _, err := RunPCA(context.Background(), constant, PCAOptions{}); !errors.Is(err, ErrTooFewGenes) {
		t.Errorf("constant columns: got %v, want ErrTooFewGenes", err)
	}
	if _, err := RunPCA(context.Background(), x, PCAOptions{Components: -1}); !errors.Is(err, ErrOption) {
		t.Errorf("negative components: got %v, want ErrOption", err)
	}
	bad := &sparse.CSR{Rows: 2, Cols: 2, RowPtr: []int64{0, 1}, ColIdx: []int32{0}, Val: []float32{1}}
	if _, err := RunPCA(context.Background(), bad, PCAOptions{}); !errors.Is(err, ErrMalformed) {
		t.Errorf("malformed matrix: got %v, want ErrMalformed", err)
	}
	if _, err := DensePCA(context.Background(), &atlas.Dense{Rows: 2, Cols: 3, Data: make([]float32, 5)}, PCAOptions{}); !errors.Is(err, ErrShape) {
		t.Errorf("short table: got %v, want ErrShape", err)
	}
}

// A cancelled context stops the analysis with the context's error.
func TestRunPCACancel(t *testing.T) {
	x := groupedSparse(500, 60, 6, 15)
	ctx, cancel := context.WithCancel(context.Background())
	calls := 0
	_, err := RunPCA(ctx, x, PCAOptions{Seed: 1, Progress: func(done, total int64) {
		calls++
		cancel()
	}})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("got %v, want context.Canceled", err)
	}
	if calls != 1 {
		t.Errorf("%d progress reports after cancelling, want 1", calls)
	}
}
