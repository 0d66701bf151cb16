//go:build !amd64

package integrate

// haveAVX2 is false where no assembly kernel exists.
const haveAVX2 = false

func mm6x16AVX2(a *float32, rs, ps int, b *float32, ldb int, c *float32, ldc, p, nt int) {
	panic("integrate: no AVX2 kernel on this architecture")
}

func softmaxRowAVX2(dots, lp, r *float32, sums *float64, k int, scale float32) (s, t0, t1, t2 float32) {
	panic("integrate: no AVX2 kernel on this architecture")
}

func setAVX2(bool) {}
