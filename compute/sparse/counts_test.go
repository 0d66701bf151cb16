package sparse

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// randomCSR returns a rows × cols matrix with about density·rows·cols
// entries drawn by value, and the same as a dense matrix.
func randomCSR(rng *rand.Rand, rows, cols int, density float64, value func() float32) (*CSR, [][]float32) {
	m := &CSR{Rows: rows, Cols: cols, RowPtr: make([]int64, rows+1)}
	d := make([][]float32, rows)
	for i := range d {
		d[i] = make([]float32, cols)
		for j := range cols {
			if rng.Float64() < density {
				v := value()
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, v)
				d[i][j] = v
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	return m, d
}

// The compact store holds every kind of value exactly as the CSR matrix it
// was built from: small counts in a byte, counts of 255 and more aside
// (rounded to float32 above 2^24, as the CSR holds them), real values as
// float32; zeros are not stored.
func TestCountsHoldValues(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	kinds := []struct {
		name  string
		value func() float32
		real  bool
	}{
		{"small counts", func() float32 { return float32(1 + rng.IntN(254)) }, false},
		{"with zeros", func() float32 { return float32(rng.IntN(5)) }, false},
		{"large counts", func() float32 {
			return []float32{1, 2, 254, 255, 256, 300, 65535, 1 << 24, 1<<24 + 2, 1e10}[rng.IntN(10)]
		}, false},
		{"real values", func() float32 { return float32(rng.ExpFloat64()) }, true},
		{"negative values", func() float32 { return float32(rng.NormFloat64()) }, true},
	}
	for _, k := range kinds {
		for _, cols := range []int{40, MaxCols16, MaxCols16 + 1} {
			m, d := randomCSR(rng, 30, cols, min(0.3, 400.0/float64(cols)), k.value)
			c := FromCSR(m)
			if err := c.Validate(); err != nil {
				t.Fatalf("%s, %d columns: %v", k.name, cols, err)
			}
			if c.IsReal() != k.real || (c.Col32 != nil) != (cols > MaxCols16) {
				t.Fatalf("%s, %d columns: real %v, 32-bit columns %v", k.name, cols, c.IsReal(), c.Col32 != nil)
			}
			var nnz int64
			var rc []int32
			var rv []float32
			for i := range d {
				rc, rv = c.Row(i, rc, rv)
				p := 0
				for j, want := range d[i] {
					if got := c.At(i, j); got != want {
						t.Fatalf("%s: (%d, %d) = %v, want %v", k.name, i, j, got, want)
					}
					if want != 0 {
						nnz++
						if p >= len(rc) || int(rc[p]) != j || rv[p] != want {
							t.Fatalf("%s: row %d entry %d differs", k.name, i, p)
						}
						p++
					}
				}
			}
			if c.NNZ() != nnz {
				t.Fatalf("%s: %d entries stored, %d non-zero", k.name, c.NNZ(), nnz)
			}
			back := c.ToCSR()
			if FromCSR(back).Validate() != nil || back.NNZ() != int(nnz) {
				t.Fatalf("%s: ToCSR", k.name)
			}
		}
	}
}

// The builder's tally: each row's total (small counts summed as integers,
// then the large ones in column order) and each column's rows, as counted
// by hand; a tally that does not match the entries fails Validate; real
// values have none.
func TestCountsTally(t *testing.T) {
	b := NewCountsBuilder(3, 4, 0)
	for _, e := range []struct {
		col int
		v   float32
	}{{0, 254}, {1, 255}, {3, 1 << 16}} {
		b.Add(e.col, e.v)
	}
	b.EndRow()
	b.EndRow() // an empty row
	b.Add(0, 1)
	b.Add(1, 1e10)
	b.Add(2, 3)
	b.Add(3, 16777217) // rounded to float32: 16777216
	m := b.Counts()
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	want := Tally{RowTotal: []float64{254 + 255 + 65536, 0, 4 + 1e10 + 16777216}, ColRows: []int64{2, 2, 1, 2}}
	if m.Tally == nil || !slices.Equal(m.Tally.RowTotal, want.RowTotal) || !slices.Equal(m.Tally.ColRows, want.ColRows) {
		t.Fatalf("tally %+v, want %+v", m.Tally, want)
	}
	m.Tally.ColRows[2]++
	if m.Validate() == nil {
		t.Error("Validate accepts a column count that does not match the entries")
	}
	m.Tally.ColRows[2]--
	m.Tally.RowTotal[1] = 1
	if m.Validate() == nil {
		t.Error("Validate accepts a row total that does not match the entries")
	}

	r := NewCountsBuilder(1, 2, 0)
	r.Add(0, 2)
	r.Add(1, 0.5)
	if real := r.Counts(); real.Tally != nil || real.Validate() != nil {
		t.Errorf("real values: tally %+v", real.Tally)
	}
}

// Bytes per entry: 3 for counts with 16-bit columns, 5 with 32-bit ones, 6
// and 8 for real values, and 12 more for each count of 255 or more.
func TestCountsBytes(t *testing.T) {
	build := func(cols int, vals ...float32) *Counts {
		b := NewCountsBuilder(1, cols, 0)
		for j, v := range vals {
			b.Add(j*(cols/len(vals)), v)
		}
		return b.Counts()
	}
	cases := []struct {
		m    *Counts
		want int64
	}{
		{build(100, 1, 2, 3, 4), 16 + 4*3},
		{build(100, 1, 2, 300, 4), 16 + 4*3 + 12},
		{build(100_000, 1, 2, 3, 4), 16 + 4*5},
		{build(100, 1, 2.5, 3, 4), 16 + 4*6},
		{build(100_000, 1, 2.5, 3, 4), 16 + 4*8},
	}
	for k, c := range cases {
		if got := c.m.Bytes(); got != c.want {
			t.Errorf("case %d: %d bytes, want %d", k, got, c.want)
		}
	}
}

func TestCountsValidateFindsFaults(t *testing.T) {
	good := func() *Counts {
		b := NewCountsBuilder(2, 5, 0)
		b.Add(0, 3)
		b.Add(2, 400)
		b.EndRow()
		b.Add(4, 1)
		return b.Counts()
	}
	if err := good().Validate(); err != nil {
		t.Fatal(err)
	}
	faults := map[string]func(m *Counts){
		"column out of range":  func(m *Counts) { m.Col16[2] = 5 },
		"columns out of order": func(m *Counts) { m.Col16[0] = 2 },
		"stored zero":          func(m *Counts) { m.Small[0] = 0 },
		"unlisted large":       func(m *Counts) { m.Small[2] = LargeMark },
		"listed small":         func(m *Counts) { m.Small[1] = 7 },
		"small large value":    func(m *Counts) { m.LargeVal[0] = 12 },
		"short values":         func(m *Counts) { m.Small = m.Small[:2] },
		"row pointers":         func(m *Counts) { m.RowPtr[1] = 3; m.RowPtr[2] = 2 },
	}
	for name, f := range faults {
		m := good()
		f(m)
		if m.Validate() == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

func TestSelectRowsCols(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	m, d := randomCSR(rng, 40, 30, 0.3, func() float32 { return []float32{1, 7, 255, 1000}[rng.IntN(4)] })
	c := FromCSR(m)
	rows := []int{5, 0, 39, 5}
	cols := []int{1, 2, 17, 29}
	s := c.SelectRowsCols(rows, cols)
	// Validate also checks the tally against the entries.
	if err := s.Validate(); err != nil || s.Tally == nil {
		t.Fatalf("%v; tally %v", err, s.Tally)
	}
	for r, i := range rows {
		for k, j := range cols {
			if s.At(r, k) != d[i][j] {
				t.Fatalf("(%d, %d) = %v, want %v", r, k, s.At(r, k), d[i][j])
			}
		}
	}
	all := c.SelectRowsCols([]int{3}, nil)
	if all.Cols != 30 || !slices.Equal(all.ToCSR().Val, m.SelectRows([]int{3}).Val) {
		t.Error("nil columns do not select all")
	}
}

func TestSearch16(t *testing.T) {
	c := []uint16{2, 3, 5, 8, 13, 21, 65535}
	for j := range 1 << 16 {
		want := slices.Index(c, uint16(j))
		if got := Search16(c, uint16(j)); got != want {
			t.Fatalf("Search16(%d) = %d, want %d", j, got, want)
		}
	}
	if Search16(nil, 3) != -1 || SearchFrom16(nil, 3, 0) != -1 {
		t.Error("empty slice")
	}
	rng := rand.New(rand.NewPCG(7, 8))
	for range 2000 {
		c := make([]uint16, 0, 64)
		for j := rng.IntN(50); j < 1<<16 && len(c) < cap(c); j += 1 + rng.IntN(3000) {
			c = append(c, uint16(j))
		}
		for range 50 {
			j := uint16(rng.IntN(1 << 16))
			if rng.IntN(2) == 0 && len(c) > 0 {
				j = c[rng.IntN(len(c))]
			}
			want := slices.Index(c, j)
			guess := rng.IntN(len(c)+10) - 5
			if got := SearchFrom16(c, j, guess); got != want {
				t.Fatalf("SearchFrom16(%v, %d, %d) = %d, want %d", c, j, guess, got, want)
			}
		}
	}
}

// A view reads chosen rows and columns as stored, or log-normalised as
// float32(log1p(x·factor)) computed once in float64: checked against that
// formula for every entry.
func TestViewReadsChosenEntries(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, real := range []bool{false, true} {
		value := func() float32 { return float32(1 + rng.IntN(80)) }
		if real {
			value = func() float32 { return float32(rng.ExpFloat64() * 3) }
		}
		m, d := randomCSR(rng, 60, 90, 0.4, func() float32 {
			if rng.IntN(20) == 0 {
				return float32(255 + rng.IntN(3000))
			}
			return value()
		})
		c := FromCSR(m)
		rows := []int{59, 3, 3, 10, 0}
		cols := []int{0, 4, 5, 50, 88, 89}
		v, err := NewView(c, rows, cols, 3)
		if err != nil {
			t.Fatal(err)
		}
		scale := []float64{0.5, 2, 1e-3, 10, 1}
		n, err := v.WithScale(scale)
		if err != nil {
			t.Fatal(err)
		}
		var nnz int64
		for r, i := range rows {
			vc, vv := v.Row(r, nil, nil)
			nc, nv := n.Row(r, nil, nil)
			p := 0
			for k, j := range cols {
				x := d[i][j]
				want := float32(math.Log1p(float64(x) * scale[r]))
				col := n.Column(k, nil, 2)
				if x == 0 {
					if col[r] != 0 {
						t.Fatalf("column %d row %d = %v, want 0", k, r, col[r])
					}
					continue
				}
				nnz++
				if vc[p] != int32(k) || vv[p] != x || nc[p] != int32(k) || nv[p] != want || col[r] != want {
					t.Fatalf("real %v, row %d, column %d: %v %v %v, want %v %v", real, r, k, vv[p], nv[p], col[r], x, want)
				}
				p++
			}
			if p != len(vc) || p != len(nc) {
				t.Fatalf("row %d: %d and %d entries, want %d", r, len(vc), len(nc), p)
			}
		}
		if v.NNZ() != nnz || n.NNZ() != nnz {
			t.Fatalf("%d entries, want %d", v.NNZ(), nnz)
		}
		sub, err := n.Columns([]int{1, 4}, 2)
		if err != nil {
			t.Fatal(err)
		}
		for r := range rows {
			for k, j := range []int{1, 4} {
				if sub.At(r, k) != n.Column(j, nil, 1)[r] {
					t.Fatalf("Columns: (%d, %d)", r, k)
				}
			}
		}
	}
}

func TestViewRefusesBadIndices(t *testing.T) {
	build := func() *Counts {
		b := NewCountsBuilder(2, 4, 0)
		b.Add(1, 2)
		return b.Counts()
	}
	c := build()
	if _, err := NewView(c, []int{2}, nil, 0); err == nil {
		t.Error("row out of range accepted")
	}
	if _, err := NewView(c, nil, []int{2, 1}, 0); err == nil {
		t.Error("columns out of order accepted")
	}
	c.Col16[0] = 9
	if _, err := NewView(c, nil, nil, 0); err == nil {
		t.Error("column index out of range accepted")
	}
	v, err := NewView(build(), nil, nil, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := v.WithScale([]float64{1}); err == nil {
		t.Error("one factor for two rows accepted")
	}
	if _, err := v.Columns([]int{3, 3}, 0); err == nil {
		t.Error("repeated column accepted")
	}
}
