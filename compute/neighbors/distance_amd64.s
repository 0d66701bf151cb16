#include "textflag.h"

// Squared Euclidean distance kernels with AVX2 and FMA. Each distance of the
// row kernel keeps one 8-lane accumulator, adds (a−b)² for full blocks of 8
// values and then for the last dim mod 8 values (masked loads), and reduces
// the lanes as
//	((l0+l1)+(l2+l3)) + ((l4+l5)+(l6+l7)),
// so every distance of a run is computed alike.

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

// func sqDistRowsAVX2(q, rows *float32, dim int, out *float32, n int)
TEXT ·sqDistRowsAVX2(SB), NOSPLIT, $0-40
	MOVQ q+0(FP), SI
	MOVQ rows+8(FP), DI
	MOVQ dim+16(FP), BX
	MOVQ out+24(FP), R8
	MOVQ n+32(FP), R9

	// Y9: mask of the last dim mod 8 lanes.
	MOVQ    BX, CX
	ANDQ    $7, CX
	LEAQ    tailmask<>(SB), AX
	MOVQ    $8, DX
	SUBQ    CX, DX
	VMOVDQU (AX)(DX*4), Y9

	MOVQ BX, R10
	SHLQ $2, R10 // row stride in bytes
	MOVQ BX, R11
	SHRQ $3, R11 // full blocks of 8 per row

quad:
	CMPQ   R9, $4
	JL     single
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	MOVQ   SI, AX
	MOVQ   DI, R12
	LEAQ   (DI)(R10*2), R13
	ADDQ   R10, R13 // R13: row 3; rows 1 and 2 are R12+R10, R12+2·R10
	MOVQ   R11, CX

qloop:
	TESTQ       CX, CX
	JZ          qtail
	VMOVUPS     (AX), Y4
	VSUBPS      (R12), Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	VSUBPS      (R12)(R10*1), Y4, Y6
	VFMADD231PS Y6, Y6, Y1
	VSUBPS      (R12)(R10*2), Y4, Y7
	VFMADD231PS Y7, Y7, Y2
	VSUBPS      (R13), Y4, Y8
	VFMADD231PS Y8, Y8, Y3
	ADDQ        $32, AX
	ADDQ        $32, R12
	ADDQ        $32, R13
	DECQ        CX
	JMP         qloop

qtail:
	TESTQ       $7, BX
	JZ          qreduce
	VMASKMOVPS  (AX), Y9, Y4
	VMASKMOVPS  (R12), Y9, Y5
	VSUBPS      Y5, Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	LEAQ        (R12)(R10*1), DX
	VMASKMOVPS  (DX), Y9, Y6
	VSUBPS      Y6, Y4, Y6
	VFMADD231PS Y6, Y6, Y1
	LEAQ        (R12)(R10*2), DX
	VMASKMOVPS  (DX), Y9, Y7
	VSUBPS      Y7, Y4, Y7
	VFMADD231PS Y7, Y7, Y2
	VMASKMOVPS  (R13), Y9, Y8
	VSUBPS      Y8, Y4, Y8
	VFMADD231PS Y8, Y8, Y3

qreduce:
	VHADDPS      Y1, Y0, Y4
	VHADDPS      Y3, Y2, Y5
	VHADDPS      Y5, Y4, Y4
	VEXTRACTF128 $1, Y4, X5
	VADDPS       X5, X4, X4
	VMOVUPS      X4, (R8)
	ADDQ         $16, R8
	LEAQ         (DI)(R10*4), DI
	SUBQ         $4, R9
	JMP          quad

single:
	TESTQ  R9, R9
	JZ     done
	VXORPS Y0, Y0, Y0
	MOVQ   SI, AX
	MOVQ   DI, R12
	MOVQ   R11, CX

sloop:
	TESTQ       CX, CX
	JZ          stail
	VMOVUPS     (AX), Y4
	VSUBPS      (R12), Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	ADDQ        $32, AX
	ADDQ        $32, R12
	DECQ        CX
	JMP         sloop

stail:
	TESTQ       $7, BX
	JZ          sreduce
	VMASKMOVPS  (AX), Y9, Y4
	VMASKMOVPS  (R12), Y9, Y5
	VSUBPS      Y5, Y4, Y5
	VFMADD231PS Y5, Y5, Y0

sreduce:
	VHADDPS      Y0, Y0, Y0
	VHADDPS      Y0, Y0, Y0
	VEXTRACTF128 $1, Y0, X1
	VADDPS       X1, X0, X0
	MOVSS        X0, (R8)
	ADDQ         $4, R8
	ADDQ         R10, DI
	DECQ         R9
	JMP          single

done:
	VZEROUPPER
	RET

// func sqDistRowsBelowAVX2(q, rows *float32, dim int, out *float32, n int, tq float32, thr *float32, below *uint8)
//
// sqDistRowsAVX2 with the same arithmetic, which also sets, for each full
// group of four rows g, below[g] bit i when out[4g+i] ≤ tq or
// out[4g+i] ≤ thr[4g+i]; the last n mod 4 rows get distances only.
TEXT ·sqDistRowsBelowAVX2(SB), NOSPLIT, $0-64
	MOVQ q+0(FP), SI
	MOVQ rows+8(FP), DI
	MOVQ dim+16(FP), BX
	MOVQ out+24(FP), R8
	MOVQ n+32(FP), R9
	VBROADCASTSS tq+40(FP), X10

	// Y9: mask of the last dim mod 8 lanes.
	MOVQ    BX, CX
	ANDQ    $7, CX
	LEAQ    tailmask<>(SB), AX
	MOVQ    $8, DX
	SUBQ    CX, DX
	VMOVDQU (AX)(DX*4), Y9

	MOVQ BX, R10
	SHLQ $2, R10 // row stride in bytes
	MOVQ BX, R11
	SHRQ $3, R11 // full blocks of 8 per row
	MOVQ thr+48(FP), DX
	MOVQ below+56(FP), BX // the tail test reads Y9, not dim, from here on

bquad:
	CMPQ   R9, $4
	JL     bsingle
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	MOVQ   SI, AX
	MOVQ   DI, R12
	LEAQ   (DI)(R10*2), R13
	ADDQ   R10, R13 // R13: row 3; rows 1 and 2 are R12+R10, R12+2·R10
	MOVQ   R11, CX

bqloop:
	TESTQ       CX, CX
	JZ          bqtail
	VMOVUPS     (AX), Y4
	VSUBPS      (R12), Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	VSUBPS      (R12)(R10*1), Y4, Y6
	VFMADD231PS Y6, Y6, Y1
	VSUBPS      (R12)(R10*2), Y4, Y7
	VFMADD231PS Y7, Y7, Y2
	VSUBPS      (R13), Y4, Y8
	VFMADD231PS Y8, Y8, Y3
	ADDQ        $32, AX
	ADDQ        $32, R12
	ADDQ        $32, R13
	DECQ        CX
	JMP         bqloop

bqtail:
	VPTEST      Y9, Y9
	JZ          bqreduce
	VMASKMOVPS  (AX), Y9, Y4
	VMASKMOVPS  (R12), Y9, Y5
	VSUBPS      Y5, Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	LEAQ        (R12)(R10*1), AX // q's tail is in Y4 already
	VMASKMOVPS  (AX), Y9, Y6
	VSUBPS      Y6, Y4, Y6
	VFMADD231PS Y6, Y6, Y1
	LEAQ        (R12)(R10*2), AX
	VMASKMOVPS  (AX), Y9, Y7
	VSUBPS      Y7, Y4, Y7
	VFMADD231PS Y7, Y7, Y2
	VMASKMOVPS  (R13), Y9, Y8
	VSUBPS      Y8, Y4, Y8
	VFMADD231PS Y8, Y8, Y3

bqreduce:
	VHADDPS      Y1, Y0, Y4
	VHADDPS      Y3, Y2, Y5
	VHADDPS      Y5, Y4, Y4
	VEXTRACTF128 $1, Y4, X5
	VADDPS       X5, X4, X4
	VMOVUPS      X4, (R8)
	VCMPPS       $2, X10, X4, X5 // out ≤ tq
	VMOVUPS      (DX), X6
	VCMPPS       $2, X6, X4, X6  // out ≤ thr
	VORPS        X5, X6, X6
	VMOVMSKPS    X6, AX
	MOVB         AX, (BX)
	ADDQ         $1, BX
	ADDQ         $16, DX
	ADDQ         $16, R8
	LEAQ         (DI)(R10*4), DI
	SUBQ         $4, R9
	JMP          bquad

bsingle:
	TESTQ  R9, R9
	JZ     bdone
	VXORPS Y0, Y0, Y0
	MOVQ   SI, AX
	MOVQ   DI, R12
	MOVQ   R11, CX

bsloop:
	TESTQ       CX, CX
	JZ          bstail
	VMOVUPS     (AX), Y4
	VSUBPS      (R12), Y4, Y5
	VFMADD231PS Y5, Y5, Y0
	ADDQ        $32, AX
	ADDQ        $32, R12
	DECQ        CX
	JMP         bsloop

bstail:
	VPTEST      Y9, Y9
	JZ          bsreduce
	VMASKMOVPS  (AX), Y9, Y4
	VMASKMOVPS  (R12), Y9, Y5
	VSUBPS      Y5, Y4, Y5
	VFMADD231PS Y5, Y5, Y0

bsreduce:
	VHADDPS      Y0, Y0, Y0
	VHADDPS      Y0, Y0, Y0
	VEXTRACTF128 $1, Y0, X1
	VADDPS       X1, X0, X0
	MOVSS        X0, (R8)
	ADDQ         $4, R8
	ADDQ         R10, DI
	DECQ         R9
	JMP          bsingle

bdone:
	VZEROUPPER
	RET

// func sqDistTileAVX2(q *float32, dim int, tile, thr, out *float32, mask *uint32)
//
// Four query rows (q, stride dim) against a tile of 16 reference rows stored
// transposed (element (j, r) at tile[16·j+r]). Lane r of accumulator 2i+h
// sums (q_i[j] − ref_{8h+r}[j])² over j in order. out receives the 4×16
// distances row by row; mask[i] bit r is set when distance (i, r) ≤ thr[i].
TEXT ·sqDistTileAVX2(SB), NOSPLIT, $0-48
	MOVQ q+0(FP), AX
	MOVQ dim+8(FP), CX
	MOVQ tile+16(FP), DI
	MOVQ thr+24(FP), R8
	MOVQ out+32(FP), R9
	MOVQ mask+40(FP), R10
	MOVQ CX, R11
	SHLQ $2, R11 // query stride in bytes
	LEAQ (AX)(R11*2), BX // query row 2
	VXORPS Y0, Y0, Y0
	VXORPS Y1, Y1, Y1
	VXORPS Y2, Y2, Y2
	VXORPS Y3, Y3, Y3
	VXORPS Y4, Y4, Y4
	VXORPS Y5, Y5, Y5
	VXORPS Y6, Y6, Y6
	VXORPS Y7, Y7, Y7

tloop:
	VMOVUPS      (DI), Y8
	VMOVUPS      32(DI), Y9
	VBROADCASTSS (AX), Y10
	VSUBPS       Y8, Y10, Y11
	VFMADD231PS  Y11, Y11, Y0
	VSUBPS       Y9, Y10, Y12
	VFMADD231PS  Y12, Y12, Y1
	VBROADCASTSS (AX)(R11*1), Y10
	VSUBPS       Y8, Y10, Y11
	VFMADD231PS  Y11, Y11, Y2
	VSUBPS       Y9, Y10, Y12
	VFMADD231PS  Y12, Y12, Y3
	VBROADCASTSS (BX), Y10
	VSUBPS       Y8, Y10, Y11
	VFMADD231PS  Y11, Y11, Y4
	VSUBPS       Y9, Y10, Y12
	VFMADD231PS  Y12, Y12, Y5
	VBROADCASTSS (BX)(R11*1), Y10
	VSUBPS       Y8, Y10, Y11
	VFMADD231PS  Y11, Y11, Y6
	VSUBPS       Y9, Y10, Y12
	VFMADD231PS  Y12, Y12, Y7
	ADDQ         $4, AX
	ADDQ         $4, BX
	ADDQ         $64, DI
	DECQ         CX
	JNZ          tloop

	VMOVUPS Y0, (R9)
	VMOVUPS Y1, 32(R9)
	VMOVUPS Y2, 64(R9)
	VMOVUPS Y3, 96(R9)
	VMOVUPS Y4, 128(R9)
	VMOVUPS Y5, 160(R9)
	VMOVUPS Y6, 192(R9)
	VMOVUPS Y7, 224(R9)

	// Compare with the thresholds (predicate 2: less or equal).
	VBROADCASTSS (R8), Y10
	VCMPPS       $2, Y10, Y0, Y11
	VCMPPS       $2, Y10, Y1, Y12
	VMOVMSKPS    Y11, DX
	VMOVMSKPS    Y12, R12
	SHLL         $8, R12
	ORL          R12, DX
	MOVL         DX, (R10)
	VBROADCASTSS 4(R8), Y10
	VCMPPS       $2, Y10, Y2, Y11
	VCMPPS       $2, Y10, Y3, Y12
	VMOVMSKPS    Y11, DX
	VMOVMSKPS    Y12, R12
	SHLL         $8, R12
	ORL          R12, DX
	MOVL         DX, 4(R10)
	VBROADCASTSS 8(R8), Y10
	VCMPPS       $2, Y10, Y4, Y11
	VCMPPS       $2, Y10, Y5, Y12
	VMOVMSKPS    Y11, DX
	VMOVMSKPS    Y12, R12
	SHLL         $8, R12
	ORL          R12, DX
	MOVL         DX, 8(R10)
	VBROADCASTSS 12(R8), Y10
	VCMPPS       $2, Y10, Y6, Y11
	VCMPPS       $2, Y10, Y7, Y12
	VMOVMSKPS    Y11, DX
	VMOVMSKPS    Y12, R12
	SHLL         $8, R12
	ORL          R12, DX
	MOVL         DX, 12(R10)
	VZEROUPPER
	RET

// func containsAVX2(ids *int32, n int, q int32) bool
//
// Compares q with every id, eight at a time, the last n mod 8 through a
// masked load whose masked-out lanes are then ignored.
TEXT ·containsAVX2(SB), NOSPLIT, $0-25
	MOVQ         ids+0(FP), SI
	MOVQ         n+8(FP), CX
	MOVL         q+16(FP), AX
	VMOVD        AX, X0
	VPBROADCASTD X0, Y0
	VPXOR        Y1, Y1, Y1

cfour:
	CMPQ      CX, $32
	JL        cone
	VPCMPEQD  (SI), Y0, Y2
	VPCMPEQD  32(SI), Y0, Y3
	VPCMPEQD  64(SI), Y0, Y4
	VPCMPEQD  96(SI), Y0, Y5
	VPOR      Y2, Y3, Y3
	VPOR      Y4, Y5, Y5
	VPOR      Y3, Y1, Y1
	VPOR      Y5, Y1, Y1
	ADDQ      $128, SI
	SUBQ      $32, CX
	JMP       cfour

cone:
	CMPQ     CX, $8
	JL       ctail
	VPCMPEQD (SI), Y0, Y2
	VPOR     Y2, Y1, Y1
	ADDQ     $32, SI
	SUBQ     $8, CX
	JMP      cone

ctail:
	TESTQ      CX, CX
	JZ         cdone
	LEAQ       tailmask<>(SB), AX
	MOVQ       $8, DX
	SUBQ       CX, DX
	VMOVDQU    (AX)(DX*4), Y3
	VPMASKMOVD (SI), Y3, Y2
	VPCMPEQD   Y2, Y0, Y2
	VPAND      Y3, Y2, Y2
	VPOR       Y2, Y1, Y1

cdone:
	VPTEST     Y1, Y1
	SETNE      ret+24(FP)
	VZEROUPPER
	RET
