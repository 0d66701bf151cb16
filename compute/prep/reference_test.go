package prep

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// This file holds the slow, direct computations the tests compare against.

// denseOf returns m as a dense float64 matrix.
func denseOf(m *sparse.CSR) *mat.Dense {
	d := mat.NewDense(m.Rows, m.Cols, nil)
	for i := range m.Rows {
		cols, vals := m.Row(i)
		for k, j := range cols {
			d.Set(i, int(j), float64(vals[k]))
		}
	}
	return d
}

// denseOfTable returns t as a dense float64 matrix.
func denseOfTable(t *atlas.Dense) *mat.Dense {
	d := mat.NewDense(t.Rows, t.Cols, nil)
	for i := range t.Rows {
		for j := range t.Cols {
			d.Set(i, j, float64(t.At(i, j)))
		}
	}
	return d
}

// referencePCA is a principal component analysis by gonum's exact SVD of the
// explicitly formed matrix: columns standardised (denominator N−1) and
// clipped to ±Clip when standardize is set, then centred. It returns the
// singular values, the right singular vectors (columns of v), the scores
// U·Σ, the total variance and how many entries were clipped.
type referencePCA struct {
	sigma    []float64
	v        *mat.Dense
	scores   *mat.Dense
	totalVar float64
	clipped  int
}

func newReferencePCA(t *testing.T, x *mat.Dense, standardize bool) *referencePCA {
	t.Helper()
	n, g := x.Dims()
	z := mat.DenseCopyOf(x)
	ref := &referencePCA{}
	if standardize {
		for j := range g {
			var mu float64
			for i := range n {
				mu += x.At(i, j)
			}
			mu /= float64(n)
			var ss float64
			for i := range n {
				d := x.At(i, j) - mu
				ss += d * d
			}
			sd := math.Sqrt(ss / float64(n-1))
			for i := range n {
				v := 0.0
				if sd > 0 {
					v = (x.At(i, j) - mu) / sd
				}
				if v > Clip || v < -Clip {
					ref.clipped++
					v = max(-Clip, min(Clip, v))
				}
				z.Set(i, j, v)
			}
		}
	}
	for j := range g {
		var mu float64
		for i := range n {
			mu += z.At(i, j)
		}
		mu /= float64(n)
		for i := range n {
			z.Set(i, j, z.At(i, j)-mu)
			ref.totalVar += z.At(i, j) * z.At(i, j)
		}
	}
	ref.totalVar /= float64(n - 1)
	var svd mat.SVD
	if !svd.Factorize(z, mat.SVDThin) {
		t.Fatal("reference SVD did not converge")
	}
	ref.sigma = svd.Values(nil)
	ref.v = &mat.Dense{}
	svd.VTo(ref.v)
	var u mat.Dense
	svd.UTo(&u)
	ref.scores = &mat.Dense{}
	ref.scores.Mul(&u, mat.NewDiagDense(len(ref.sigma), ref.sigma))
	return ref
}

// randomSparse returns an n × g matrix whose entries are stored with
// probability density, with values log(1 + a count of 1 … 20).
func randomSparse(n, g int, density float64, seed uint64) *sparse.CSR {
	rng := rand.New(rand.NewPCG(seed, 1))
	m := &sparse.CSR{Rows: n, Cols: g, RowPtr: make([]int64, n+1)}
	for i := range n {
		for j := range g {
			if rng.Float64() < density {
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, float32(math.Log1p(float64(1+rng.IntN(20)))))
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	return m
}

// comparePCA checks res against ref: singular values to relative error
// sigmaTol, loadings and scores up to one sign per component to absolute
// error vecTol (scores relative to σ_1).
func comparePCA(t *testing.T, res *PCA, ref *referencePCA, sigmaTol, vecTol float64) {
	t.Helper()
	k := len(res.SingularValues)
	n, g := res.Scores.Rows, res.Loadings.Rows
	for c := range k {
		if rel := math.Abs(res.SingularValues[c]-ref.sigma[c]) / ref.sigma[c]; rel > sigmaTol {
			t.Errorf("σ_%d = %.10g, exact SVD %.10g: relative error %.2g > %.2g", c+1, res.SingularValues[c], ref.sigma[c], rel, sigmaTol)
		}
		if vecTol == 0 {
			continue
		}
		var dot float64
		for j := range g {
			dot += float64(res.Loadings.At(j, c)) * ref.v.At(j, c)
		}
		sign := math.Copysign(1, dot)
		var worstV, worstU float64
		for j := range g {
			worstV = max(worstV, math.Abs(float64(res.Loadings.At(j, c))-sign*ref.v.At(j, c)))
		}
		for i := range n {
			worstU = max(worstU, math.Abs(float64(res.Scores.At(i, c))-sign*ref.scores.At(i, c)))
		}
		worstU /= ref.sigma[0]
		if worstV > vecTol || worstU > vecTol {
			t.Errorf("component %d: loadings differ by %.2g, scores by %.2g·σ_1 (tolerance %.2g)", c+1, worstV, worstU, vecTol)
		}
	}
	if rel := math.Abs(res.TotalVariance-ref.totalVar) / ref.totalVar; rel > 1e-10 {
		t.Errorf("total variance %.12g, direct %.12g", res.TotalVariance, ref.totalVar)
	}
	for c := range k {
		want := ref.sigma[c] * ref.sigma[c] / float64(n-1) / ref.totalVar
		if math.Abs(res.ExplainedVarianceRatio[c]-want) > sigmaTol*2*want {
			t.Errorf("explained variance ratio %d = %.8g, exact %.8g", c+1, res.ExplainedVarianceRatio[c], want)
		}
	}
}

// groupedSparse returns an n × g matrix of log(1 + count) values with group
// structure: row i belongs to group i mod groups, and each group owns a block
// of g/groups columns that its rows store with probability 0.8 and larger
// counts, while any other column is stored with probability 0.05.
func groupedSparse(n, g, groups int, seed uint64) *sparse.CSR {
	rng := rand.New(rand.NewPCG(seed, 2))
	m := &sparse.CSR{Rows: n, Cols: g, RowPtr: make([]int64, n+1)}
	for i := range n {
		grp := i % groups
		for j := range g {
			in := j*groups/g == grp
			p, mean := 0.05, 1.0
			if in {
				p, mean = 0.8, 8
			}
			if rng.Float64() < p {
				count := 1 + math.Floor(rng.ExpFloat64()*mean)
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, float32(math.Log1p(count)))
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	return m
}
