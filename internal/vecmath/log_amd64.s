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

// func quoSquaresAVX2(d, a, x, y, e []float64, c float64, logs bool) (finite bool)
TEXT ·quoSquaresAVX2(SB), NOSPLIT, $0-137
	MOVQ d_base+0(FP), DI
	MOVQ a_base+24(FP), R9
	MOVQ x_base+48(FP), SI
	MOVQ x_len+56(FP), CX
	MOVQ y_base+72(FP), DX
	MOVQ e_base+96(FP), R8
	VBROADCASTSD c+120(FP), Y15
	MOVBLZX logs+128(FP), BX
	VPXOR Y8, Y8, Y8
	VPXOR Y9, Y9, Y9
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
	FINITE4
	VMOVAPD Y12, Y0
	LOGY0
	VMOVUPD Y1, (R9)
	FINITE4
	ADDQ $32, SI
	ADDQ $32, DX
	ADDQ $32, R8
	ADDQ $32, DI
	ADDQ $32, R9
	DECQ CX
	JNZ  qsLogLoop

qsDone:
	ALLZERO9(finite+136(FP))
	VZEROUPPER
	RET


// The kernels of log_amd64.s eight lanes at a time in zmm registers: the
// same operations on the same operands in the same order, each rounded as
// there (no operation is fused, and the rounding mode is the program's),
// so every lane has the bits the four-lane kernels and math.Log give. The
// constants are log_amd64.s's, read one lane and broadcast (.BCST); the
// tests of the special cases set mask registers, and the blends are moves
// under those masks, in the routine's order (later ones win).

// LOGZ0 leaves in Z1 the logarithms of the eight doubles in Z0 (LOGY0 of
// log_amd64.s, eight lanes). Z8 must be zero. Uses Z0–Z7 and K1–K4.
#define LOGZ0 \
	VPANDQ.BCST fracMask<>(SB), Z0, Z2 \
	VPORQ.BCST  half<>(SB), Z2, Z2 \
	VPSRLQ      $52, Z0, Z1 \
	VPANDQ.BCST expMask<>(SB), Z1, Z1 \
	VPORQ.BCST  magic<>(SB), Z1, Z1 \
	VSUBPD.BCST magicBias<>(SB), Z1, Z1 \
	VCMPPD.BCST $2, hSqrt2<>(SB), Z2, K1 \
	VSUBPD.BCST one<>(SB), Z1, K1, Z1 \
	VADDPD      Z2, Z2, K1, Z2 \
	VSUBPD.BCST one<>(SB), Z2, Z2 \
	VADDPD.BCST two<>(SB), Z2, Z4 \
	VDIVPD      Z4, Z2, Z3 \
	VMULPD      Z3, Z3, Z4 \
	VMULPD      Z4, Z4, Z5 \
	VMULPD.BCST l7<>(SB), Z5, Z6 \
	VADDPD.BCST l5<>(SB), Z6, Z6 \
	VMULPD      Z5, Z6, Z6 \
	VADDPD.BCST l3<>(SB), Z6, Z6 \
	VMULPD      Z5, Z6, Z6 \
	VADDPD.BCST l1<>(SB), Z6, Z6 \
	VMULPD      Z6, Z4, Z4 \
	VMULPD.BCST l6<>(SB), Z5, Z6 \
	VADDPD.BCST l4<>(SB), Z6, Z6 \
	VMULPD      Z5, Z6, Z6 \
	VADDPD.BCST l2<>(SB), Z6, Z6 \
	VMULPD      Z6, Z5, Z5 \
	VADDPD      Z5, Z4, Z4 \
	VMULPD.BCST half<>(SB), Z2, Z6 \
	VMULPD      Z2, Z6, Z6 \
	VADDPD      Z6, Z4, Z4 \
	VMULPD      Z4, Z3, Z3 \
	VMULPD.BCST ln2Lo<>(SB), Z1, Z4 \
	VADDPD      Z4, Z3, Z3 \
	VSUBPD      Z3, Z6, Z6 \
	VSUBPD      Z2, Z6, Z6 \
	VMULPD.BCST ln2Hi<>(SB), Z1, Z1 \
	VSUBPD      Z6, Z1, Z1 \
	VPCMPGTQ.BCST maxFinite<>(SB), Z0, K2 \
	VMOVAPD     Z0, K2, Z1 \
	VPCMPGTQ    Z0, Z8, K3 \
	VBROADCASTSD nan<>(SB), K3, Z1 \
	VPTESTNMQ.BCST absMask<>(SB), Z0, K4 \
	VBROADCASTSD negInf<>(SB), K4, Z1

// The step of LOGZ0 where f1 < √2/2 (K1): k − 1 and f1·2, as LOGY0's
// k − (1 or 0) and f1·(2 or 1); f1 + f1 is f1·2 exactly, and a lane left
// alone is the product by 1 or the difference with 0 (k is a whole number,
// never −0), so the bits agree.

// FINITE8 adds Z1 − Z1 to Z9: zero in every lane only while every value has
// been finite (FINITE4).
#define FINITE8 \
	VSUBPD Z1, Z1, Z10 \
	VADDPD Z10, Z9, Z9

// ALLZERO9Z sets ret to whether every lane of Z9 is zero (Z8 zero).
#define ALLZERO9Z(ret) \
	VCMPPD $0, Z8, Z9, K5 \
	KMOVW  K5, AX \
	CMPQ   AX, $0xFF \
	SETEQ  ret

// func logAVX512(dst, src []float64)
TEXT ·logAVX512(SB), NOSPLIT, $0-48
	MOVQ dst_base+0(FP), DI
	MOVQ src_base+24(FP), SI
	MOVQ src_len+32(FP), CX
	SHRQ $3, CX
	JZ   logzDone
	VPXORQ Z8, Z8, Z8

logzLoop:
	VMOVUPD (SI), Z0
	LOGZ0
	VMOVUPD Z1, (DI)
	ADDQ $64, SI
	ADDQ $64, DI
	DECQ CX
	JNZ  logzLoop

logzDone:
	VZEROUPPER
	RET

// func log10QuoAVX512(dst, x, y []float64) (finite bool)
TEXT ·log10QuoAVX512(SB), NOSPLIT, $0-73
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ y_base+48(FP), DX
	MOVQ x_len+32(FP), CX
	VPXORQ Z8, Z8, Z8
	VPXORQ Z9, Z9, Z9
	SHRQ $3, CX
	JZ   l10qzDone

l10qzLoop:
	VMOVUPD (SI), Z0
	VDIVPD  (DX), Z0, Z0
	LOGZ0
	VMULPD.BCST invLn10<>(SB), Z1, Z1
	VMOVUPD Z1, (DI)
	FINITE8
	ADDQ $64, SI
	ADDQ $64, DX
	ADDQ $64, DI
	DECQ CX
	JNZ  l10qzLoop

l10qzDone:
	ALLZERO9Z(finite+72(FP))
	VZEROUPPER
	RET

// func log10QuoMaxAVX512(dst, x, y, top []float64) (finite bool)
TEXT ·log10QuoMaxAVX512(SB), NOSPLIT, $0-97
	MOVQ dst_base+0(FP), DI
	MOVQ x_base+24(FP), SI
	MOVQ y_base+48(FP), DX
	MOVQ top_base+72(FP), R8
	MOVQ x_len+32(FP), CX
	VPXORQ Z8, Z8, Z8
	VPXORQ Z9, Z9, Z9
	SHRQ $3, CX
	JZ   l10qmzDone

l10qmzLoop:
	VMOVUPD (SI), Z0
	VDIVPD  (DX), Z0, Z0
	LOGZ0
	VMULPD.BCST invLn10<>(SB), Z1, Z1
	VMOVUPD Z1, (DI)
	FINITE8
	// MAXPD's rule as in log10QuoMaxAVX2: top when either is NaN or both
	// are zero.
	VMOVUPD (R8), Z11
	VMAXPD  Z11, Z1, Z11
	VMOVUPD Z11, (R8)
	ADDQ $64, SI
	ADDQ $64, DX
	ADDQ $64, DI
	ADDQ $64, R8
	DECQ CX
	JNZ  l10qmzLoop

l10qmzDone:
	ALLZERO9Z(finite+96(FP))
	VZEROUPPER
	RET

// QUOSQ8 is QUOSQ4 of log_amd64.s, eight lanes: Z13 = (r + e)/c and
// Z12 = r/c with c in Z15.
#define QUOSQ8 \
	VMOVUPD (SI), Z0 \
	VDIVPD  (DX), Z0, Z0 \
	VMULPD  Z0, Z0, Z12 \
	VMOVUPD (R8), Z13 \
	VADDPD  Z12, Z13, Z13 \
	VDIVPD  Z15, Z13, Z13 \
	VDIVPD  Z15, Z12, Z12

// func quoSquaresAVX512(d, a, x, y, e []float64, c float64, logs bool) (finite bool)
TEXT ·quoSquaresAVX512(SB), NOSPLIT, $0-137
	MOVQ d_base+0(FP), DI
	MOVQ a_base+24(FP), R9
	MOVQ x_base+48(FP), SI
	MOVQ x_len+56(FP), CX
	MOVQ y_base+72(FP), DX
	MOVQ e_base+96(FP), R8
	VBROADCASTSD c+120(FP), Z15
	MOVBLZX logs+128(FP), BX
	VPXORQ Z8, Z8, Z8
	VPXORQ Z9, Z9, Z9
	SHRQ $3, CX
	JZ   qszDone
	TESTQ BX, BX
	JNZ  qszLogLoop

qszLoop:
	QUOSQ8
	VMOVUPD Z13, (DI)
	VMOVUPD Z12, (R9)
	ADDQ $64, SI
	ADDQ $64, DX
	ADDQ $64, R8
	ADDQ $64, DI
	ADDQ $64, R9
	DECQ CX
	JNZ  qszLoop
	JMP  qszDone

qszLogLoop:
	QUOSQ8
	VMOVAPD Z13, Z0
	LOGZ0
	VMOVUPD Z1, (DI)
	FINITE8
	VMOVAPD Z12, Z0
	LOGZ0
	VMOVUPD Z1, (R9)
	FINITE8
	ADDQ $64, SI
	ADDQ $64, DX
	ADDQ $64, R8
	ADDQ $64, DI
	ADDQ $64, R9
	DECQ CX
	JNZ  qszLogLoop

qszDone:
	ALLZERO9Z(finite+136(FP))
	VZEROUPPER
	RET

// func scaleObservedAVX512(o, w []float64, a float64) (peak float64, nan bool)
//
// Z15 a, Z14 +Inf, Z13 NaN, Z8 zero; Z9 the lanes' largest products (MAXPD
// keeps the running value when the product is NaN), K5 the lanes that met
// a NaN.
TEXT ·scaleObservedAVX512(SB), NOSPLIT, $0-65
	MOVQ o_base+0(FP), DI
	MOVQ o_len+8(FP), CX
	MOVQ w_base+24(FP), SI
	VBROADCASTSD a+48(FP), Z15
	VBROADCASTSD negInf<>(SB), Z14
	VPXORQ Z8, Z8, Z8
	VSUBPD Z14, Z8, Z14 // 0 − (−Inf) = +Inf
	VBROADCASTSD nan<>(SB), Z13
	VPXORQ Z9, Z9, Z9
	KXORW K5, K5, K5
	SHRQ $3, CX

soLoop:
	VMOVUPD (DI), Z0
	VMULPD  (SI), Z15, Z1          // a·w
	VCMPPD  $0x1e, Z8, Z0, K1      // v > 0 (GT_OQ)
	VCMPPD  $0x11, Z14, Z0, K1, K2 // and v < +Inf (LT_OQ)
	KNOTW   K2, K3
	VMULPD  Z0, Z1, Z2             // (a·w)·v
	VMULPD  Z13, Z1, K3, Z2        // (a·w)·NaN where v is left out
	VMOVUPD Z2, (DI)
	VMAXPD  Z9, Z2, Z9
	VCMPPD  $3, Z2, Z2, K4         // UNORD_Q: the product is NaN
	KORW    K4, K5, K5
	ADDQ $64, DI
	ADDQ $64, SI
	DECQ CX
	JNZ  soLoop

	VEXTRACTF64X4 $1, Z9, Y1
	VMAXPD        Y1, Y9, Y9
	VEXTRACTF128  $1, Y9, X1
	VMAXPD        X1, X9, X9
	VUNPCKHPD     X9, X9, X1
	VMAXPD        X1, X9, X9
	VMOVSD        X9, peak+56(FP)
	KMOVW         K5, AX
	TESTW         AX, AX
	SETNE         nan+64(FP)
	VZEROUPPER
	RET
