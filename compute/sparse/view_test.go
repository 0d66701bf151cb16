package sparse

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestColumnOfManyRows reads whole columns of a log-normalised view of 500
// rows, where Column reads ahead of its search, on 1 and 3 goroutines:
// columns stored in every row, in some and in none (the last column too),
// with counts of 255 and more held aside, from counts with a tally of rows
// per column (built by CountsBuilder), which guesses each column's place,
// and without (FromCSR), and checks every value against the dense matrix
// normalised directly.
func TestColumnOfManyRows(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	const rows, cols = 500, 40
	_, d := randomCSR(rng, rows, cols, 0.3, func() float32 {
		if rng.IntN(30) == 0 {
			return float32(255 + rng.IntN(500))
		}
		return float32(1 + rng.IntN(9))
	})
	m := &CSR{Rows: rows, Cols: cols, RowPtr: make([]int64, rows+1)}
	b := NewCountsBuilder(rows, cols, 0)
	for i := range rows {
		if d[i][7] == 0 {
			d[i][7] = 3 // column 7 in every row
		}
		d[i][20], d[i][cols-1] = 0, 0 // columns 20 and the last in none
		for j := range cols {
			if d[i][j] != 0 {
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, d[i][j])
				b.Add(j, d[i][j])
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
		b.EndRow()
	}
	scale := make([]float64, rows)
	for i := range scale {
		scale[i] = 0.1 + rng.Float64()
	}
	tallied := b.Counts()
	if tallied.Tally == nil {
		t.Fatal("CountsBuilder gathered no tally")
	}
	for _, c := range []*Counts{FromCSR(m), tallied} {
		v, err := NewView(c, nil, nil, 2)
		if err == nil {
			v, err = v.WithScale(scale)
		}
		if err != nil {
			t.Fatal(err)
		}
		for _, threads := range []int{1, 3} {
			for j := range cols {
				col := v.Column(j, nil, threads)
				for i, got := range col {
					want := float32(math.Log1p(float64(d[i][j]) * scale[i]))
					if got != want {
						t.Fatalf("tally %v, threads %d, column %d, row %d: %v, want %v", c.Tally != nil, threads, j, i, got, want)
					}
				}
			}
		}
	}
}
