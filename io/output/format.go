package output

import (
	"math"
	"strconv"
)

// AppendG appends v formatted as strconv.AppendFloat(b, v, 'g', prec, 64)
// does, byte for byte; result files write hundreds of thousands of numbers
// this way. strconv finds the prec significant digits by an exact
// algorithm for any float64; here they come, when they can be known for
// sure, from one product or quotient by an exact power of ten (10ᵏ, k ≤ 22,
// is a float64): s = |v|·10^p, with p chosen so that 10^(prec−1) ≤ s <
// 10^prec, is then within s·2⁻⁵³ of its true value (IEEE 754 rounds each
// operation correctly), so unless s lies within s·2⁻⁵² of a half its
// rounding to an integer m is the true one, and m's digits are strconv's.
// Numbers near a half, tiny or huge (|p| > 22), not finite or asked for
// more than 15 digits go to strconv itself. The test compares both on
// millions of numbers of every magnitude, and near every rounding boundary.
func AppendG(b []byte, v float64, prec int) []byte {
	if prec < 1 || prec > 15 || v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.AppendFloat(b, v, 'g', prec, 64)
	}
	var d [16]byte
	nd, dp, ok := gDigits(math.Abs(v), prec, &d)
	if !ok {
		return strconv.AppendFloat(b, v, 'g', prec, 64)
	}
	if v < 0 {
		b = append(b, '-')
	}
	return formatG(b, d[:nd], dp, prec)
}

// AppendGValue is AppendG that also gives the float64 its text reads back
// as (strconv.ParseFloat's), formed from the digits written when one
// correctly rounded operation gives it: the digits as an integer u < 10¹⁵
// and the text's power of ten p with |p| ≤ 22, u·10^p or u/10^−p, both
// factors exact (Clinger, PLDI 1990, the fast path of every correctly
// rounded reader). exact is false when it did not (the text must then be
// read); the text is AppendG's in every case.
func AppendGValue(b []byte, v float64, prec int) (out []byte, value float64, exact bool) {
	if prec < 1 || prec > 15 || v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.AppendFloat(b, v, 'g', prec, 64), 0, false
	}
	var d [16]byte
	nd, dp, ok := gDigits(math.Abs(v), prec, &d)
	if !ok {
		return strconv.AppendFloat(b, v, 'g', prec, 64), 0, false
	}
	if v < 0 {
		b = append(b, '-')
	}
	b = formatG(b, d[:nd], dp, prec)
	var u uint64
	for _, c := range d[:nd] {
		u = 10*u + uint64(c-'0')
	}
	value, exact = scaled(float64(u), dp-nd)
	if v < 0 {
		value = -value
	}
	return b, value, exact
}

// gDigits writes the prec significant digits of a > 0 (finite) into d,
// trailing zeros dropped, and gives their count and the decimal point's
// place (dp digits from the left); false when it cannot be sure of them.
func gDigits(a float64, prec int, d *[16]byte) (nd, dp int, ok bool) {
	// x is the decimal exponent of a (10^x ≤ a < 10^(x+1)), estimated from
	// the binary one, ⌊(e−1)·log₁₀ 2⌋ with log₁₀ 2 ≈ 78913/2¹⁸ (the floor
	// is exact for |e−1| ≤ 1600: Go's internal/strconv, mulLog10_2), and set
	// right on the scaled value.
	e2 := int(math.Float64bits(a)>>52) - 1022 // a = f·2^e2, ½ ≤ f < 1 (normal a)
	x := ((e2 - 1) * 78913) >> 18
	lo, hi := pow10[prec-1], pow10[prec]
	s, ok := scaled(a, prec-1-x)
	for try := 0; ok && try < 2 && (s < lo || s >= hi); try++ {
		if s < lo {
			x--
		} else {
			x++
		}
		s, ok = scaled(a, prec-1-x)
	}
	if !ok || s < lo || s >= hi {
		return 0, 0, false
	}
	u := uint64(s)         // ⌊s⌋: s is positive
	frac := s - float64(u) // exact: s < 2⁵³
	if math.Abs(frac-0.5) <= s*0x1p-52 {
		return 0, 0, false
	}
	if frac > 0.5 {
		u++
	}
	if float64(u) == hi { // rounded up to the next power of ten
		u, x = uint64(lo), x+1
	}
	for i := prec - 1; i > 0; i -= 2 {
		q := u / 100
		r := 2 * (u - 100*q)
		d[i], d[i-1] = pairs[r+1], pairs[r]
		u = q
	}
	if prec%2 == 1 {
		d[0] = byte('0' + u)
	}
	nd = prec
	for nd > 1 && d[nd-1] == '0' {
		nd--
	}
	return nd, x + 1, true
}

// pairs are the two digits of 0 … 99.
const pairs = "00010203040506070809" + "10111213141516171819" + "20212223242526272829" + "30313233343536373839" +
	"40414243444546474849" + "50515253545556575859" + "60616263646566676869" + "70717273747576777879" +
	"80818283848586878889" + "90919293949596979899"

// pow10 are the powers of ten a float64 holds exactly.
var pow10 = func() (p [23]float64) {
	p[0] = 1
	for i := 1; i < len(p); i++ {
		p[i] = p[i-1] * 10
	}
	return p
}()

// scaled is a·10^p in one correctly rounded operation, false when 10^|p|
// is not a float64.
func scaled(a float64, p int) (float64, bool) {
	switch {
	case p >= 0 && p < len(pow10):
		return a * pow10[p], true
	case p < 0 && -p < len(pow10):
		return a / pow10[-p], true
	}
	return 0, false
}

// formatG writes the decimal digits d (no trailing zero; d[0] ≠ '0') with
// the decimal point dp digits from the left, as strconv's 'g' format with
// precision prec: %e when the exponent is below −4 or not below the
// precision (the digits' count when fewer, and all of them integer), else
// %f with the digits the precision leaves after the point.
func formatG(b, d []byte, dp, prec int) []byte {
	nd := len(d)
	eprec := prec
	if eprec > nd && nd >= dp {
		eprec = nd
	}
	if exp := dp - 1; exp < -4 || exp >= eprec {
		b = append(b, d[0])
		if nd > 1 {
			b = append(append(b, '.'), d[1:]...)
		}
		b = append(b, 'e')
		if exp < 0 {
			b, exp = append(b, '-'), -exp
		} else {
			b = append(b, '+')
		}
		if exp < 10 {
			b = append(b, '0')
		}
		return strconv.AppendInt(b, int64(exp), 10)
	}
	if prec > dp {
		prec = nd
	}
	frac := max(prec-dp, 0)
	if dp > 0 {
		for i := range dp {
			if i < nd {
				b = append(b, d[i])
			} else {
				b = append(b, '0')
			}
		}
	} else {
		b = append(b, '0')
	}
	if frac > 0 {
		b = append(b, '.')
		for i := 1; i <= frac; i++ {
			if j := dp + i - 1; j >= 0 && j < nd {
				b = append(b, d[j])
			} else {
				b = append(b, '0')
			}
		}
	}
	return b
}
