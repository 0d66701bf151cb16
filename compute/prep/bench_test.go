package prep

import (
	"context"
	"lodestone/compute/synth"
	"sync"
	"testing"

	"gonum.org/v1/gonum/floats"

	"lodestone/compute/atlas"
	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// The benchmark matrix: 100,000 cells × 2,000 genes with 100 counts per cell
// (10^7 stored entries), log-normalised, as the selected genes of a large
// atlas would be.
const (
	benchCells  = 100_000
	benchGenes  = 2_000
	benchPerRow = 100
)

var benchMatrix = sync.OnceValues(func() (*sparse.CSR, error) {
	counts := synth.Counts(benchCells, benchGenes, benchPerRow, 1)
	return Normalize(context.Background(), counts, DefaultTarget, 0, nil)
})

func benchX(b *testing.B) *sparse.CSR {
	b.Helper()
	x, err := benchMatrix()
	if err != nil {
		b.Fatal(err)
	}
	return x
}

// BenchmarkRunPCA: 50 components of the benchmark matrix with the default
// options.
func BenchmarkRunPCA(b *testing.B) {
	x := benchX(b)
	opt := DefaultPCA()
	opt.Seed = 1
	for b.Loop() {
		if _, err := RunPCA(context.Background(), x, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRunPCAStandardize: as BenchmarkRunPCA with standardisation and
// clipping.
func BenchmarkRunPCAStandardize(b *testing.B) {
	x := benchX(b)
	opt := DefaultPCA()
	opt.Seed = 1
	opt.Standardize = true
	for b.Loop() {
		if _, err := RunPCA(context.Background(), x, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNormalize: normalisation of the benchmark counts.
func BenchmarkNormalize(b *testing.B) {
	counts := synth.Counts(benchCells, benchGenes, benchPerRow, 1)
	for b.Loop() {
		if _, err := Normalize(context.Background(), counts, DefaultTarget, 0, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSelectGenes: 2,000 → 500 genes of the benchmark matrix.
func BenchmarkSelectGenes(b *testing.B) {
	x := benchX(b)
	for b.Loop() {
		if _, err := SelectGenes(context.Background(), x, 500, 0, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// The two ways of forming Aᵀ·Q (G × l) from the benchmark matrix, l = 60:
// per-block G × l accumulators over rows (what mulT does), against a
// transposed copy of X walked in parallel over genes (no reduction, but a
// second copy of the matrix and scattered reads of Q).

func BenchmarkMulTAccumulators(b *testing.B) {
	x := benchX(b)
	a, err := newCentred(context.Background(), csrSource{x}, nil, false, 0)
	if err != nil {
		b.Fatal(err)
	}
	const l = 60
	src := make([]float64, x.Rows*l)
	for i := range src {
		src[i] = float64(i%7) - 3
	}
	dst := make([]float64, x.Cols*l)
	for b.Loop() {
		if err := a.mulT(context.Background(), dst, src, l); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkMulTTransposed(b *testing.B) {
	x := benchX(b)
	const l = 60
	src := make([]float64, x.Rows*l)
	for i := range src {
		src[i] = float64(i%7) - 3
	}
	dst := make([]float64, x.Cols*l)
	xt := x.Transpose()
	for b.Loop() {
		parallel.For(xt.Rows, 0, func(lo, hi, _ int) {
			for j := lo; j < hi; j++ {
				out := dst[j*l : (j+1)*l]
				clear(out)
				rows, vals := xt.Row(j)
				for k, i := range rows {
					floats.AddScaled(out, float64(vals[k]), src[int(i)*l:int(i)*l+l])
				}
			}
		})
	}
	b.ReportMetric(float64(xt.Bytes())/1e6, "MB-copy")
}

// BenchmarkPrepare: the whole chain on 20,000 cells × 5,000 genes with 300
// counts per cell (6·10^6 stored entries): QC, normalisation, 2,000 highly
// variable genes, 50 principal components.
func BenchmarkPrepare(b *testing.B) {
	counts := synth.Counts(20_000, 5_000, 300, 2)
	d := &atlas.Dataset{Counts: sparse.FromCSR(counts)}
	opt := DefaultOptions()
	opt.PCA.Seed = 1
	for b.Loop() {
		if _, err := Prepare(context.Background(), d, opt); err != nil {
			b.Fatal(err)
		}
	}
}
