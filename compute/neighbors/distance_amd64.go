package neighbors

import "lodestone/internal/cpufeat"

// haveAVX2 reports whether the processor and the operating system support
// the AVX2 and FMA instructions of the assembly kernels. Tests clear it to
// run the portable kernels.
var haveAVX2 = cpufeat.AVX2FMA

// sqDistRowsAVX2 sets out[r] = Σ_{j<dim} (q_j − rows[r·dim+j])² for r < n,
// dim ≥ 1, in eight lanes.
//
//go:noescape
func sqDistRowsAVX2(q, rows *float32, dim int, out *float32, n int)

// sqDistTileAVX2 computes the 4×16 squared distances between four query
// rows (q, stride dim, dim ≥ 1) and a tile of 16 rows stored transposed
// (element (j, r) at tile[16·j+r]), writes them to out row by row, and sets
// bit r of mask[i] when distance (i, r) ≤ thr[i]. Each distance is the sum
// of (q_j − t_j)² in order of j, as in sqDistTileGo.
//
//go:noescape
func sqDistTileAVX2(q *float32, dim int, tile, thr, out *float32, mask *uint32)

// sqDistRowsBelowAVX2 computes out as sqDistRowsAVX2 does and sets, for
// each full group g of four rows, bit i of below[g] when out[4g+i] ≤ tq or
// out[4g+i] ≤ thr[4g+i]; the last n mod 4 rows get their distances only.
//
//go:noescape
func sqDistRowsBelowAVX2(q, rows *float32, dim int, out *float32, n int, tq float32, thr *float32, below *uint8)

// containsAVX2 reports whether q is among the n ≥ 0 ids at ids.
//
//go:noescape
func containsAVX2(ids *int32, n int, q int32) bool
