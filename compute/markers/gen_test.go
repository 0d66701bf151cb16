package markers

import (
	"math"
	"math/rand/v2"

	"lodestone/compute/sparse"
)

// randomExpression returns a cells × genes matrix of log-normalised
// expression with many zeros and many ties: each cell has a library scale,
// each gene a detection rate between 1% and 2·mean−1%, and a detected gene
// carries log(1 + k·scale) for a small count k. Cells marked in boost
// express the genes below boostGenes three times as often. Non-zeros are
// placed by geometric skips, so the cost grows with their number only.
func randomExpression(cells, genes int, meanRate float64, boost []bool, boostGenes int, seed uint64) *sparse.CSR {
	rng := rand.New(rand.NewPCG(seed, 99))
	scale := make([]float64, cells)
	for c := range scale {
		scale[c] = []float64{0.5, 1, 1, 2}[rng.IntN(4)]
	}
	t := &sparse.CSR{Rows: genes, Cols: cells, RowPtr: make([]int64, genes+1)}
	for g := 0; g < genes; g++ {
		rate := 0.01 + rng.Float64()*2*(meanRate-0.01)
		logMiss := math.Log1p(-rate)
		for c := -1; ; {
			c += 1 + int(math.Log(1-rng.Float64())/logMiss)
			if c >= cells {
				break
			}
			if boost != nil && g < boostGenes && !boost[c] && rng.IntN(3) != 0 {
				continue
			}
			k := 1 + rng.IntN(3)
			if rng.IntN(4) == 0 {
				k += rng.IntN(20)
			}
			t.ColIdx = append(t.ColIdx, int32(c))
			t.Val = append(t.Val, float32(math.Log1p(float64(k)*scale[c])))
		}
		t.RowPtr[g+1] = int64(len(t.ColIdx))
	}
	return t.Transpose()
}
