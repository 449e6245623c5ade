//go:build !purego

#include "textflag.h"

// Four copies of each constant, read as 256-bit memory operands. The values
// and their bits are those of math/log_amd64.s and math/log.go.
#define CONST4(name, bits) \
	DATA name<>+0(SB)/8, $bits \
	DATA name<>+8(SB)/8, $bits \
	DATA name<>+16(SB)/8, $bits \
	DATA name<>+24(SB)/8, $bits \
	GLOBL name<>(SB), RODATA|NOPTR, $32

CONST4(fracMask, 0x000FFFFFFFFFFFFF)
CONST4(expMask, 0x00000000000007FF)
CONST4(magic, 0x4330000000000000)     // 2^52
CONST4(magicBias, 0x43300000000003FE) // 2^52 + 1022
CONST4(absMask, 0x7FFFFFFFFFFFFFFF)
CONST4(maxFinite, 0x7FEFFFFFFFFFFFFF)
CONST4(half, 0x3FE0000000000000)      // 0.5
CONST4(one, 0x3FF0000000000000)       // 1
CONST4(two, 0x4000000000000000)       // 2
CONST4(hSqrt2, 0x3FE6A09E667F3BCD)    // √2/2
CONST4(ln2Hi, 0x3FE62E42FEE00000)
CONST4(ln2Lo, 0x3DEA39EF35793C76)
CONST4(l1, 0x3FE5555555555593)
CONST4(l2, 0x3FD999999997FA04)
CONST4(l3, 0x3FD2492494229359)
CONST4(l4, 0x3FCC71C51D8E78AF)
CONST4(l5, 0x3FC7466496CB03DE)
CONST4(l6, 0x3FC39A09D078C69F)
CONST4(l7, 0x3FC2F112DF3E5244)
CONST4(nan, 0x7FF8000000000001)
CONST4(negInf, 0xFFF0000000000000)
CONST4(invLn10, 0x3FDBCB7B1526E50E)   // 1/ln10 rounded, as math/log10.go

// LOG4 leaves in Y1 the logarithms of the four doubles at (SI), each formed
// by the operations of math/log_amd64.s in its order (the comments give
// that routine's Go names). Y8 must be zero. Uses Y0–Y7.
#define LOG4 \
	VMOVUPD (SI), Y0 \
	LOGY0

// LOGY0 is LOG4 of the four doubles in Y0.
#define LOGY0 \
	\ // f1, ki := math.Frexp(x) by the bits; k := float64(ki)
	VANDPD  fracMask<>(SB), Y0, Y2 \
	VORPD   half<>(SB), Y2, Y2 \
	VPSRLQ  $52, Y0, Y1 \
	VPAND   expMask<>(SB), Y1, Y1 \
	VPOR    magic<>(SB), Y1, Y1 \
	VSUBPD  magicBias<>(SB), Y1, Y1 \
	\ // if f1 < math.Sqrt2/2 { k -= 1; f1 *= 2 }, tested there as
	\ // CMPSD's "not less than" of √2/2 against f1, so f1 ≤ √2/2 (LE_OS)
	VCMPPD  $2, hSqrt2<>(SB), Y2, Y3 \
	VANDPD  one<>(SB), Y3, Y3 \
	VSUBPD  Y3, Y1, Y1 \
	VADDPD  one<>(SB), Y3, Y3 \
	VMULPD  Y3, Y2, Y2 \
	\ // f := f1 - 1; s := f / (2 + f); s2 := s * s; s4 := s2 * s2
	VSUBPD  one<>(SB), Y2, Y2 \
	VADDPD  two<>(SB), Y2, Y4 \
	VDIVPD  Y4, Y2, Y3 \
	VMULPD  Y3, Y3, Y4 \
	VMULPD  Y4, Y4, Y5 \
	\ // t1 := s2 * (L1 + s4*(L3+s4*(L5+s4*L7)))
	VMULPD  l7<>(SB), Y5, Y6 \
	VADDPD  l5<>(SB), Y6, Y6 \
	VMULPD  Y5, Y6, Y6 \
	VADDPD  l3<>(SB), Y6, Y6 \
	VMULPD  Y5, Y6, Y6 \
	VADDPD  l1<>(SB), Y6, Y6 \
	VMULPD  Y6, Y4, Y4 \
	\ // t2 := s4 * (L2 + s4*(L4+s4*L6))
	VMULPD  l6<>(SB), Y5, Y6 \
	VADDPD  l4<>(SB), Y6, Y6 \
	VMULPD  Y5, Y6, Y6 \
	VADDPD  l2<>(SB), Y6, Y6 \
	VMULPD  Y6, Y5, Y5 \
	\ // R := t1 + t2; hfsq := 0.5 * f * f
	VADDPD  Y5, Y4, Y4 \
	VMULPD  half<>(SB), Y2, Y6 \
	VMULPD  Y2, Y6, Y6 \
	\ // k*Ln2Hi - ((hfsq - (s*(hfsq+R) + k*Ln2Lo)) - f)
	VADDPD  Y6, Y4, Y4 \
	VMULPD  Y4, Y3, Y3 \
	VMULPD  ln2Lo<>(SB), Y1, Y4 \
	VADDPD  Y4, Y3, Y3 \
	VSUBPD  Y3, Y6, Y6 \
	VSUBPD  Y2, Y6, Y6 \
	VMULPD  ln2Hi<>(SB), Y1, Y1 \
	VSUBPD  Y6, Y1, Y1 \
	\ // special cases, in the routine's order of tests (later blends win):
	\ // +Inf or NaN with a clear sign bit → x
	VPCMPGTQ maxFinite<>(SB), Y0, Y7 \
	VBLENDVPD Y7, Y0, Y1, Y1 \
	\ // sign bit set → NaN
	VPCMPGTQ Y0, Y8, Y7 \
	VBLENDVPD Y7, nan<>(SB), Y1, Y1 \
	\ // ±0 → −Inf
	VPAND   absMask<>(SB), Y0, Y7 \
	VPCMPEQQ Y8, Y7, Y7 \
	VBLENDVPD Y7, negInf<>(SB), Y1, Y1

// func logAVX2(dst, src []float64)
TEXT ·logAVX2(SB), NOSPLIT, $0-48
	MOVQ dst_base+0(FP), DI
	MOVQ src_base+24(FP), SI
	MOVQ src_len+32(FP), CX
	SHRQ $2, CX
	JZ   logDone
	VPXOR Y8, Y8, Y8

logLoop:
	LOG4
	VMOVUPD Y1, (DI)
	ADDQ $32, SI
	ADDQ $32, DI
	DECQ CX
	JNZ  logLoop

logDone:
	VZEROUPPER
	RET

// func log10AVX2(dst, src []float64)
TEXT ·log10AVX2(SB), NOSPLIT, $0-48
	MOVQ dst_base+0(FP), DI
	MOVQ src_base+24(FP), SI
	MOVQ src_len+32(FP), CX
	SHRQ $2, CX
	JZ   log10Done
	VPXOR Y8, Y8, Y8

log10Loop:
	LOG4
	// math.Log10: Log(x) * (1/Ln10), after the special cases as there
	VMULPD invLn10<>(SB), Y1, Y1
	VMOVUPD Y1, (DI)
	ADDQ $32, SI
	ADDQ $32, DI
	DECQ CX
	JNZ  log10Loop

log10Done:
	VZEROUPPER
	RET

// FINITE4 adds Y1 − Y1 to Y9: +0 for a finite value, NaN for ±Inf and NaN,
// so Y9 stays zero in every lane only while every value has been finite.
#define FINITE4 \
	VSUBPD Y1, Y1, Y10 \
	VADDPD Y10, Y9, Y9

// ALLZERO9 sets ret to whether every lane of Y9 is zero (Y8 zero).
#define ALLZERO9(ret) \
	VCMPPD    $0, Y8, Y9, Y10 \ // EQ_OQ: false for NaN
	VMOVMSKPD Y10, AX \
	CMPQ      AX, $15 \
	SETEQ     ret

// func log10QuoAVX2(dst, x, y []float64) (finite bool)
TEXT ·log10QuoAVX2(SB), NOSPLIT, $0-73
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ y_base+48(FP), DX
	MOVQ x_len+32(FP), CX
	VPXOR Y8, Y8, Y8
	VPXOR Y9, Y9, Y9
	SHRQ $2, CX
	JZ   l10qDone

l10qLoop:
	VMOVUPD (SI), Y0
	VDIVPD  (DX), Y0, Y0 // x / y, as quoAVX2
	LOGY0
	VMULPD  invLn10<>(SB), Y1, Y1 // as log10AVX2
	VMOVUPD Y1, (DI)
	FINITE4
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, DI
	DECQ CX
	JNZ  l10qLoop

l10qDone:
	ALLZERO9(finite+72(FP))
	VZEROUPPER
	RET

// func log10QuoMaxAVX2(dst, x, y, top []float64) (finite bool)
TEXT ·log10QuoMaxAVX2(SB), NOSPLIT, $0-97
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ y_base+48(FP), DX
	MOVQ top_base+72(FP), R8
	MOVQ x_len+32(FP), CX
	VPXOR Y8, Y8, Y8
	VPXOR Y9, Y9, Y9
	SHRQ $2, CX
	JZ   l10qmDone

l10qmLoop:
	VMOVUPD (SI), Y0
	VDIVPD  (DX), Y0, Y0
	LOGY0
	VMULPD  invLn10<>(SB), Y1, Y1
	VMOVUPD Y1, (DI)
	FINITE4
	// top = value > top ? value : top (MAXPD returns its second source,
	// top, when either is NaN or both are zero): Go's if v > t { t = v }.
	VMOVUPD (R8), Y11
	VMAXPD  Y11, Y1, Y11
	VMOVUPD Y11, (R8)
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, DI
	ADDQ $32, R8
	DECQ CX
	JNZ  l10qmLoop

l10qmDone:
	ALLZERO9(finite+96(FP))
	VZEROUPPER
	RET

// QUOSQ4 forms, for the four lanes at (SI) and (DX), q = x/y, r = q·q, then
// Y13 = (r + e)/c with e at (R8) and Y12 = r/c, c in Y15: each operation
// rounded on its own, in the order Go's QuoSquares writes them. The sum
// takes e as its first source, as the Go compiler orders r + e (ADDSD's
// first source gives a NaN its payload when both are NaN).
#define QUOSQ4 \
	VMOVUPD (SI), Y0 \
	VDIVPD  (DX), Y0, Y0 \
	VMULPD  Y0, Y0, Y12 \
	VMOVUPD (R8), Y13 \
	VADDPD  Y12, Y13, Y13 \
	VDIVPD  Y15, Y13, Y13 \
	VDIVPD  Y15, Y12, Y12

// func quoSquaresAVX2(d, a, x, y, e []float64, c float64, logs bool)
TEXT ·quoSquaresAVX2(SB), NOSPLIT, $0-129
	MOVQ d_base+0(FP), DI
	MOVQ a_base+24(FP), R9
	MOVQ x_base+48(FP), SI
	MOVQ x_len+56(FP), CX
	MOVQ y_base+72(FP), DX
	MOVQ e_base+96(FP), R8
	VBROADCASTSD c+120(FP), Y15
	MOVBLZX logs+128(FP), BX
	VPXOR Y8, Y8, Y8
	SHRQ $2, CX
	JZ   qsDone
	TESTQ BX, BX
	JNZ  qsLogLoop

qsLoop:
	QUOSQ4
	VMOVUPD Y13, (DI)
	VMOVUPD Y12, (R9)
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, R8
	ADDQ $32, DI
	ADDQ $32, R9
	DECQ CX
	JNZ  qsLoop
	JMP  qsDone

qsLogLoop:
	QUOSQ4
	VMOVAPD Y13, Y0
	LOGY0
	VMOVUPD Y1, (DI)
	VMOVAPD Y12, Y0
	LOGY0
	VMOVUPD Y1, (R9)
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, R8
	ADDQ $32, DI
	ADDQ $32, R9
	DECQ CX
	JNZ  qsLogLoop

qsDone:
	VZEROUPPER
	RET
