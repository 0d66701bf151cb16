package sparse

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestColumnOfManyRows reads whole columns of a log-normalised view of 500
// rows, where Column reads ahead of its search, on 1 and 3 goroutines:
// columns stored in every row (the count's byte read ahead too), in some
// and in none, with counts of 255 and more held aside, and checks every
// value against the dense matrix normalised directly.
func TestColumnOfManyRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const rows, cols = 500, 40
	m, d := randomCSR(rng, rows, cols, 0.3, func() float32 {
		if rng.IntN(30) == 0 {
			return float32(255 + rng.IntN(500))
		}
		return float32(1 + rng.IntN(9))
	})
	for i := range rows { // column 7 in every row
		if d[i][7] == 0 {
			d[i][7] = 3
		}
	}
	for i := range rows { // column 20 in no row
		d[i][20] = 0
	}
	m = &CSR{Rows: rows, Cols: cols, RowPtr: make([]int64, rows+1)}
	for i := range rows {
		for j := range cols {
			if d[i][j] != 0 {
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, d[i][j])
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	v, err := NewView(FromCSR(m), nil, nil, 2)
	if err != nil {
		t.Fatal(err)
	}
	scale := make([]float64, rows)
	for i := range scale {
		scale[i] = 0.1 + rng.Float64()
	}
	if v, err = v.WithScale(scale); err != nil {
		t.Fatal(err)
	}
	for _, threads := range []int{1, 3} {
		for j := range cols {
			col := v.Column(j, nil, threads)
			for i, got := range col {
				want := float32(math.Log1p(float64(d[i][j]) * scale[i]))
				if got != want {
					t.Fatalf("threads %d, column %d, row %d: %v, want %v", threads, j, i, got, want)
				}
			}
		}
	}
}
