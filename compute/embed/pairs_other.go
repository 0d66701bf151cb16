//go:build !amd64

package embed

// haveAVX2 is false where no assembly kernels exist.
const haveAVX2 = false

func pairSumsAVX2(xa, ya float32, xs, ys, ax, ay, aw *float32, n int) (fx, fy, fw float64) {
	panic("embed: no AVX2 kernel on this architecture")
}

func pairSumsTailAVX2(xa, ya, scale, alpha float32, xs, ys, ax, ay, aw *float32, n int) (fx, fy, fw float64) {
	panic("embed: no AVX2 kernel on this architecture")
}

func subBlockAVX2(v, m, q *float64, n int) {
	panic("embed: no AVX2 kernel on this architecture")
}

func attractRowAVX2(xi, yi, a float64, y *float64, cols *int32, vals *float32, n, ahead int) (fx, fy float64) {
	panic("embed: no AVX2 kernel on this architecture")
}

func attractRowLogAVX2(xi, yi, a float64, y *float64, cols *int32, vals *float32, n, ahead int) (fx, fy, ls float64) {
	panic("embed: no AVX2 kernel on this architecture")
}

func attractRow32AVX2(xi, yi, a float32, y *float32, cols *int32, vals *float32, n, ahead int) (fx, fy float64) {
	panic("embed: no AVX2 kernel on this architecture")
}
