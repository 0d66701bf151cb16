package integrate

import "lodestone/internal/cpufeat"

// haveAVX2 reports whether mm6x16 may use its AVX2 kernel. Tests clear it to
// run the portable code.
var haveAVX2 = cpufeat.AVX2FMA

// mm6x16AVX2 is mm6x16 without bounds checks.
//
//go:noescape
func mm6x16AVX2(a *float32, rs, ps int, b *float32, ldb int, c *float32, ldc, p, nt int)

// softmaxRowAVX2 is softmaxRow without bounds checks.
//
//go:noescape
func softmaxRowAVX2(dots, lp, r *float32, sums *float64, k int, scale float32) (s, t0, t1, t2 float32)

// setAVX2 chooses the AVX2 kernels (when the processor has them) or the
// portable ones; tests use it.
func setAVX2(on bool) { haveAVX2 = on && cpufeat.AVX2FMA }
