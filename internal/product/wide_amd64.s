//go:build !purego

#include "textflag.h"

// The register tiles of wide_amd64.go: four output rows by twelve, eight or
// four output columns of accumulators in ymm registers (four doubles each),
// the inner index running n steps. Step l adds a_r(l)·b(l) to row r: a_r(l)
// is broadcast to the four lanes, b(l) is the row of four to twelve entries
// of the other factor, and the product is rounded (VMULPD) before it is
// added (VADDPD): never a fused multiply–add, whose single rounding would
// change the bits. Each lane is one output entry, so each entry is the same
// scalar sum, l ascending, as the Go loops form it.
//
// Arguments (strides in float64 entries, turned into bytes here):
//   o, so: the 4 × w block of sums, row r at o + r·so, read then written;
//   a, ar, al: a_r(l) at a + r·ar + l·al;
//   b, bl: b(l) at b + l·bl, w entries;
//   n: number of steps (n ≥ 0);
//   pf: bytes ahead of a_r(l) whose lines are prefetched at step l
//   (PREFETCHT0 is a hint: it changes no result and never faults).
// Loads and stores are unaligned (VMOVUPD, memory operands of VEX
// instructions), so any stride and offset work.

// Registers common to the three tiles:
//   DI o, R11 so, R13 3·so; SI a (advanced by al each step), R8 ar,
//   R12 3·ar, R9 al; DX b (advanced by bl), R10 bl; CX steps left;
//   BX a + pf (advanced with SI); all strides in bytes.

// ADD1 adds the broadcast Y14 times src to acc through Y15.
#define ADD1(src, acc) \
	VMULPD src, Y14, Y15; \
	VADDPD Y15, acc, acc

// func tile4x12(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)
//
// Y0–Y11 sums (row r in Y3r–Y3r+2), Y12–Y13 the first eight entries of
// b(l) (the last four are a memory operand), Y14 a_r(l), Y15 a product.
TEXT ·tile4x12(SB), NOSPLIT, $0-72
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVUPD (DI), Y0
	VMOVUPD 32(DI), Y1
	VMOVUPD 64(DI), Y2
	VMOVUPD (DI)(R11*1), Y3
	VMOVUPD 32(DI)(R11*1), Y4
	VMOVUPD 64(DI)(R11*1), Y5
	VMOVUPD (DI)(R11*2), Y6
	VMOVUPD 32(DI)(R11*2), Y7
	VMOVUPD 64(DI)(R11*2), Y8
	VMOVUPD (DI)(R13*1), Y9
	VMOVUPD 32(DI)(R13*1), Y10
	VMOVUPD 64(DI)(R13*1), Y11
	TESTQ CX, CX
	JLE   done12

loop12:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMOVUPD (DX), Y12
	VMOVUPD 32(DX), Y13
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	ADD1(Y13, Y1)
	ADD1(64(DX), Y2)
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y3)
	ADD1(Y13, Y4)
	ADD1(64(DX), Y5)
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y6)
	ADD1(Y13, Y7)
	ADD1(64(DX), Y8)
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y9)
	ADD1(Y13, Y10)
	ADD1(64(DX), Y11)
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loop12

done12:
	VMOVUPD Y0, (DI)
	VMOVUPD Y1, 32(DI)
	VMOVUPD Y2, 64(DI)
	VMOVUPD Y3, (DI)(R11*1)
	VMOVUPD Y4, 32(DI)(R11*1)
	VMOVUPD Y5, 64(DI)(R11*1)
	VMOVUPD Y6, (DI)(R11*2)
	VMOVUPD Y7, 32(DI)(R11*2)
	VMOVUPD Y8, 64(DI)(R11*2)
	VMOVUPD Y9, (DI)(R13*1)
	VMOVUPD Y10, 32(DI)(R13*1)
	VMOVUPD Y11, 64(DI)(R13*1)
	VZEROUPPER
	RET

// func tile4x8(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)
//
// Y0–Y7 sums (row r in Y2r, Y2r+1), Y12–Y13 b(l).
TEXT ·tile4x8(SB), NOSPLIT, $0-72
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVUPD (DI), Y0
	VMOVUPD 32(DI), Y1
	VMOVUPD (DI)(R11*1), Y2
	VMOVUPD 32(DI)(R11*1), Y3
	VMOVUPD (DI)(R11*2), Y4
	VMOVUPD 32(DI)(R11*2), Y5
	VMOVUPD (DI)(R13*1), Y6
	VMOVUPD 32(DI)(R13*1), Y7
	TESTQ CX, CX
	JLE   done8

loop8:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMOVUPD (DX), Y12
	VMOVUPD 32(DX), Y13
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	ADD1(Y13, Y1)
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y2)
	ADD1(Y13, Y3)
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y4)
	ADD1(Y13, Y5)
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y6)
	ADD1(Y13, Y7)
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loop8

done8:
	VMOVUPD Y0, (DI)
	VMOVUPD Y1, 32(DI)
	VMOVUPD Y2, (DI)(R11*1)
	VMOVUPD Y3, 32(DI)(R11*1)
	VMOVUPD Y4, (DI)(R11*2)
	VMOVUPD Y5, 32(DI)(R11*2)
	VMOVUPD Y6, (DI)(R13*1)
	VMOVUPD Y7, 32(DI)(R13*1)
	VZEROUPPER
	RET

// func tile4x4(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)
//
// Y0–Y3 sums (row r in Yr), Y12 b(l).
TEXT ·tile4x4(SB), NOSPLIT, $0-72
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVUPD (DI), Y0
	VMOVUPD (DI)(R11*1), Y1
	VMOVUPD (DI)(R11*2), Y2
	VMOVUPD (DI)(R13*1), Y3
	TESTQ CX, CX
	JLE   done4

loop4:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMOVUPD (DX), Y12
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y1)
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y2)
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y3)
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loop4

done4:
	VMOVUPD Y0, (DI)
	VMOVUPD Y1, (DI)(R11*1)
	VMOVUPD Y2, (DI)(R11*2)
	VMOVUPD Y3, (DI)(R13*1)
	VZEROUPPER
	RET

// func tile4x4m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)
//
// tile4x4 for the last one to three columns: only the lanes whose word of
// mask has its top bit set are loaded and stored (VMASKMOVPD, which
// neither reads nor faults on the others), so neither b nor o needs a
// padded copy. Y0–Y3 sums, Y12 b(l), Y13 the mask.
TEXT ·tile4x4m(SB), NOSPLIT, $0-80
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	MOVQ mask+72(FP), AX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVDQU (AX), Y13
	VMASKMOVPD (DI), Y13, Y0
	VMASKMOVPD (DI)(R11*1), Y13, Y1
	VMASKMOVPD (DI)(R11*2), Y13, Y2
	VMASKMOVPD (DI)(R13*1), Y13, Y3
	TESTQ CX, CX
	JLE   donem

loopm:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMASKMOVPD (DX), Y13, Y12
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y1)
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y2)
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y3)
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loopm

donem:
	VMASKMOVPD Y0, Y13, (DI)
	VMASKMOVPD Y1, Y13, (DI)(R11*1)
	VMASKMOVPD Y2, Y13, (DI)(R11*2)
	VMASKMOVPD Y3, Y13, (DI)(R13*1)
	VZEROUPPER
	RET

// func tile4x12m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)
//
// tile4x12 for 9 to 11 columns: the third group of four is loaded and
// stored under mask. Y0–Y11 sums, Y12 the first four entries of b(l), the
// next four a memory operand, Y13 the last group (masked load, the mask
// read again each step for want of a register), Y14 a_r(l), Y15 a product;
// the last product of a row is formed in Y14.
TEXT ·tile4x12m(SB), NOSPLIT, $0-80
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	MOVQ mask+72(FP), AX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVDQU (AX), Y15
	VMOVUPD (DI), Y0
	VMOVUPD 32(DI), Y1
	VMASKMOVPD 64(DI), Y15, Y2
	VMOVUPD (DI)(R11*1), Y3
	VMOVUPD 32(DI)(R11*1), Y4
	VMASKMOVPD 64(DI)(R11*1), Y15, Y5
	VMOVUPD (DI)(R11*2), Y6
	VMOVUPD 32(DI)(R11*2), Y7
	VMASKMOVPD 64(DI)(R11*2), Y15, Y8
	VMOVUPD (DI)(R13*1), Y9
	VMOVUPD 32(DI)(R13*1), Y10
	VMASKMOVPD 64(DI)(R13*1), Y15, Y11
	TESTQ CX, CX
	JLE   done12m

loop12m:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMOVUPD (DX), Y12
	VMOVDQU (AX), Y13
	VMASKMOVPD 64(DX), Y13, Y13
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	ADD1(32(DX), Y1)
	VMULPD Y13, Y14, Y14
	VADDPD Y14, Y2, Y2
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y3)
	ADD1(32(DX), Y4)
	VMULPD Y13, Y14, Y14
	VADDPD Y14, Y5, Y5
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y6)
	ADD1(32(DX), Y7)
	VMULPD Y13, Y14, Y14
	VADDPD Y14, Y8, Y8
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y9)
	ADD1(32(DX), Y10)
	VMULPD Y13, Y14, Y14
	VADDPD Y14, Y11, Y11
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loop12m

done12m:
	VMOVDQU (AX), Y15
	VMOVUPD Y0, (DI)
	VMOVUPD Y1, 32(DI)
	VMASKMOVPD Y2, Y15, 64(DI)
	VMOVUPD Y3, (DI)(R11*1)
	VMOVUPD Y4, 32(DI)(R11*1)
	VMASKMOVPD Y5, Y15, 64(DI)(R11*1)
	VMOVUPD Y6, (DI)(R11*2)
	VMOVUPD Y7, 32(DI)(R11*2)
	VMASKMOVPD Y8, Y15, 64(DI)(R11*2)
	VMOVUPD Y9, (DI)(R13*1)
	VMOVUPD Y10, 32(DI)(R13*1)
	VMASKMOVPD Y11, Y15, 64(DI)(R13*1)
	VZEROUPPER
	RET

// func tile4x8m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)
//
// tile4x8 for 5 to 7 columns: the second group of four is loaded and
// stored under mask. Y0–Y7 sums, Y12 the first four entries of b(l), Y13
// the last group (masked load), Y11 the mask.
TEXT ·tile4x8m(SB), NOSPLIT, $0-80
	MOVQ o+0(FP), DI
	MOVQ so+8(FP), R11
	MOVQ a+16(FP), SI
	MOVQ ar+24(FP), R8
	MOVQ al+32(FP), R9
	MOVQ b+40(FP), DX
	MOVQ bl+48(FP), R10
	MOVQ n+56(FP), CX
	MOVQ pf+64(FP), BX
	MOVQ mask+72(FP), AX
	SHLQ $3, R11
	SHLQ $3, R8
	SHLQ $3, R9
	SHLQ $3, R10
	LEAQ (R8)(R8*2), R12
	LEAQ (R11)(R11*2), R13
	LEAQ (SI)(BX*1), BX
	VMOVDQU (AX), Y11
	VMOVUPD (DI), Y0
	VMASKMOVPD 32(DI), Y11, Y1
	VMOVUPD (DI)(R11*1), Y2
	VMASKMOVPD 32(DI)(R11*1), Y11, Y3
	VMOVUPD (DI)(R11*2), Y4
	VMASKMOVPD 32(DI)(R11*2), Y11, Y5
	VMOVUPD (DI)(R13*1), Y6
	VMASKMOVPD 32(DI)(R13*1), Y11, Y7
	TESTQ CX, CX
	JLE   done8m

loop8m:
	PREFETCHT0 (BX)
	PREFETCHT0 (BX)(R8*1)
	PREFETCHT0 (BX)(R8*2)
	PREFETCHT0 (BX)(R12*1)
	VMOVUPD (DX), Y12
	VMASKMOVPD 32(DX), Y11, Y13
	VBROADCASTSD (SI), Y14
	ADD1(Y12, Y0)
	ADD1(Y13, Y1)
	VBROADCASTSD (SI)(R8*1), Y14
	ADD1(Y12, Y2)
	ADD1(Y13, Y3)
	VBROADCASTSD (SI)(R8*2), Y14
	ADD1(Y12, Y4)
	ADD1(Y13, Y5)
	VBROADCASTSD (SI)(R12*1), Y14
	ADD1(Y12, Y6)
	ADD1(Y13, Y7)
	ADDQ R9, SI
	ADDQ R9, BX
	ADDQ R10, DX
	DECQ CX
	JNZ  loop8m

done8m:
	VMOVUPD Y0, (DI)
	VMASKMOVPD Y1, Y11, 32(DI)
	VMOVUPD Y2, (DI)(R11*1)
	VMASKMOVPD Y3, Y11, 32(DI)(R11*1)
	VMOVUPD Y4, (DI)(R11*2)
	VMASKMOVPD Y5, Y11, 32(DI)(R11*2)
	VMOVUPD Y6, (DI)(R13*1)
	VMASKMOVPD Y7, Y11, 32(DI)(R13*1)
	VZEROUPPER
	RET
