package synth

import (
	"math"
	"runtime"
	"slices"
	"testing"
)

// Counts gives a valid matrix with the asked number of entries per
// row, the same whatever the number of processors.
func TestCounts(t *testing.T) {
	for _, tc := range []struct{ cells, genes, perRow int }{{200, 80, 10}, {50, 30, 25}, {20, 5, 9}} {
		a := Counts(tc.cells, tc.genes, tc.perRow, 1)
		if err := a.Validate(); err != nil {
			t.Fatal(err)
		}
		k := min(tc.perRow, tc.genes)
		for i := range a.Rows {
			if n := a.RowPtr[i+1] - a.RowPtr[i]; n != int64(k) {
				t.Fatalf("row %d holds %d entries, want %d", i, n, k)
			}
		}
		for _, v := range a.Val {
			if v < 1 || v != float32(math.Trunc(float64(v))) {
				t.Fatalf("value %v is not a positive count", v)
			}
		}
		old := runtime.GOMAXPROCS(1)
		b := Counts(tc.cells, tc.genes, tc.perRow, 1)
		runtime.GOMAXPROCS(old)
		if !slices.Equal(a.ColIdx, b.ColIdx) || !slices.Equal(a.Val, b.Val) {
			t.Error("Counts depends on the number of processors")
		}
	}
	if a := Counts(10, 0, 5, 1); a.Cols != 1 || a.Validate() != nil {
		t.Errorf("no genes: %d columns, raised to 1 expected", a.Cols)
	}
}
