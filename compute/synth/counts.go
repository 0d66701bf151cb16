package synth

import (
	"math"
	"math/rand/v2"
	"slices"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// countGroups is the number of cell groups Counts draws.
const countGroups = 8

// Counts returns a random cells × genes matrix of counts with exactly
// min(nnzPerRow, genes) stored entries per row.
//
// Cell i belongs to group i mod 8; each group has its own block of genes
// (genes·g/8 … genes·(g+1)/8 − 1 for group g). When a cell stores at most
// half of the genes, half of its stored genes (or the whole block, if
// smaller) are drawn from its group's block and the rest from all genes,
// without replacement; a cell storing more genes draws them uniformly. Each
// count is
//
//	1 + ⌊e · m · s_i⌋,  e ~ Exp(1),  m = 6 in the cell's group block, else 1
//
// with a per-cell library factor s_i uniform on [0.5, 2). The matrix thus
// has group structure for a principal component analysis to find. The
// result depends only on the arguments, not on the number of processors.
// Sizes below their minimum are raised to it: cells and nnzPerRow to 0,
// genes to 1.
func Counts(cells, genes, nnzPerRow int, seed int64) *sparse.CSR {
	cells, genes, nnzPerRow = max(cells, 0), max(genes, 1), max(nnzPerRow, 0)
	k := min(nnzPerRow, genes)
	m := &sparse.CSR{
		Rows:   cells,
		Cols:   genes,
		RowPtr: make([]int64, cells+1),
		ColIdx: make([]int32, cells*k),
		Val:    make([]float32, cells*k),
	}
	for i := range m.RowPtr {
		m.RowPtr[i] = int64(i) * int64(k)
	}
	// Draw the excluded genes instead when they are fewer.
	exclude := k > genes/2
	draws := k
	if exclude {
		draws = genes - k
	}
	parallel.For(cells, 0, func(lo, hi, _ int) {
		src := rand.NewPCG(0, 0)
		rng := rand.New(src)
		mark := make([]int, genes) // mark[j] == i+1: gene j drawn for cell i
		for i := lo; i < hi; i++ {
			src.Seed(uint64(seed), uint64(i))
			cols := m.ColIdx[i*k : (i+1)*k]
			group := i % countGroups
			first, last := genes*group/countGroups, genes*(group+1)/countGroups
			inBlock := 0
			if !exclude {
				inBlock = min(draws/2, last-first)
			}
			for n := 0; n < draws; {
				var j int
				if n < inBlock {
					j = first + rng.IntN(last-first)
				} else {
					j = rng.IntN(genes)
				}
				if mark[j] != i+1 {
					mark[j] = i + 1
					if !exclude {
						cols[n] = int32(j)
					}
					n++
				}
			}
			if exclude {
				p := 0
				for j := range genes {
					if mark[j] != i+1 {
						cols[p] = int32(j)
						p++
					}
				}
			} else {
				slices.Sort(cols)
			}
			scale := 0.5 + 1.5*rng.Float64()
			vals := m.Val[i*k : (i+1)*k]
			for t, j := range cols {
				mean := 1.0
				if int(j) >= first && int(j) < last {
					mean = 6
				}
				vals[t] = float32(1 + math.Floor(rng.ExpFloat64()*mean*scale))
			}
		}
	})
	return m
}
