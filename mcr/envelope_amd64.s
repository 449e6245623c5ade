//go:build !purego

#include "textflag.h"

// envelopePass4 is one iteration of lowerEnvelope4's clipping (see
// envelope_amd64.go) over the first 4·blocks points, four points at a time,
// bit for bit the scalar loop:
//
//   - the fit of four points, one per lane: a sum started at +0 (VXORPD)
//     that adds q_a·c_a for a = 0 … 3 in order, each product rounded
//     (VMULPD) before it is added (VADDPD), never fused; qt holds the basis
//     block-transposed (16 doubles a block: q_0 of its four points, then
//     q_1, q_2, q_3);
//   - the clip: y = fit where fit < y (VMINPD returns its first source
//     exactly when it is less than the second, as Go's `if v < y`, NaN and
//     signed zeros included), and any lane where it happened sets the
//     changed mask (VCMPPD less-than, ordered);
//   - the next coefficients: a running sum per coefficient, one lane each,
//     adding q_i·y_i (the basis row q_i, row-major in q, times the clipped
//     y_i broadcast to four lanes) point by point in order: the scalar
//     loop's four sums in its order.
//
// Registers: DI y, SI fit, R8 qt, R9 q, CX blocks left, DX next; Y0–Y3 the
// coefficients broadcast, Y4 the running sums, Y5 the changed mask, Y15 +0.

// func envelopePass4(y, fit, qt, q *float64, blocks int, c, next *[4]float64) bool
TEXT ·envelopePass4(SB), NOSPLIT, $0-57
	MOVQ y+0(FP), DI
	MOVQ fit+8(FP), SI
	MOVQ qt+16(FP), R8
	MOVQ q+24(FP), R9
	MOVQ blocks+32(FP), CX
	MOVQ c+40(FP), AX
	MOVQ next+48(FP), DX
	VBROADCASTSD 0(AX), Y0
	VBROADCASTSD 8(AX), Y1
	VBROADCASTSD 16(AX), Y2
	VBROADCASTSD 24(AX), Y3
	VXORPD Y4, Y4, Y4
	VXORPD Y5, Y5, Y5
	VXORPD Y15, Y15, Y15
	TESTQ CX, CX
	JZ done

loop:
	VMULPD 0(R8), Y0, Y6
	VADDPD Y6, Y15, Y6
	VMULPD 32(R8), Y1, Y7
	VADDPD Y7, Y6, Y6
	VMULPD 64(R8), Y2, Y7
	VADDPD Y7, Y6, Y6
	VMULPD 96(R8), Y3, Y7
	VADDPD Y7, Y6, Y6
	VMOVUPD Y6, 0(SI)
	VMOVUPD 0(DI), Y8
	VCMPPD $1, Y8, Y6, Y9
	VORPD Y9, Y5, Y5
	VMINPD Y8, Y6, Y10
	VMOVUPD Y10, 0(DI)

	// each clipped y_i broadcast from where it was just stored (a load,
	// where taking it from Y10 was a shuffle: about 3 % faster)
	VBROADCASTSD 0(DI), Y11
	VMULPD 0(R9), Y11, Y11
	VADDPD Y11, Y4, Y4
	VBROADCASTSD 8(DI), Y12
	VMULPD 32(R9), Y12, Y12
	VADDPD Y12, Y4, Y4
	VBROADCASTSD 16(DI), Y13
	VMULPD 64(R9), Y13, Y13
	VADDPD Y13, Y4, Y4
	VBROADCASTSD 24(DI), Y14
	VMULPD 96(R9), Y14, Y14
	VADDPD Y14, Y4, Y4

	ADDQ $32, DI
	ADDQ $32, SI
	ADDQ $128, R8
	ADDQ $128, R9
	DECQ CX
	JNZ loop

done:
	VMOVUPD Y4, 0(DX)
	VPTEST Y5, Y5
	SETNE ret+56(FP)
	VZEROUPPER
	RET
