//go:build !purego

#include "textflag.h"

DATA scanInf<>+0(SB)/8, $0x7FF0000000000000
GLOBL scanInf<>(SB), RODATA|NOPTR, $8
DATA scanNegInf<>+0(SB)/8, $0xFFF0000000000000
GLOBL scanNegInf<>(SB), RODATA|NOPTR, $8
DATA scanAbs<>+0(SB)/8, $0x7FFFFFFFFFFFFFFF
GLOBL scanAbs<>(SB), RODATA|NOPTR, $8

// func allPositiveFiniteAVX2(x []float64) bool
TEXT ·allPositiveFiniteAVX2(SB), NOSPLIT, $0-25
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	VBROADCASTSD scanInf<>(SB), Y3
	VXORPD Y2, Y2, Y2
	SHRQ $2, CX
	JZ   apfYes

apfLoop:
	VMOVUPD (SI), Y0
	VCMPPD  $0x1E, Y2, Y0, Y1 // x > 0 (GT_OQ: false for NaN)
	VCMPPD  $0x11, Y3, Y0, Y4 // x < +Inf (LT_OQ)
	VANDPD  Y4, Y1, Y1
	VMOVMSKPD Y1, AX
	CMPQ AX, $15
	JNE  apfNo
	ADDQ $32, SI
	DECQ CX
	JNZ  apfLoop

apfYes:
	MOVB $1, ret+24(FP)
	VZEROUPPER
	RET

apfNo:
	MOVB $0, ret+24(FP)
	VZEROUPPER
	RET

// func raiseAndStepAVX2(a, b, x, p []float64) (largest, step float64)
TEXT ·raiseAndStepAVX2(SB), NOSPLIT, $0-112
	MOVQ a_base+0(FP), DI
	MOVQ b_base+24(FP), R9
	MOVQ x_base+48(FP), SI
	MOVQ x_len+56(FP), CX
	MOVQ p_base+72(FP), DX
	VBROADCASTSD scanNegInf<>(SB), Y5 // largest so far, per lane
	VBROADCASTSD scanInf<>(SB), Y6    // smallest positive step, per lane
	VBROADCASTSD scanAbs<>(SB), Y7
	VMOVAPD Y6, Y8                    // +Inf, for the steps that are 0
	VXORPD Y9, Y9, Y9
	SHRQ $2, CX

rasLoop:
	VMOVUPD (SI), Y0
	// MAXPD gives its first source when it is the larger, else its second:
	// x > a ? x : a, as the loop of RaiseAndStep takes it.
	VMAXPD  (DI), Y0, Y1
	VMOVUPD Y1, (DI)
	VMAXPD  (R9), Y0, Y1
	VMOVUPD Y1, (R9)
	VMAXPD  Y5, Y0, Y5
	VSUBPD  (DX), Y0, Y1              // x − p
	VANDPD  Y7, Y1, Y1                // |x − p|
	VCMPPD  $0x1E, Y9, Y1, Y2         // d > 0
	VBLENDVPD Y2, Y1, Y8, Y1          // d where d > 0, else +Inf
	VMINPD  Y6, Y1, Y6
	ADDQ $32, SI
	ADDQ $32, DI
	ADDQ $32, R9
	ADDQ $32, DX
	DECQ CX
	JNZ  rasLoop

	// The four lanes into one: maxima and minima in any order.
	VEXTRACTF128 $1, Y5, X1
	VMAXPD X1, X5, X5
	VPERMILPD $1, X5, X1
	VMAXSD X1, X5, X5
	VMOVSD X5, largest+96(FP)
	VEXTRACTF128 $1, Y6, X1
	VMINPD X1, X6, X6
	VPERMILPD $1, X6, X1
	VMINSD X1, X6, X6
	VMOVSD X6, step+104(FP)
	VZEROUPPER
	RET

// func nextAtOrBelowAVX2(x, a, b []float64) int
TEXT ·nextAtOrBelowAVX2(SB), NOSPLIT, $0-80
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	MOVQ a_base+24(FP), DI
	MOVQ b_base+48(FP), DX
	XORQ BX, BX // index of the block

nabLoop:
	VMOVUPD (SI)(BX*8), Y0
	VCMPPD  $0x12, (DI)(BX*8), Y0, Y1 // x ≤ a (LE_OQ: false for NaN)
	VCMPPD  $0x11, (DX)(BX*8), Y0, Y2 // x < b (LT_OQ)
	VANDPD  Y2, Y1, Y1
	VMOVMSKPD Y1, AX
	TESTQ AX, AX
	JNZ  nabHit
	ADDQ $4, BX
	CMPQ BX, CX
	JB   nabLoop
	MOVQ CX, ret+72(FP)
	VZEROUPPER
	RET

nabHit:
	BSFQ AX, AX // the first lane that holds
	ADDQ BX, AX
	MOVQ AX, ret+72(FP)
	VZEROUPPER
	RET

// func worstOffsetAVX2(a, b, g []float64) float64
//
// Two blocks of four a step, each with its own running maximum, so that
// one VMAXPD does not wait on the other; a last block of four alone.
TEXT ·worstOffsetAVX2(SB), NOSPLIT, $0-80
	MOVQ a_base+0(FP), SI
	MOVQ b_base+24(FP), DI
	MOVQ g_base+48(FP), DX
	MOVQ g_len+56(FP), CX
	VBROADCASTSD scanAbs<>(SB), Y7
	VXORPD Y5, Y5, Y5 // the running maxima, from +0
	VXORPD Y6, Y6, Y6
	XORQ BX, BX
	SUBQ $8, CX
	JB   woLast

woLoop:
	VMOVUPD (SI)(BX*8), Y0
	VSUBPD  (DX)(BX*8), Y0, Y0 // a − g
	VSUBPD  (DI)(BX*8), Y0, Y0 // (a − g) − b
	VANDPD  Y7, Y0, Y0         // its absolute value
	// MAXPD gives its second source when either is NaN: the maximum so
	// far stays when the new value is NaN, as the loop's x > worst keeps it.
	VMAXPD  Y5, Y0, Y5
	VMOVUPD 32(SI)(BX*8), Y1
	VSUBPD  32(DX)(BX*8), Y1, Y1
	VSUBPD  32(DI)(BX*8), Y1, Y1
	VANDPD  Y7, Y1, Y1
	VMAXPD  Y6, Y1, Y6
	ADDQ $8, BX
	CMPQ BX, CX
	JBE  woLoop

woLast:
	ADDQ $8, CX
	CMPQ BX, CX
	JAE  woJoin
	VMOVUPD (SI)(BX*8), Y0
	VSUBPD  (DX)(BX*8), Y0, Y0
	VSUBPD  (DI)(BX*8), Y0, Y0
	VANDPD  Y7, Y0, Y0
	VMAXPD  Y5, Y0, Y5

woJoin:
	// The lanes into one: a maximum in any order (no NaN is left in them).
	VMAXPD Y6, Y5, Y5
	VEXTRACTF128 $1, Y5, X1
	VMAXPD X1, X5, X5
	VPERMILPD $1, X5, X1
	VMAXSD X1, X5, X5
	VMOVSD X5, ret+72(FP)
	VZEROUPPER
	RET

// func maxAbsAVX2(x []float64) float64
//
// worstOffsetAVX2's loop on one slice.
TEXT ·maxAbsAVX2(SB), NOSPLIT, $0-32
	MOVQ x_base+0(FP), SI
	MOVQ x_len+8(FP), CX
	VBROADCASTSD scanAbs<>(SB), Y7
	VXORPD Y5, Y5, Y5
	VXORPD Y6, Y6, Y6
	XORQ BX, BX
	SUBQ $8, CX
	JB   maLast

maLoop:
	VANDPD  (SI)(BX*8), Y7, Y0
	VMAXPD  Y5, Y0, Y5 // a NaN keeps the maximum so far (see worstOffsetAVX2)
	VANDPD  32(SI)(BX*8), Y7, Y1
	VMAXPD  Y6, Y1, Y6
	ADDQ $8, BX
	CMPQ BX, CX
	JBE  maLoop

maLast:
	ADDQ $8, CX
	CMPQ BX, CX
	JAE  maJoin
	VANDPD  (SI)(BX*8), Y7, Y0
	VMAXPD  Y5, Y0, Y5

maJoin:
	VMAXPD Y6, Y5, Y5
	VEXTRACTF128 $1, Y5, X1
	VMAXPD X1, X5, X5
	VPERMILPD $1, X5, X1
	VMAXSD X1, X5, X5
	VMOVSD X5, ret+24(FP)
	VZEROUPPER
	RET
