//go:build !amd64

package neighbors

// haveAVX2 is false where no assembly kernels exist.
const haveAVX2 = false

func sqDistAVX2(a, b *float32, n int) float32 {
	panic("neighbors: no AVX2 kernel on this architecture")
}

func sqDistRowsAVX2(q, rows *float32, dim int, out *float32, n int) {
	panic("neighbors: no AVX2 kernel on this architecture")
}

func sqDistTileAVX2(q *float32, dim int, tile, thr, out *float32, mask *uint32) {
	panic("neighbors: no AVX2 kernel on this architecture")
}

func sqDistRowsBelowAVX2(q, rows *float32, dim int, out *float32, n int, tq float32, thr *float32, below *uint8) {
	panic("neighbors: no AVX2 kernel on this architecture")
}

func containsAVX2(ids *int32, n int, q int32) bool {
	panic("neighbors: no AVX2 kernel on this architecture")
}
