// Package vecmath takes the natural and the decimal logarithm of a whole
// slice at a time, with results bit-identical to the Go standard library's
// math.Log and math.Log10 on every input, and the quotients of two slices
// (or of a slice by one number), bit-identical to Go's division; and the
// decimal logarithm of the quotients of two slices (Log10Quo), the division
// and the logarithm in one pass, with a check that every result is finite
// and, if asked, running maxima. For the noise model of single beams it
// also forms squared quotients over a constant, with and without a share
// added, and their logarithms (QuoSquares, LogQuoSquares), tests a slice
// for positive finite values (AllPositiveFinite), takes running maxima
// with the smallest change from another slice (RaiseAndStep) and finds the
// first value at or below two limits (NextAtOrBelow), each in one pass;
// maxima and minima are the same in any order (RaiseAndStep's zero sign
// aside). These scans compare four lanes at a time on amd64 with AVX2, and
// elsewhere, and with the purego build tag, take the Go loops.
//
// Quotients: IEEE 754 division is correctly rounded, so on amd64 with AVX2
// four lanes of VDIVPD give the bits of four divisions one at a time, at
// about a quarter of their cost (a scalar division waits on the divider
// longer than any other arithmetic); elsewhere, and with the purego build
// tag, Go's division.
//
// The logarithm is the one of math/log.go (after FreeBSD's e_log.c): write
// x = f1·2^k with f1 in [√2/2, √2), f = f1 − 1, s = f/(2+f), and
//
//	log(x) = k·ln2hi − ((f²/2 − (s·(f²/2 + R(s)) + k·ln2lo)) − f),
//
// where R(s) = s²(L1 + s⁴(L3 + s⁴(L5 + s⁴L7))) + s⁴(L2 + s⁴(L4 + s⁴L6)) is a
// minimax polynomial and ln2 = ln2hi + ln2lo is split so that k·ln2hi is
// exact. log10(x) is log(x)·(1/ln10), as math/log10.go forms it.
//
// On amd64 with AVX2 four lanes go through the same operations, in the same
// order and with the same roundings, as math's own log_amd64.s: the
// fraction and exponent taken from the bits (so a subnormal x is reduced as
// math.Log on amd64 reduces it, with k = −1022), the comparison of f1 with
// √2/2 as that routine makes it (f1 ≤ √2/2 halves the range there, where
// math/log.go has f1 < √2/2: at f1 = √2/2 exactly the last bit can differ),
// one division and no fused multiply-add, then the special cases of that
// routine: −Inf for ±0, NaN (bits 0x7FF8000000000001) for a set sign bit,
// x itself for +Inf and for a NaN with a clear sign bit. Elsewhere, and
// with the purego build tag, every value goes through math.Log.
//
// Where the processor also has AVX-512 (and the operating system saves its
// registers), the logarithms and the quotients they are taken of run eight
// lanes at a time: the same operations in the same order, so the same bits
// (IEEE 754 rounds each lane's result alone, whatever the width of the
// register), with the special cases picked by mask registers instead of
// blends. On the Zen 5 processor of the shared benchmark machine, whose
// vector units are 512 bits wide, that halves the time per value (a slice
// of 3000: Log 5.2 → 2.4 µs, LogQuoSquares 14.8 → 7.3, Log10Quo 7.4 → 3.7).
package vecmath
