package neighbors

// Squared Euclidean distances, the inner loop of every search in this
// package. On amd64 processors with AVX2 and FMA they are computed by the
// assembly kernels of distance_amd64.s, elsewhere by the portable loops
// below. Either way every distance of a run comes from the same arithmetic,
// so a distance is symmetric bit for bit (the distance from a to b equals the
// distance from b to a) and exactly zero between equal rows, which the tie
// rules rely on.

// sqDistRows sets out[r] to the squared Euclidean distance between q and
// row r of rows, a row-major block of len(out) rows of len(q) values.
func sqDistRows(q, rows, out []float32) {
	dim := len(q)
	if len(out) == 0 || dim == 0 {
		for r := range out {
			out[r] = 0
		}
		return
	}
	rows = rows[:len(out)*dim]
	if haveAVX2 {
		sqDistRowsAVX2(&q[0], &rows[0], dim, &out[0], len(out))
		return
	}
	for r := range out {
		out[r] = sqDistGo(q, rows[r*dim:(r+1)*dim])
	}
}

// sqDistRowsBelow sets out[r] as sqDistRows does and sets bit r%4 of
// below[r/4] when out[r] ≤ tq or out[r] ≤ thr[r], for every row r; below
// must hold (len(out)+3)/4 bytes.
func sqDistRowsBelow(q, rows, out []float32, tq float32, thr []float32, below []uint8) {
	n, dim := len(out), len(q)
	thr, below = thr[:n], below[:(n+3)/4]
	if n == 0 {
		return
	}
	if haveAVX2 && dim > 0 {
		rows = rows[:n*dim]
		sqDistRowsBelowAVX2(&q[0], &rows[0], dim, &out[0], n, tq, &thr[0], &below[0])
		if n%4 == 0 {
			return
		}
		below[n/4] = 0
		for r := n &^ 3; r < n; r++ {
			if out[r] <= tq || out[r] <= thr[r] {
				below[r/4] |= 1 << (r % 4)
			}
		}
		return
	}
	sqDistRows(q, rows, out)
	clear(below)
	for r, d := range out {
		if d <= tq || d <= thr[r] {
			below[r/4] |= 1 << (r % 4)
		}
	}
}

// sqDistGo is the portable kernel: four float32 lanes added in a fixed order.
func sqDistGo(a, b []float32) float32 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float32
	i := 0
	for ; i+4 <= len(a); i += 4 {
		d0 := a[i] - b[i]
		d1 := a[i+1] - b[i+1]
		d2 := a[i+2] - b[i+2]
		d3 := a[i+3] - b[i+3]
		s0 += d0 * d0
		s1 += d1 * d1
		s2 += d2 * d2
		s3 += d3 * d3
	}
	for ; i < len(a); i++ {
		d := a[i] - b[i]
		s0 += d * d
	}
	return (s0 + s1) + (s2 + s3)
}

// tileRows is the number of reference rows in one transposed tile.
const tileRows = 16

// sqDistTile computes the squared distances between the four query rows
// q[0:4·dim] and the 16 rows of a transposed tile (element (j, r) at
// tile[16·j+r]), writes them to out (4×16, row by row) and sets bit r of
// mask[i] when distance (i, r) ≤ thr[i]. Every distance is summed over j in
// order, so it is symmetric and exactly zero between equal rows, but it may
// differ in the last bits from sqDistRows of the same rows: a search must use
// one kernel throughout.
func sqDistTile(q []float32, dim int, tile, thr, out []float32, mask *[4]uint32) {
	q, tile, thr, out = q[:4*dim], tile[:tileRows*dim], thr[:4], out[:4*tileRows]
	if haveAVX2 {
		sqDistTileAVX2(&q[0], dim, &tile[0], &thr[0], &out[0], &mask[0])
		return
	}
	sqDistTileGo(q, dim, tile, thr, out, mask)
}

// sqDistTileGo is the portable form of sqDistTile, with the same order of
// operations per distance (the products are not fused, so last bits may
// differ from the AVX2 kernel's).
func sqDistTileGo(q []float32, dim int, tile, thr, out []float32, mask *[4]uint32) {
	for i := 0; i < 4; i++ {
		acc := out[i*tileRows : (i+1)*tileRows]
		clear(acc)
		for j, v := range q[i*dim : (i+1)*dim] {
			t := tile[j*tileRows : (j+1)*tileRows]
			for r := range acc {
				d := v - t[r]
				acc[r] += d * d
			}
		}
		m := uint32(0)
		for r, d := range acc {
			if d <= thr[i] {
				m |= 1 << r
			}
		}
		mask[i] = m
	}
}

// SquaredDistances sets dst[r] to the squared Euclidean distance between q
// and row r of rows, a row-major block of len(dst) rows of len(q) values:
//
//	dst[r] = Σ_j (q_j − rows[r·len(q) + j])²
//
// summed in float32 by the kernel of the approximate search (AVX2 where the
// processor has it). It serves callers that need many distances from one
// point, such as fidelity scores. rows must hold at least len(dst)·len(q)
// values.
func SquaredDistances(dst, q, rows []float32) {
	sqDistRows(q, rows, dst)
}
