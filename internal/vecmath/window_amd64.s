//go:build !purego

#include "textflag.h"

DATA winAbs<>+0(SB)/8, $0x7FFFFFFFFFFFFFFF
GLOBL winAbs<>(SB), RODATA|NOPTR, $8
DATA winTwo<>+0(SB)/8, $0x4000000000000000
GLOBL winTwo<>(SB), RODATA|NOPTR, $8
DATA winInf<>+0(SB)/8, $0x7FF0000000000000
GLOBL winInf<>(SB), RODATA|NOPTR, $8

// func absSecondDiffsAVX512(dst, x []float64)
//
// dst[k] = |(x[k+2] − 2·x[k+1]) + x[k]|, the operations and their order of
// Go's expression, eight lanes at a time; the absolute value clears the
// sign bit, as math.Abs does.
TEXT ·absSecondDiffsAVX512(SB), NOSPLIT, $0-48
	MOVQ dst_base+0(FP), DI
	MOVQ dst_len+8(FP), CX
	MOVQ x_base+24(FP), SI
	VPBROADCASTQ winAbs<>(SB), Z4
	VBROADCASTSD winTwo<>(SB), Z5
	SHRQ $3, CX

sdLoop:
	VMULPD  8(SI), Z5, Z1  // 2·x[k+1]
	VMOVUPD 16(SI), Z2
	VSUBPD  Z1, Z2, Z2     // x[k+2] − 2·x[k+1]
	VADDPD  (SI), Z2, Z2   // + x[k]
	VPANDQ  Z4, Z2, Z2
	VMOVUPD Z2, (DI)
	ADDQ $64, SI
	ADDQ $64, DI
	DECQ CX
	JNZ  sdLoop

	VZEROUPPER
	RET

// func gatherAVX512(c []float64, lob, hib uint64, pick []float64) (below, in int, ok bool)
//
// Z5 lob, Z6 hib, Z7 the largest pattern met, Z9 the lanes' counts below
// the window, Z10 ones; R9 in, R10 the most values kept (len(pick) − 8).
// Each eight values: the lanes below the window counted, those in it
// packed to the low lanes (VCOMPRESSPD, register to register) and the
// eight lanes stored at pick[min(in, R10)], then in raised by their count:
// no branch on the values, and nothing written past pick's end.
TEXT ·gatherAVX512(SB), NOSPLIT, $0-81
	MOVQ c_base+0(FP), SI
	MOVQ c_len+8(FP), R11
	MOVQ pick_base+40(FP), DI
	MOVQ pick_len+48(FP), R10
	SUBQ $8, R10
	VPBROADCASTQ lob+24(FP), Z5
	VPBROADCASTQ hib+32(FP), Z6
	VPXORQ Z7, Z7, Z7
	VPXORQ Z9, Z9, Z9
	VPTERNLOGQ $0xff, Z10, Z10, Z10 // every bit set: −1 in each lane
	XORQ R9, R9
	SHRQ $3, R11

gLoop:
	VMOVDQU64   (SI), Z0
	VPMAXUQ     Z0, Z7, Z7
	VPCMPUQ     $1, Z5, Z0, K1     // u < lob
	VPSUBQ      Z10, Z9, K1, Z9    // count −(−1) where below
	VPCMPUQ     $5, Z5, Z0, K2     // u ≥ lob
	VPCMPUQ     $2, Z6, Z0, K2, K3 // and u ≤ hib
	VCOMPRESSPD Z0, K3, Z1
	KMOVW       K3, AX
	POPCNTL     AX, AX
	MOVQ        R9, BX
	CMPQ        BX, R10
	CMOVQHI     R10, BX
	VMOVUPD     Z1, (DI)(BX*8)
	ADDQ        AX, R9
	ADDQ        $64, SI
	DECQ        R11
	JNZ         gLoop

	CMPQ R9, R10
	JHI  gFail
	// A pattern above +Inf's is a negative value, −0 or NaN.
	VPBROADCASTQ winInf<>(SB), Z8
	VPCMPUQ $6, Z8, Z7, K5 // largest > +Inf's
	KMOVW   K5, AX
	TESTL   AX, AX
	JNZ     gFail
	// The lanes' counts added.
	VEXTRACTI64X4 $1, Z9, Y1
	VPADDQ        Y1, Y9, Y9
	VEXTRACTI128  $1, Y9, X1
	VPADDQ        X1, X9, X9
	VPSHUFD       $0x4e, X9, X1
	VPADDQ        X1, X9, X9
	VMOVQ         X9, R8
	MOVQ R8, below+64(FP)
	MOVQ R9, in+72(FP)
	MOVB $1, ok+80(FP)
	VZEROUPPER
	RET

gFail:
	MOVQ $0, below+64(FP)
	MOVQ $0, in+72(FP)
	MOVB $0, ok+80(FP)
	VZEROUPPER
	RET
