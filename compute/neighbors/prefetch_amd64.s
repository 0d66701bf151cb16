#include "textflag.h"

// func prefetchRows(base unsafe.Pointer, ids []int32, stride int)
TEXT ·prefetchRows(SB), NOSPLIT, $0-40
	MOVQ base+0(FP), SI
	MOVQ ids_base+8(FP), DI
	MOVQ ids_len+16(FP), CX
	MOVQ stride+32(FP), R8
	LEAQ -1(R8), R9 // offset of a row's last byte

next:
	TESTQ   CX, CX
	JZ      done
	MOVLQSX (DI), AX
	IMULQ   R8, AX
	ADDQ    SI, AX // AX: start of the row
	XORQ    DX, DX

line:
	PREFETCHT0 (AX)(DX*1)
	ADDQ       $64, DX
	CMPQ       DX, R8
	JL         line
	PREFETCHT0 (AX)(R9*1)
	ADDQ       $4, DI
	DECQ       CX
	JMP        next

done:
	RET

// func prefetchSpan(p unsafe.Pointer, n int)
TEXT ·prefetchSpan(SB), NOSPLIT, $0-16
	MOVQ p+0(FP), SI
	MOVQ n+8(FP), CX
	LEAQ -1(SI)(CX*1), DI // last byte

span:
	PREFETCHT0 (SI)
	ADDQ       $64, SI
	CMPQ       SI, DI
	JL         span
	PREFETCHT0 (DI)
	RET
