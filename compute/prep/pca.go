package prep

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// Defaults of PCAOptions, used where a field is zero.
const (
	DefaultComponents      = 50
	DefaultOversample      = 10
	DefaultPowerIterations = 4
)

// PCAOptions control RunPCA and DensePCA. Zero values of Components,
// Oversample and PowerIterations select the defaults above.
type PCAOptions struct {
	// Components is the number of principal components to compute. It is
	// lowered, with a note, to min(N−1, G) for an N × G matrix.
	Components int
	// Oversample is the number of random directions used beyond
	// Components; more give more accurate trailing components.
	Oversample int
	// PowerIterations is the number of subspace iterations; each costs two
	// passes over the matrix and sharpens the separation of the
	// components from the rest of the spectrum.
	PowerIterations int
	// Standardize scales each column to unit variance and clips the
	// result to [−Clip, Clip] before the analysis.
	Standardize bool
	// Seed seeds the random starting directions.
	Seed int64
	// Threads is the number of goroutines to use; 0 means one per processor.
	Threads int
	// Progress, when not nil, receives the progress in passes over the
	// matrix.
	Progress progress.Func
}

// DefaultPCA returns the default options: 50 components, 10 extra
// directions, 4 power iterations, no standardisation, seed 0.
func DefaultPCA() PCAOptions {
	return PCAOptions{Components: DefaultComponents, Oversample: DefaultOversample, PowerIterations: DefaultPowerIterations}
}

// withDefaults checks o and fills in its zero fields.
func (o PCAOptions) withDefaults() (PCAOptions, error) {
	const stage = "pca"
	switch {
	case o.Components < 0:
		return o, errOption(stage, "Components = %d is negative", o.Components)
	case o.Oversample < 0:
		return o, errOption(stage, "Oversample = %d is negative", o.Oversample)
	case o.PowerIterations < 0:
		return o, errOption(stage, "PowerIterations = %d is negative", o.PowerIterations)
	}
	if o.Components == 0 {
		o.Components = DefaultComponents
	}
	if o.Oversample == 0 {
		o.Oversample = DefaultOversample
	}
	if o.PowerIterations == 0 {
		o.PowerIterations = DefaultPowerIterations
	}
	o.Threads = parallel.Threads(o.Threads)
	return o, nil
}

// PCA is a principal component analysis of an N × G matrix, reduced to k
// components.
type PCA struct {
	// Scores holds the coordinates of the rows on the components, N × k:
	// the left singular vectors times the singular values, U·Σ.
	Scores *atlas.Dense
	// Loadings holds the components as orthonormal columns, G × k: the
	// right singular vectors V. The entry of largest magnitude of each
	// column (the first one on a tie) is positive.
	Loadings *atlas.Dense
	// SingularValues holds σ_1 ≥ … ≥ σ_k of the centred (scaled) matrix.
	SingularValues []float64
	// ExplainedVariance holds σ_t²/(N−1), the variance along each component.
	ExplainedVariance []float64
	// ExplainedVarianceRatio holds ExplainedVariance / TotalVariance.
	ExplainedVarianceRatio []float64
	// TotalVariance is the sum of the variances (denominator N−1) of all
	// columns of the centred (scaled, clipped) matrix, computed exactly.
	TotalVariance float64
	// Mean holds the mean of each column of the input.
	Mean []float64
	// StdDev holds the standard deviation (denominator N−1) of each column
	// of the input when the analysis standardised it, else nil. Columns
	// with StdDev 0 are left out of a standardised analysis.
	StdDev []float64
	// Notes says where the analysis differs from what was asked.
	Notes []string
}

// RunPCA computes the leading principal components of X (N × G, sparse)
// without forming a dense N × G matrix. The analysed matrix is
//
//	A = Z − 1·mᵀ,  Z_ij = X_ij                              (default)
//	               Z_ij = clip((X_ij − μ_j)/σ_j, −Clip, Clip)  (Standardize)
//
// with m_j the mean of column j of Z and μ_j, σ_j those of X (σ with
// denominator N−1; a column with σ_j = 0 is set to zero). A is never
// formed: each product with A visits only the stored entries of X, because
// an unstored zero maps to a per-column constant that the centring removes.
// This keeps clipping exact, including the case where the zeros of a column
// lie more than Clip standard deviations below its mean.
//
// The method is randomised subspace iteration (Halko, Martinsson & Tropp
// 2011, SIAM Review 53:217–288, Algorithms 4.4 and 5.1) on the row space:
// with l = k + Oversample (at most min(N, G)) and q = PowerIterations,
//
//	Q ← orth(Ω), Ω a G × l standard normal matrix
//	repeat q times: Q ← orth(Aᵀ(A·Q))
//	Y = A·Q;  YᵀY = W Λ Wᵀ
//	scores = Y·W_k,  loadings = Q·W_k,  σ_t = √λ_t
//
// orth being a Householder QR factorisation (gonum's LAPACK). The range
// found is that of (AᵀA)^q Ω, so Y spans the same space as Halko's
// (AAᵀ)^q AΩ, at 2q+1 passes over X. Orthonormalising after each AᵀA
// rather than after each product loses directions with σ_t < √ε·σ_1
// (ε the float64 precision), which carry no visible variance.
//
// X must be a valid matrix with finite values, at least 2 rows and at least
// one column that varies; otherwise RunPCA returns an *Error. Results are
// deterministic for a given seed and thread count.
func RunPCA(ctx context.Context, X *sparse.CSR, opt PCAOptions) (*PCA, error) {
	if err := checkCSR("pca", X); err != nil {
		return nil, err
	}
	return runPCA(ctx, csrSource{X}, nil, opt)
}

// RunPCAView is RunPCA for a view of counts (log-normalised or not), whose
// values are computed each time a pass reads them; the result equals that
// of RunPCA on the same values held in a CSR matrix.
func RunPCAView(ctx context.Context, X *sparse.View, opt PCAOptions) (*PCA, error) {
	return runPCA(ctx, viewSource{X}, nil, opt)
}

// DensePCA is RunPCA for a dense table (rows × features), such as a table
// with more than 100 numeric columns. Values must be finite.
func DensePCA(ctx context.Context, X *atlas.Dense, opt PCAOptions) (*PCA, error) {
	if X == nil || X.Rows < 0 || X.Cols < 0 || len(X.Data) != X.Rows*X.Cols {
		detail := "nil table"
		if X != nil {
			detail = fmt.Sprintf("%d values for %d × %d", len(X.Data), X.Rows, X.Cols)
		}
		return nil, errAt("pca", -1, -1, ErrShape, "%s", detail)
	}
	return runPCA(ctx, nil, X, opt)
}

// runPCA is RunPCA and DensePCA; exactly one of sp and dense is not nil.
func runPCA(ctx context.Context, sp source, dense *atlas.Dense, opt PCAOptions) (*PCA, error) {
	const stage = "pca"
	opt, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	n, g := 0, 0
	if sp != nil {
		n, g = sp.dims()
	} else {
		n, g = dense.Rows, dense.Cols
	}
	if n < 2 {
		return nil, errAt(stage, -1, -1, ErrTooFewCells, "%d rows; principal components need at least 2", n)
	}
	if g < 1 {
		return nil, errAt(stage, -1, -1, ErrTooFewGenes, "no columns")
	}
	a, err := newCentred(ctx, sp, dense, opt.Standardize, opt.Threads)
	if err != nil {
		return nil, err
	}
	if !(a.totalVar > 0) {
		return nil, errAt(stage, -1, -1, ErrTooFewGenes, "no column of %d varies", g)
	}
	res := &PCA{Mean: a.mu, TotalVariance: a.totalVar}
	if opt.Standardize {
		res.StdDev = a.sd
	}
	k := opt.Components
	if limit := min(n-1, g); k > limit {
		res.Notes = append(res.Notes, fmt.Sprintf("asked for %d components; a %d × %d matrix allows at most %d", k, n, g, limit))
		k = limit
	}
	l := min(k+opt.Oversample, n, g)

	passes := int64(2*opt.PowerIterations + 2)
	report := func(done int64) { opt.Progress.Report(done, passes) }
	q, y, err := subspace(ctx, a, l, opt, report)
	if err != nil {
		return nil, err
	}

	// Y = U_Y Σ Wᵀ from the eigendecomposition of the l × l Gram matrix.
	gram, err := gramOf(ctx, y, l, a.split)
	if err != nil {
		return nil, err
	}
	var eig mat.EigenSym
	if !eig.Factorize(gram, true) {
		return nil, errAt(stage, -1, -1, ErrNotFinite, "eigendecomposition of the %d × %d Gram matrix did not converge", l, l)
	}
	lambda := eig.Values(nil) // ascending
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	wk := mat.NewDense(l, k, nil)
	res.SingularValues = make([]float64, k)
	for t := range k {
		src := l - 1 - t
		res.SingularValues[t] = math.Sqrt(max(lambda[src], 0))
		for s := range l {
			wk.Set(s, t, vecs.At(s, src))
		}
	}

	res.Loadings = loadings(q, wk, g)
	res.Scores, err = scores(ctx, y, wk, a.split)
	if err != nil {
		return nil, err
	}
	res.ExplainedVariance = make([]float64, k)
	res.ExplainedVarianceRatio = make([]float64, k)
	for t, s := range res.SingularValues {
		res.ExplainedVariance[t] = s * s / float64(n-1)
		res.ExplainedVarianceRatio[t] = res.ExplainedVariance[t] / a.totalVar
	}
	report(passes)
	return res, nil
}

// subspace runs the randomised subspace iteration on a with l directions
// and returns Q (G × l, orthonormal columns) and Y = A·Q (N × l), both
// row-major, reporting each pass over the matrix.
func subspace(ctx context.Context, a *centred, l int, opt PCAOptions, report func(int64)) (q, y []float64, err error) {
	rng := rand.New(rand.NewPCG(uint64(opt.Seed), 0x9e3779b97f4a7c15))
	q = make([]float64, a.g*l)
	for i := range q {
		q[i] = rng.NormFloat64()
	}
	orth := newOrthonormalizer(a.g, l)
	orth.apply(q)
	y = make([]float64, a.n*l)
	w := make([]float64, a.g*l)
	var done int64
	for range opt.PowerIterations {
		if err := a.mul(ctx, y, q, l); err != nil {
			return nil, nil, err
		}
		done++
		report(done)
		if err := a.mulT(ctx, w, y, l); err != nil {
			return nil, nil, err
		}
		done++
		report(done)
		orth.apply(w)
		q, w = w, q
	}
	if err := a.mul(ctx, y, q, l); err != nil {
		return nil, nil, err
	}
	report(done + 1)
	return q, y, nil
}

// loadings returns V = Q·W (G × k) with the sign of each column chosen so
// that its entry of largest magnitude (the first on a tie) is positive; the
// columns of w are flipped alike, so that Y·W stays the matching scores.
func loadings(q []float64, w *mat.Dense, g int) *atlas.Dense {
	l, k := w.Dims()
	v := make([]float64, g*k)
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1,
		blas64.General{Rows: g, Cols: l, Stride: l, Data: q},
		w.RawMatrix(), 0, blas64.General{Rows: g, Cols: k, Stride: k, Data: v})
	for t := range k {
		best := 0
		for j := 1; j < g; j++ {
			if math.Abs(v[j*k+t]) > math.Abs(v[best*k+t]) {
				best = j
			}
		}
		if v[best*k+t] < 0 {
			for j := range g {
				v[j*k+t] = -v[j*k+t]
			}
			for s := range l {
				w.Set(s, t, -w.At(s, t))
			}
		}
	}
	out := atlas.NewDense(g, k)
	for i, x := range v {
		out.Data[i] = float32(x)
	}
	return out
}

// scores returns U·Σ = Y·W (N × k) computed in parallel over the rows of y.
func scores(ctx context.Context, y []float64, w *mat.Dense, sp split) (*atlas.Dense, error) {
	l, k := w.Dims()
	out := atlas.NewDense(len(y)/l, k)
	bufs := make([][]float64, sp.blocks())
	err := sp.run(ctx, func(lo, hi, b int) {
		if bufs[b] == nil {
			bufs[b] = make([]float64, chunkRows*k)
		}
		buf := bufs[b][:(hi-lo)*k]
		blas64.Gemm(blas.NoTrans, blas.NoTrans, 1,
			blas64.General{Rows: hi - lo, Cols: l, Stride: l, Data: y[lo*l : hi*l]},
			w.RawMatrix(), 0, blas64.General{Rows: hi - lo, Cols: k, Stride: k, Data: buf})
		for i, x := range buf {
			out.Data[lo*k+i] = float32(x)
		}
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// gramOf returns YᵀY for y (n × l, row-major): each block of rows adds the
// products of its chunks in order into its own l × l array, and the arrays
// are summed in block order.
func gramOf(ctx context.Context, y []float64, l int, sp split) (*mat.SymDense, error) {
	parts := make([][]float64, sp.blocks())
	err := sp.run(ctx, func(lo, hi, b int) {
		if parts[b] == nil {
			parts[b] = make([]float64, l*l)
		}
		blas64.Syrk(blas.Trans, 1,
			blas64.General{Rows: hi - lo, Cols: l, Stride: l, Data: y[lo*l : hi*l]},
			1, blas64.Symmetric{Uplo: blas.Upper, N: l, Stride: l, Data: parts[b]})
	})
	if err != nil {
		return nil, err
	}
	sum := make([]float64, l*l)
	for _, p := range parts {
		if p != nil {
			floats.Add(sum, p)
		}
	}
	return mat.NewSymDense(l, sum), nil
}

// orthonormalizer replaces an m × n matrix (m ≥ n, row-major) by the Q factor
// of its thin QR factorisation, reusing its workspace.
type orthonormalizer struct {
	m, n int
	tau  []float64
	work []float64
}

func newOrthonormalizer(m, n int) *orthonormalizer {
	o := &orthonormalizer{m: m, n: n, tau: make([]float64, n)}
	a := blas64.General{Rows: m, Cols: n, Stride: n, Data: make([]float64, m*n)}
	query := make([]float64, 1)
	lapack64.Geqrf(a, o.tau, query, -1)
	size := int(query[0])
	lapack64.Orgqr(a, o.tau, query, -1)
	o.work = make([]float64, max(size, int(query[0]), 1))
	return o
}

// apply overwrites x with the orthonormal factor Q of x = QR.
func (o *orthonormalizer) apply(x []float64) {
	a := blas64.General{Rows: o.m, Cols: o.n, Stride: o.n, Data: x}
	lapack64.Geqrf(a, o.tau, o.work, len(o.work))
	lapack64.Orgqr(a, o.tau, o.work, len(o.work))
}
