// Package decimal reads the plain decimal numbers that instruments and
// strconv.AppendFloat write, bit for bit as strconv.ParseFloat reads them,
// without its general algorithm where a correctly rounded shortcut exists.
package decimal

// pow10 holds the powers of ten that are exact in float64 (10^22 is the
// largest: 5^22 < 2^53).
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// Parse parses the plain decimals instruments write (optional sign,
// digits with one optional point, optional exponent) when at most 15
// digits are given and the decimal exponent is within ±22: the digits are
// then an exact integer in float64 and 10^|e| an exact power, so one
// multiplication or division is correctly rounded and gives the same bits
// as strconv.ParseFloat (Clinger, PLDI 1990, "How to read floating point
// numbers accurately"). Anything else returns ok = false and goes to
// strconv.
func Parse(b []byte) (v float64, ok bool) {
	i, neg := 0, false
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var mant uint64
	digits, frac := 0, 0
	point := false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			mant = mant*10 + uint64(c-'0')
			digits++
			if point {
				frac++
			}
		case c == '.' && !point:
			point = true
		default:
			goto exponent
		}
	}
exponent:
	if digits == 0 || digits > 15 {
		return 0, false
	}
	exp := 0
	if i < len(b) {
		if b[i] != 'e' && b[i] != 'E' {
			return 0, false
		}
		i++
		eneg := false
		if i < len(b) && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		if i == len(b) || len(b)-i > 3 {
			return 0, false
		}
		for ; i < len(b); i++ {
			c := b[i]
			if c < '0' || c > '9' {
				return 0, false
			}
			exp = exp*10 + int(c-'0')
		}
		if eneg {
			exp = -exp
		}
	}
	exp -= frac
	v = float64(mant)
	switch {
	case exp == 0:
	case exp > 0 && exp <= 22:
		v *= pow10[exp]
	case exp < 0 && exp >= -22:
		v /= pow10[-exp]
	default:
		return 0, false
	}
	if neg {
		v = -v
	}
	return v, true
}

// Plain says b is a plain decimal number, the only numbers a data file
// holds: an optional sign, digits with at most one decimal point (at
// least one digit), and an optional exponent (e or E, an optional sign,
// digits). strconv.ParseFloat reads Go's literals too ("0x1.8dp+15",
// "50_901.5", "1_20"), which no instrument or spreadsheet writes: in a
// data file they are a corrupt or hand-edited cell, and read they would
// be a silent value (1_20 became 120 s).
func Plain(b []byte) bool {
	i := 0
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		i++
	}
	digits, point := 0, false
	for ; i < len(b); i++ {
		c := b[i]
		if c >= '0' && c <= '9' {
			digits++
		} else if c == '.' && !point {
			point = true
		} else {
			break
		}
	}
	if digits == 0 {
		return false
	}
	if i == len(b) {
		return true
	}
	if b[i] != 'e' && b[i] != 'E' {
		return false
	}
	i++
	if i < len(b) && (b[i] == '-' || b[i] == '+') {
		i++
	}
	if i == len(b) {
		return false
	}
	for ; i < len(b); i++ {
		if b[i] < '0' || b[i] > '9' {
			return false
		}
	}
	return true
}
