//go:build !purego

#include "textflag.h"

// rotatedPanels forms X·V four rows at a time for rotatedRows (see
// rotated_amd64.go). Each lane of a ymm register is one row's entry: for
// column j the sum starts at +0 (VXORPD) and adds x_il·v_lj for l = 0 … k−1
// in order, the product rounded (VMULPD) before it is added (VADDPD), never
// fused: the scalar sum of rotatedRows, bit for bit. The clipped entries
// are those whose sign bit is set (VPCMPGTQ of +0 with the sum taken as
// integers) in a column whose mask is all ones: minus keeps the sum there
// and +0 elsewhere (VANDPD), as clipNeg does; VMOVMSKPD gives the four rows'
// bits, spread (a table of 16 words) puts row r's bit at 16r, and it is
// shifted to column j and gathered in BX, whose four 16-bit quarters are
// the rows' words of clipped columns at the end of the panel (k ≤ 16).
//
// Arguments: out, minus (row-major, rows of k entries; the first four rows
// of this call), clipped (a word per row), xp (panels: four rows' entry l
// as four doubles at xp + 32·l, 32·k bytes a panel), vt (Vᵀ, k × k: column
// j of V contiguous), nnm (k masks), spread, k, panels.
//
// Registers: DI out, SI minus, R8 clipped (the panel's four words), R9
// xp (the panel), R10 vt, R11 nnm, R12 spread, R14 the end of clipped,
// R15 8k (a row in bytes); per panel BX the words, CX column j, DX the
// walk through vt (column j at the start of each column), AX the walk
// through the panel and scratch, R13 the terms left and scratch.

// func rotatedPanels(out, minus *float64, clipped *uint64, xp, vt *float64, nnm, spread *uint64, k, panels int)
TEXT ·rotatedPanels(SB), NOSPLIT, $0-72
	MOVQ out+0(FP), DI
	MOVQ minus+8(FP), SI
	MOVQ clipped+16(FP), R8
	MOVQ xp+24(FP), R9
	MOVQ vt+32(FP), R10
	MOVQ nnm+40(FP), R11
	MOVQ spread+48(FP), R12
	MOVQ k+56(FP), R15
	SHLQ $3, R15
	MOVQ panels+64(FP), R14
	TESTQ R14, R14
	JZ   done
	SHLQ $5, R14
	ADDQ R8, R14

panel:
	XORQ BX, BX
	XORQ CX, CX
	MOVQ R10, DX

column:
	VXORPD Y0, Y0, Y0
	MOVQ   R9, AX
	MOVQ   R15, R13
	SHRQ   $3, R13

term:
	VBROADCASTSD (DX), Y1
	VMULPD       (AX), Y1, Y1
	VADDPD       Y1, Y0, Y0
	ADDQ         $32, AX
	ADDQ         $8, DX
	DECQ         R13
	JNZ          term

	// Clipped lanes: sign bit set and the column non-negative.
	VPBROADCASTQ (R11)(CX*8), Y2
	VPXOR        Y3, Y3, Y3
	VPCMPGTQ     Y0, Y3, Y3
	VPAND        Y2, Y3, Y3
	VANDPD       Y0, Y3, Y4
	VMOVMSKPD    Y3, AX
	MOVQ         (R12)(AX*8), AX
	SHLQ         CX, AX
	ORQ          AX, BX

	// Lane r to row r, column j of out and minus.
	LEAQ         (DI)(CX*8), AX
	LEAQ         (SI)(CX*8), R13
	VMOVSD       X0, (AX)
	VMOVSD       X4, (R13)
	VMOVHPD      X0, (AX)(R15*1)
	VMOVHPD      X4, (R13)(R15*1)
	LEAQ         (AX)(R15*2), AX
	LEAQ         (R13)(R15*2), R13
	VEXTRACTF128 $1, Y0, X5
	VEXTRACTF128 $1, Y4, X6
	VMOVSD       X5, (AX)
	VMOVSD       X6, (R13)
	VMOVHPD      X5, (AX)(R15*1)
	VMOVHPD      X6, (R13)(R15*1)

	INCQ CX
	MOVQ R15, AX
	SHRQ $3, AX
	CMPQ CX, AX
	JLT  column

	// The four rows' words of clipped columns.
	MOVQ BX, AX
	ANDQ $0xffff, AX
	MOVQ AX, (R8)
	MOVQ BX, AX
	SHRQ $16, AX
	ANDQ $0xffff, AX
	MOVQ AX, 8(R8)
	MOVQ BX, AX
	SHRQ $32, AX
	ANDQ $0xffff, AX
	MOVQ AX, 16(R8)
	SHRQ $48, BX
	MOVQ BX, 24(R8)

	// The next four rows.
	LEAQ (DI)(R15*4), DI
	LEAQ (SI)(R15*4), SI
	LEAQ (R9)(R15*4), R9
	ADDQ $32, R8
	CMPQ R8, R14
	JLT  panel

done:
	VZEROUPPER
	RET
