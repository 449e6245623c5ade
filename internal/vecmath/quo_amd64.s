//go:build !purego

#include "textflag.h"

// func quoAVX2(dst, x, y []float64)
TEXT ·quoAVX2(SB), NOSPLIT, $0-72
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ y_base+48(FP), DX
	MOVQ x_len+32(FP), CX
	SHRQ $2, CX
	JZ   quoDone

quoLoop:
	VMOVUPD (SI), Y0
	VDIVPD  (DX), Y0, Y0 // x / y: the dividend is the first source, as in DIVSD
	VMOVUPD Y0, (DI)
	ADDQ    $32, SI
	ADDQ    $32, DX
	ADDQ    $32, DI
	DECQ    CX
	JNZ     quoLoop

quoDone:
	VZEROUPPER
	RET

// func quoByAVX2(dst, x []float64, c float64)
TEXT ·quoByAVX2(SB), NOSPLIT, $0-56
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ x_len+32(FP), CX
	VBROADCASTSD c+48(FP), Y1
	SHRQ $2, CX
	JZ   quoByDone

quoByLoop:
	VMOVUPD (SI), Y0
	VDIVPD  Y1, Y0, Y0
	VMOVUPD Y0, (DI)
	ADDQ    $32, SI
	ADDQ    $32, DI
	DECQ    CX
	JNZ     quoByLoop

quoByDone:
	VZEROUPPER
	RET
