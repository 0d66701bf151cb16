#include "textflag.h"

// The matrix product kernel of mm6x16 with AVX2 and FMA: twelve 8-lane
// accumulators hold a 6×16 tile; each step over t loads two vectors of b,
// broadcasts the six values of a and adds the twelve products in one fused
// multiply–add each, so every output element is the sum over t in order.

// func mm6x16AVX2(a *float32, rs, ps int, b *float32, ldb int, c *float32, ldc, p, nt int)
TEXT ·mm6x16AVX2(SB), NOSPLIT, $0-72
	MOVQ a+0(FP), SI
	MOVQ rs+8(FP), R8
	SHLQ $2, R8          // row stride of a, bytes
	MOVQ ps+16(FP), R9
	SHLQ $2, R9          // step stride of a, bytes
	MOVQ b+24(FP), DI
	MOVQ ldb+32(FP), R10
	SHLQ $2, R10         // row stride of b, bytes
	MOVQ c+40(FP), DX
	MOVQ ldc+48(FP), R11
	SHLQ $2, R11         // row stride of c, bytes
	MOVQ nt+64(FP), R13
	LEAQ (R8)(R8*2), R12 // 3 rows of a
	LEAQ (R8)(R8*4), R14 // 5 rows of a

tile:
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7
	VXORPS Y8, Y8, Y8
	VXORPS Y9, Y9, Y9
	VXORPS Y10, Y10, Y10
	VXORPS Y11, Y11, Y11
	MOVQ SI, AX
	MOVQ DI, BX
	MOVQ p+56(FP), CX
	TESTQ CX, CX
	JZ   store

step:
	VMOVUPS      (BX), Y12
	VMOVUPS      32(BX), Y13
	VBROADCASTSS (AX), Y14
	VFMADD231PS  Y12, Y14, Y0
	VFMADD231PS  Y13, Y14, Y1
	VBROADCASTSS (AX)(R8*1), Y15
	VFMADD231PS  Y12, Y15, Y2
	VFMADD231PS  Y13, Y15, Y3
	VBROADCASTSS (AX)(R8*2), Y14
	VFMADD231PS  Y12, Y14, Y4
	VFMADD231PS  Y13, Y14, Y5
	VBROADCASTSS (AX)(R12*1), Y15
	VFMADD231PS  Y12, Y15, Y6
	VFMADD231PS  Y13, Y15, Y7
	VBROADCASTSS (AX)(R8*4), Y14
	VFMADD231PS  Y12, Y14, Y8
	VFMADD231PS  Y13, Y14, Y9
	VBROADCASTSS (AX)(R14*1), Y15
	VFMADD231PS  Y12, Y15, Y10
	VFMADD231PS  Y13, Y15, Y11
	ADDQ R9, AX
	ADDQ R10, BX
	DECQ CX
	JNZ  step

store:
	MOVQ    DX, BX
	VMOVUPS Y0, (BX)
	VMOVUPS Y1, 32(BX)
	ADDQ    R11, BX
	VMOVUPS Y2, (BX)
	VMOVUPS Y3, 32(BX)
	ADDQ    R11, BX
	VMOVUPS Y4, (BX)
	VMOVUPS Y5, 32(BX)
	ADDQ    R11, BX
	VMOVUPS Y6, (BX)
	VMOVUPS Y7, 32(BX)
	ADDQ    R11, BX
	VMOVUPS Y8, (BX)
	VMOVUPS Y9, 32(BX)
	ADDQ    R11, BX
	VMOVUPS Y10, (BX)
	VMOVUPS Y11, 32(BX)
	ADDQ $64, DI
	ADDQ $64, DX
	DECQ R13
	JNZ  tile
	VZEROUPPER
	RET

// tailmask<>: eight all-ones words then eight zero words; the 8 words from
// offset 4·(8−m) select the first m lanes.
DATA tailmask<>+0(SB)/4, $0xffffffff
DATA tailmask<>+4(SB)/4, $0xffffffff
DATA tailmask<>+8(SB)/4, $0xffffffff
DATA tailmask<>+12(SB)/4, $0xffffffff
DATA tailmask<>+16(SB)/4, $0xffffffff
DATA tailmask<>+20(SB)/4, $0xffffffff
DATA tailmask<>+24(SB)/4, $0xffffffff
DATA tailmask<>+28(SB)/4, $0xffffffff
DATA tailmask<>+32(SB)/4, $0
DATA tailmask<>+36(SB)/4, $0
DATA tailmask<>+40(SB)/4, $0
DATA tailmask<>+44(SB)/4, $0
DATA tailmask<>+48(SB)/4, $0
DATA tailmask<>+52(SB)/4, $0
DATA tailmask<>+56(SB)/4, $0
DATA tailmask<>+60(SB)/4, $0
GLOBL tailmask<>(SB), RODATA|NOPTR, $64

// expconst<>: single-precision constants of the exponential, each as one
// word: log2 e, 1/2, ln 2 (high and low parts), the lower clamp, −∞ and
// the Taylor coefficients 1/7! … 1/2!, 1.
DATA expconst<>+0(SB)/4, $0x3fb8aa3b  // log2 e
DATA expconst<>+4(SB)/4, $0x3f000000  // 0.5
DATA expconst<>+8(SB)/4, $0x3f318000  // ln 2, high part 0.693359375
DATA expconst<>+12(SB)/4, $0xb95e8083 // ln 2, low part −2.12194440e-4
DATA expconst<>+16(SB)/4, $0xc2ae0000 // −87
DATA expconst<>+20(SB)/4, $0xff800000 // −∞
DATA expconst<>+24(SB)/4, $0x39500d01 // 1/5040
DATA expconst<>+28(SB)/4, $0x3ab60b61 // 1/720
DATA expconst<>+32(SB)/4, $0x3c088889 // 1/120
DATA expconst<>+36(SB)/4, $0x3d2aaaab // 1/24
DATA expconst<>+40(SB)/4, $0x3e2aaaab // 1/6
DATA expconst<>+44(SB)/4, $0x3f000000 // 1/2
DATA expconst<>+48(SB)/4, $0x3f800000 // 1
GLOBL expconst<>(SB), RODATA|NOPTR, $52

// func softmaxRowAVX2(dots, lp, r *float32, sums *float64, k int, scale float32) (s, t0, t1, t2 float32)
//
// Pass 1: a = dots·scale + lp (lanes ≥ k: −∞) into r, and m = max a.
// Pass 2: e = exp(max(a − m, −87)) (lanes ≥ k: 0) into r, and s = Σ e.
// Pass 3: R = e·(1/s) into r; t0 = Σ R, t1 = Σ R·(a − m), t2 = Σ R·dots;
// sums[·] += R in double precision. Every array is read and written in
// whole vectors of 8 up to ⌈k/8⌉·8.
TEXT ·softmaxRowAVX2(SB), NOSPLIT, $0-64
	MOVQ dots+0(FP), SI
	MOVQ lp+8(FP), DI
	MOVQ r+16(FP), R8
	MOVQ sums+24(FP), R9
	MOVQ k+32(FP), R10
	VBROADCASTSS scale+40(FP), Y15
	LEAQ tailmask<>(SB), R11
	LEAQ expconst<>(SB), R12
	VBROADCASTSS 20(R12), Y12 // −∞
	VMOVAPS Y12, Y14           // running max

	// Pass 1.
	XORQ AX, AX
	MOVQ R10, CX
p1:
	VPCMPEQD Y13, Y13, Y13
	CMPQ CX, $8
	JGE  p1full
	MOVQ $8, DX
	SUBQ CX, DX
	VMOVDQU (R11)(DX*4), Y13
p1full:
	VMOVUPS     (SI)(AX*1), Y0
	VMOVUPS     (DI)(AX*1), Y1
	VFMADD231PS Y15, Y0, Y1
	VBLENDVPS   Y13, Y1, Y12, Y1
	VMOVUPS     Y1, (R8)(AX*1)
	VMAXPS      Y1, Y14, Y14
	ADDQ        $32, AX
	SUBQ        $8, CX
	JG          p1
	VPERM2F128 $1, Y14, Y14, Y0
	VMAXPS     Y0, Y14, Y14
	VPERMILPS  $0x4e, Y14, Y0
	VMAXPS     Y0, Y14, Y14
	VPERMILPS  $0xb1, Y14, Y0
	VMAXPS     Y0, Y14, Y14 // m in every lane

	// Pass 2.
	VBROADCASTSS 16(R12), Y10 // −87
	VXORPS       Y11, Y11, Y11 // Σ e
	XORQ AX, AX
	MOVQ R10, CX
p2:
	VPCMPEQD Y13, Y13, Y13
	CMPQ CX, $8
	JGE  p2full
	MOVQ $8, DX
	SUBQ CX, DX
	VMOVDQU (R11)(DX*4), Y13
p2full:
	VMOVUPS (R8)(AX*1), Y1
	VSUBPS  Y14, Y1, Y1
	VMAXPS  Y10, Y1, Y1        // x = max(a − m, −87)
	VBROADCASTSS 4(R12), Y2
	VBROADCASTSS 0(R12), Y3
	VFMADD231PS Y3, Y1, Y2     // x·log2 e + 1/2
	VROUNDPS    $1, Y2, Y2     // n = floor(·)
	VBROADCASTSS 8(R12), Y3
	VFNMADD231PS Y3, Y2, Y1    // r = x − n·ln2hi
	VBROADCASTSS 12(R12), Y3
	VFNMADD231PS Y3, Y2, Y1    // r −= n·ln2lo
	VBROADCASTSS 24(R12), Y4   // 1/7!
	VBROADCASTSS 28(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VBROADCASTSS 32(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VBROADCASTSS 36(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VBROADCASTSS 40(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VBROADCASTSS 44(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VBROADCASTSS 48(R12), Y3
	VFMADD213PS  Y3, Y1, Y4
	VFMADD213PS  Y3, Y1, Y4    // p = 1 + r(1 + r(1/2 + …))
	VCVTPS2DQ    Y2, Y2
	VPSLLD       $23, Y2, Y2
	VPADDD       Y2, Y4, Y4    // p·2^n
	VANDPS       Y13, Y4, Y4
	VMOVUPS      Y4, (R8)(AX*1)
	VADDPS       Y4, Y11, Y11
	ADDQ         $32, AX
	SUBQ         $8, CX
	JG           p2
	VEXTRACTF128 $1, Y11, X0
	VADDPS       X0, X11, X11
	VHADDPS      X11, X11, X11
	VHADDPS      X11, X11, X11 // s
	VMOVSS       X11, s+48(FP)
	VBROADCASTSS 48(R12), X0
	VDIVSS       X11, X0, X0
	VBROADCASTSS X0, Y10       // 1/s

	// Pass 3.
	VXORPS Y7, Y7, Y7 // Σ R
	VXORPS Y8, Y8, Y8 // Σ R(a − m)
	VXORPS Y9, Y9, Y9 // Σ R·dots
	XORQ AX, AX
	XORQ BX, BX
	MOVQ R10, CX
p3:
	VMOVUPS     (R8)(AX*1), Y1
	VMULPS      Y10, Y1, Y1 // R
	VMOVUPS     Y1, (R8)(AX*1)
	VMOVUPS     (SI)(AX*1), Y0
	VMOVUPS     (DI)(AX*1), Y2
	VFMADD231PS Y15, Y0, Y2
	VSUBPS      Y14, Y2, Y2 // a − m
	VADDPS      Y1, Y7, Y7
	VFMADD231PS Y2, Y1, Y8
	VFMADD231PS Y0, Y1, Y9
	VCVTPS2PD   X1, Y3
	VADDPD      (R9)(BX*1), Y3, Y3
	VMOVUPD     Y3, (R9)(BX*1)
	VEXTRACTF128 $1, Y1, X1
	VCVTPS2PD   X1, Y3
	VADDPD      32(R9)(BX*1), Y3, Y3
	VMOVUPD     Y3, 32(R9)(BX*1)
	ADDQ        $32, AX
	ADDQ        $64, BX
	SUBQ        $8, CX
	JG          p3
	VEXTRACTF128 $1, Y7, X0
	VADDPS       X0, X7, X7
	VHADDPS      X7, X7, X7
	VHADDPS      X7, X7, X7
	VMOVSS       X7, t0+52(FP)
	VEXTRACTF128 $1, Y8, X0
	VADDPS       X0, X8, X8
	VHADDPS      X8, X8, X8
	VHADDPS      X8, X8, X8
	VMOVSS       X8, t1+56(FP)
	VEXTRACTF128 $1, Y9, X0
	VADDPS       X0, X9, X9
	VHADDPS      X9, X9, X9
	VHADDPS      X9, X9, X9
	VMOVSS       X9, t2+60(FP)
	VZEROUPPER
	RET
