//go:build !purego

#include "textflag.h"

// The register tiles of wide512_amd64.go: four output rows by sixteen to
// forty output columns, two to five zmm registers of sums per row (eight
// doubles each), the inner index running n steps, as the AVX2 tiles of
// wide_amd64.s run it. Step l broadcasts a_r(l) to the eight lanes and adds
// a_r(l)·b(l) to row r, the product rounded (VMULPD) before it is added
// (VADDPD), never fused; each lane is one output entry, so each entry is
// the same scalar sum, l ascending, as the Go loops and gonum's Dgemm form.
// The last group of eight columns is loaded and stored under the mask K1
// (its lanes that are columns; all eight when the width is a multiple of
// eight), its other lanes loaded as zero and never stored.
//
// Arguments (strides in float64 entries, turned into bytes here):
//   o, so: the 4 × w block of sums, row r at o + r·so, read then written;
//   a, ar, al: a_r(l) at a + r·ar + l·al;
//   b, bl: b(l) at b + l·bl, w entries;
//   n: number of steps (n ≥ 0);
//   pf: bytes ahead of a_r(l) whose lines are prefetched at step l;
//   mask: the lanes of the last group of eight that are columns.
//
// Registers: DI o, R11 so; SI a (advanced by al each step), R8 ar, R12
// 3·ar, R9 al; DX b (advanced by bl), R10 bl; CX steps left; BX a + pf
// (advanced with SI); AX the row of o being loaded or stored; all strides
// in bytes. Z0–Z19 sums (row r in Zg·r … Zg·r+g−1 for g groups), Z20–Z24
// the groups of b(l), Z25 a_r(l), Z26 a product.

// ARGS loads the arguments and turns the strides into bytes.
#define ARGS \
	MOVQ o+0(FP), DI; \
	MOVQ so+8(FP), R11; \
	MOVQ a+16(FP), SI; \
	MOVQ ar+24(FP), R8; \
	MOVQ al+32(FP), R9; \
	MOVQ b+40(FP), DX; \
	MOVQ bl+48(FP), R10; \
	MOVQ n+56(FP), CX; \
	MOVQ pf+64(FP), BX; \
	MOVQ mask+72(FP), AX; \
	KMOVW AX, K1; \
	SHLQ $3, R11; \
	SHLQ $3, R8; \
	SHLQ $3, R9; \
	SHLQ $3, R10; \
	LEAQ (R8)(R8*2), R12; \
	LEAQ (SI)(BX*1), BX

// PREFETCH asks for the lines of the four rows' a_r(l) pf bytes ahead.
#define PREFETCH \
	PREFETCHT0 (BX); \
	PREFETCHT0 (BX)(R8*1); \
	PREFETCHT0 (BX)(R8*2); \
	PREFETCHT0 (BX)(R12*1)

// NEXT advances a, its prefetch and b by one step and counts it.
#define NEXT \
	ADDQ R9, SI; \
	ADDQ R9, BX; \
	ADDQ R10, DX; \
	DECQ CX

// MAC adds the broadcast Z25 times the group b to acc through Z26.
#define MAC(b, acc) \
	VMULPD b, Z25, Z26; \
	VADDPD Z26, acc, acc

// LOAD2 loads a row of 2 groups of sums from AX, the last under K1.
#define LOAD2(z0, z1) \
	VMOVUPD (AX), z0; \
	VMOVUPD.Z 64(AX), K1, z1

// STORE2 stores a row of 2 groups of sums at AX, the last under K1.
#define STORE2(z0, z1) \
	VMOVUPD z0, (AX); \
	VMOVUPD z1, K1, 64(AX)

// ROW2 adds a_r(l) (src) times the 2 groups of b(l) to a row of sums.
#define ROW2(src, z0, z1) \
	VBROADCASTSD src, Z25; \
	MAC(Z20, z0); \
	MAC(Z21, z1)

// B2 loads the 2 groups of b(l), the last under K1.
#define B2 \
	VMOVUPD (DX), Z20; \
	VMOVUPD.Z 64(DX), K1, Z21

// LOAD3 loads a row of 3 groups of sums from AX, the last under K1.
#define LOAD3(z0, z1, z2) \
	VMOVUPD (AX), z0; \
	VMOVUPD 64(AX), z1; \
	VMOVUPD.Z 128(AX), K1, z2

// STORE3 stores a row of 3 groups of sums at AX, the last under K1.
#define STORE3(z0, z1, z2) \
	VMOVUPD z0, (AX); \
	VMOVUPD z1, 64(AX); \
	VMOVUPD z2, K1, 128(AX)

// ROW3 adds a_r(l) (src) times the 3 groups of b(l) to a row of sums.
#define ROW3(src, z0, z1, z2) \
	VBROADCASTSD src, Z25; \
	MAC(Z20, z0); \
	MAC(Z21, z1); \
	MAC(Z22, z2)

// B3 loads the 3 groups of b(l), the last under K1.
#define B3 \
	VMOVUPD (DX), Z20; \
	VMOVUPD 64(DX), Z21; \
	VMOVUPD.Z 128(DX), K1, Z22

// LOAD4 loads a row of 4 groups of sums from AX, the last under K1.
#define LOAD4(z0, z1, z2, z3) \
	VMOVUPD (AX), z0; \
	VMOVUPD 64(AX), z1; \
	VMOVUPD 128(AX), z2; \
	VMOVUPD.Z 192(AX), K1, z3

// STORE4 stores a row of 4 groups of sums at AX, the last under K1.
#define STORE4(z0, z1, z2, z3) \
	VMOVUPD z0, (AX); \
	VMOVUPD z1, 64(AX); \
	VMOVUPD z2, 128(AX); \
	VMOVUPD z3, K1, 192(AX)

// ROW4 adds a_r(l) (src) times the 4 groups of b(l) to a row of sums.
#define ROW4(src, z0, z1, z2, z3) \
	VBROADCASTSD src, Z25; \
	MAC(Z20, z0); \
	MAC(Z21, z1); \
	MAC(Z22, z2); \
	MAC(Z23, z3)

// B4 loads the 4 groups of b(l), the last under K1.
#define B4 \
	VMOVUPD (DX), Z20; \
	VMOVUPD 64(DX), Z21; \
	VMOVUPD 128(DX), Z22; \
	VMOVUPD.Z 192(DX), K1, Z23

// LOAD5 loads a row of 5 groups of sums from AX, the last under K1.
#define LOAD5(z0, z1, z2, z3, z4) \
	VMOVUPD (AX), z0; \
	VMOVUPD 64(AX), z1; \
	VMOVUPD 128(AX), z2; \
	VMOVUPD 192(AX), z3; \
	VMOVUPD.Z 256(AX), K1, z4

// STORE5 stores a row of 5 groups of sums at AX, the last under K1.
#define STORE5(z0, z1, z2, z3, z4) \
	VMOVUPD z0, (AX); \
	VMOVUPD z1, 64(AX); \
	VMOVUPD z2, 128(AX); \
	VMOVUPD z3, 192(AX); \
	VMOVUPD z4, K1, 256(AX)

// ROW5 adds a_r(l) (src) times the 5 groups of b(l) to a row of sums.
#define ROW5(src, z0, z1, z2, z3, z4) \
	VBROADCASTSD src, Z25; \
	MAC(Z20, z0); \
	MAC(Z21, z1); \
	MAC(Z22, z2); \
	MAC(Z23, z3); \
	MAC(Z24, z4)

// B5 loads the 5 groups of b(l), the last under K1.
#define B5 \
	VMOVUPD (DX), Z20; \
	VMOVUPD 64(DX), Z21; \
	VMOVUPD 128(DX), Z22; \
	VMOVUPD 192(DX), Z23; \
	VMOVUPD.Z 256(DX), K1, Z24

// func tile4x16z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)
//
// 9 to 16 columns: Z0–Z7 sums.
TEXT ·tile4x16z(SB), NOSPLIT, $0-80
	ARGS
	MOVQ DI, AX
	LOAD2(Z0, Z1)
	ADDQ R11, AX
	LOAD2(Z2, Z3)
	ADDQ R11, AX
	LOAD2(Z4, Z5)
	ADDQ R11, AX
	LOAD2(Z6, Z7)
	TESTQ CX, CX
	JLE   done16

loop16:
	PREFETCH
	B2
	ROW2((SI), Z0, Z1)
	ROW2((SI)(R8*1), Z2, Z3)
	ROW2((SI)(R8*2), Z4, Z5)
	ROW2((SI)(R12*1), Z6, Z7)
	NEXT
	JNZ  loop16

done16:
	MOVQ DI, AX
	STORE2(Z0, Z1)
	ADDQ R11, AX
	STORE2(Z2, Z3)
	ADDQ R11, AX
	STORE2(Z4, Z5)
	ADDQ R11, AX
	STORE2(Z6, Z7)
	VZEROUPPER
	RET

// func tile4x24z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)
//
// 17 to 24 columns: Z0–Z11 sums.
TEXT ·tile4x24z(SB), NOSPLIT, $0-80
	ARGS
	MOVQ DI, AX
	LOAD3(Z0, Z1, Z2)
	ADDQ R11, AX
	LOAD3(Z3, Z4, Z5)
	ADDQ R11, AX
	LOAD3(Z6, Z7, Z8)
	ADDQ R11, AX
	LOAD3(Z9, Z10, Z11)
	TESTQ CX, CX
	JLE   done24

loop24:
	PREFETCH
	B3
	ROW3((SI), Z0, Z1, Z2)
	ROW3((SI)(R8*1), Z3, Z4, Z5)
	ROW3((SI)(R8*2), Z6, Z7, Z8)
	ROW3((SI)(R12*1), Z9, Z10, Z11)
	NEXT
	JNZ  loop24

done24:
	MOVQ DI, AX
	STORE3(Z0, Z1, Z2)
	ADDQ R11, AX
	STORE3(Z3, Z4, Z5)
	ADDQ R11, AX
	STORE3(Z6, Z7, Z8)
	ADDQ R11, AX
	STORE3(Z9, Z10, Z11)
	VZEROUPPER
	RET

// func tile4x32z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)
//
// 25 to 32 columns: Z0–Z15 sums.
TEXT ·tile4x32z(SB), NOSPLIT, $0-80
	ARGS
	MOVQ DI, AX
	LOAD4(Z0, Z1, Z2, Z3)
	ADDQ R11, AX
	LOAD4(Z4, Z5, Z6, Z7)
	ADDQ R11, AX
	LOAD4(Z8, Z9, Z10, Z11)
	ADDQ R11, AX
	LOAD4(Z12, Z13, Z14, Z15)
	TESTQ CX, CX
	JLE   done32

loop32:
	PREFETCH
	B4
	ROW4((SI), Z0, Z1, Z2, Z3)
	ROW4((SI)(R8*1), Z4, Z5, Z6, Z7)
	ROW4((SI)(R8*2), Z8, Z9, Z10, Z11)
	ROW4((SI)(R12*1), Z12, Z13, Z14, Z15)
	NEXT
	JNZ  loop32

done32:
	MOVQ DI, AX
	STORE4(Z0, Z1, Z2, Z3)
	ADDQ R11, AX
	STORE4(Z4, Z5, Z6, Z7)
	ADDQ R11, AX
	STORE4(Z8, Z9, Z10, Z11)
	ADDQ R11, AX
	STORE4(Z12, Z13, Z14, Z15)
	VZEROUPPER
	RET

// func tile4x40z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)
//
// 33 to 40 columns: Z0–Z19 sums.
TEXT ·tile4x40z(SB), NOSPLIT, $0-80
	ARGS
	MOVQ DI, AX
	LOAD5(Z0, Z1, Z2, Z3, Z4)
	ADDQ R11, AX
	LOAD5(Z5, Z6, Z7, Z8, Z9)
	ADDQ R11, AX
	LOAD5(Z10, Z11, Z12, Z13, Z14)
	ADDQ R11, AX
	LOAD5(Z15, Z16, Z17, Z18, Z19)
	TESTQ CX, CX
	JLE   done40

loop40:
	PREFETCH
	B5
	ROW5((SI), Z0, Z1, Z2, Z3, Z4)
	ROW5((SI)(R8*1), Z5, Z6, Z7, Z8, Z9)
	ROW5((SI)(R8*2), Z10, Z11, Z12, Z13, Z14)
	ROW5((SI)(R12*1), Z15, Z16, Z17, Z18, Z19)
	NEXT
	JNZ  loop40

done40:
	MOVQ DI, AX
	STORE5(Z0, Z1, Z2, Z3, Z4)
	ADDQ R11, AX
	STORE5(Z5, Z6, Z7, Z8, Z9)
	ADDQ R11, AX
	STORE5(Z10, Z11, Z12, Z13, Z14)
	ADDQ R11, AX
	STORE5(Z15, Z16, Z17, Z18, Z19)
	VZEROUPPER
	RET
