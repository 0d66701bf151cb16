package embed

import "lodestone/internal/cpufeat"

// haveAVX2 reports whether pairSums may use its AVX2 kernel. Tests clear it
// to run the portable code.
var haveAVX2 = cpufeat.AVX2FMA

// pairSumsAVX2 is pairSums for n ≥ 1 points.
//
//go:noescape
func pairSumsAVX2(xa, ya float32, xs, ys, ax, ay, aw *float32, n int) (fx, fy, fw float64)

// pairSumsTailAVX2 is pairSumsTail for the first n points, n a positive
// multiple of 8, with scale = 1/α.
//
//go:noescape
func pairSumsTailAVX2(xa, ya, scale, alpha float32, xs, ys, ax, ay, aw *float32, n int) (fx, fy, fw float64)

// subBlockAVX2 is subBlock for the block m of n ≥ 1 columns and the vector q.
//
//go:noescape
func subBlockAVX2(v, m, q *float64, n int)

// attractRowAVX2 is attractRow for the first n entries, n a positive
// multiple of 4. Every column index must be in range: the kernel gathers
// without bounds checks. The ahead ≥ n entries from cols must be readable:
// to prefetch their layout entries, the kernel reads the columns up to 35
// places past the entry it sums (into the rows that follow), but none at
// or past ahead.
//
//go:noescape
func attractRowAVX2(xi, yi, a float64, y *float64, cols *int32, vals *float32, n, ahead int) (fx, fy float64)

// attractRowLogAVX2 is attractRowLog for the first n entries, n a positive
// multiple of 4, with the same conditions on the columns and ahead.
//
//go:noescape
func attractRowLogAVX2(xi, yi, a float64, y *float64, cols *int32, vals *float32, n, ahead int) (fx, fy, ls float64)

// attractRow32AVX2 is attractRow32 for the first n entries, n a positive
// multiple of 8, with the same conditions on the columns and ahead as
// attractRowAVX2 (a prefetch reads the columns up to 39 places past the
// entry it sums).
//
//go:noescape
func attractRow32AVX2(xi, yi, a float32, y *float32, cols *int32, vals *float32, n, ahead int) (fx, fy float64)
