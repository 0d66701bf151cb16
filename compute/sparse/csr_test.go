package sparse

import "testing"

// small is the 3×4 matrix
//
//	[1 0 2 0]
//	[0 0 0 3]
//	[4 5 0 0]
func small() *CSR {
	return &CSR{Rows: 3, Cols: 4,
		RowPtr: []int64{0, 2, 3, 5},
		ColIdx: []int32{0, 2, 3, 0, 1},
		Val:    []float32{1, 2, 3, 4, 5}}
}

func dense(m *CSR) [][]float32 {
	d := make([][]float32, m.Rows)
	for i := range d {
		d[i] = make([]float32, m.Cols)
		for j := range d[i] {
			d[i][j] = m.At(i, j)
		}
	}
	return d
}

func TestTransposeMatchesDense(t *testing.T) {
	m := small()
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	tr := m.Transpose()
	if err := tr.Validate(); err != nil {
		t.Fatal(err)
	}
	d, dt := dense(m), dense(tr)
	for i := 0; i < m.Rows; i++ {
		for j := 0; j < m.Cols; j++ {
			if d[i][j] != dt[j][i] {
				t.Fatalf("transpose (%d,%d): %v vs %v", i, j, d[i][j], dt[j][i])
			}
		}
	}
}

func TestSelectRowsAndCols(t *testing.T) {
	m := small()
	r := m.SelectRows([]int{2, 0})
	if got := dense(r); got[0][1] != 5 || got[1][2] != 2 || r.NNZ() != 4 {
		t.Fatalf("SelectRows: %v", got)
	}
	c := m.SelectCols([]int{1, 3})
	if err := c.Validate(); err != nil {
		t.Fatal(err)
	}
	if got := dense(c); got[1][1] != 3 || got[2][0] != 5 || c.NNZ() != 2 {
		t.Fatalf("SelectCols: %v", got)
	}
}

func TestValidateRejectsDisorder(t *testing.T) {
	m := small()
	m.ColIdx[0], m.ColIdx[1] = 2, 0
	if m.Validate() == nil {
		t.Fatal("Validate accepted unsorted columns")
	}
}
