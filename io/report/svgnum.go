package report

import (
	"math"
	"math/bits"
	"strconv"
)

// appendG5 appends v as strconv.AppendFloat(b, v, 'g', 5, 64) does (fmt's
// %.5g, vgsvg's coordinates): the five significant digits of v correctly
// rounded, ties to even, trailing zeros dropped. Where |v| lies in
// [0.001, 10000), every coordinate of a figure but a zero, the digits are
// found here exactly, in integers: |v| = m·2^−s, and m·10^k (k = 4 −
// ⌊log₁₀|v|⌋, 1 … 7) shifted right by s (39 … 62 bits), its remainder
// held against one half; in that range %g writes no exponent (five digits
// take one below 10⁻⁴ and from 10⁵). This takes half of strconv's time
// (its general path for a precision); other values are left to strconv.
// TestAppendG5IsStrconvs compares the two on every kind of value.
func appendG5(b []byte, v float64) []byte {
	a := math.Abs(v)
	if !(a >= 0.001 && a < 10000) {
		return strconv.AppendFloat(b, v, 'g', 5, 64)
	}
	// e = ⌊log₁₀ a⌋: the floats nearest 0.001, 0.01 and 0.1 lie above
	// them, so a is at least the float of 10ᵉ when it is at least 10ᵉ.
	e := 3
	for a < pow10f[e+3] {
		e--
	}
	// a = m·2^−s (a normal float: its 52 bits and the implicit one); s is
	// 39 … 62 for a in [0.001, 10000).
	fb := math.Float64bits(a)
	m, s := fb&(1<<52-1)|1<<52, uint(1075-int(fb>>52))
	hi, lo := bits.Mul64(m, pow10i[4-e])
	n := hi<<(64-s) | lo>>s
	r, half := lo&(1<<s-1), uint64(1)<<(s-1)
	if r > half || r == half && n&1 == 1 {
		n++
	}
	if n == 100000 { // rounded up to the next power of ten
		n, e = 10000, e+1
	}
	if v < 0 {
		b = append(b, '-')
	}
	var d [5]byte
	for i := 4; i >= 0; i-- {
		d[i] = byte('0' + n%10)
		n /= 10
	}
	nd := 5
	for nd > 1 && d[nd-1] == '0' {
		nd--
	}
	if e >= 0 {
		ip := e + 1 // digits before the point
		if nd <= ip {
			return append(b, d[:ip]...)
		}
		b = append(b, d[:ip]...)
		b = append(b, '.')
		return append(b, d[ip:nd]...)
	}
	b = append(b, '0', '.')
	for i := -1; i > e; i-- {
		b = append(b, '0')
	}
	return append(b, d[:nd]...)
}

// pow10f are 10⁻³ … 10³ as floats, pow10i 10⁰ … 10⁷ as integers.
var (
	pow10f = [7]float64{0.001, 0.01, 0.1, 1, 10, 100, 1000}
	pow10i = [8]uint64{1, 10, 100, 1000, 10000, 100000, 1000000, 10000000}
)
