package decimal

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// Parse must give exactly strconv.ParseFloat's bits whenever it accepts a
// cell (the Go standard library is the reference: correctly rounded
// decimal-to-binary conversion), and refuse what it cannot do exactly.
func TestParseSameBitsAsStrconv(t *testing.T) {
	cases := []string{"0", "-0", "+1", "1.", ".5", "24635.637", "4000", "-1.25e-3", "3E+2",
		"123456789012345", "0.000000000000000000001", "9.99999999999999e22", "1e22", "1e-22",
		"5e-324", "1e23", "1234567890123456", "1e", "e5", "1.2.3", "--1", "1e1000", "0x10", "inf", "NaN", "1_0", ""}
	rng := rand.New(rand.NewPCG(1990, 7))
	for i := 0; i < 20000; i++ {
		x := math.Exp(rng.NormFloat64()*8) * float64(1-2*(i%2))
		cases = append(cases, strconv.FormatFloat(x, 'g', 1+i%16, 64), strconv.FormatFloat(x, 'f', i%9, 64),
			strconv.FormatFloat(x, 'e', i%14, 64))
	}
	accepted := 0
	for _, c := range cases {
		got, ok := Parse([]byte(c))
		want, err := strconv.ParseFloat(c, 64)
		if !ok {
			continue
		}
		accepted++
		if err != nil {
			t.Fatalf("%q: fast path accepted %v, strconv refuses: %v", c, got, err)
		}
		if math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("%q: fast path %v (%x), strconv %v (%x)", c, got, math.Float64bits(got), want, math.Float64bits(want))
		}
	}
	if accepted < len(cases)/2 {
		t.Errorf("fast path took only %d of %d cells", accepted, len(cases))
	}
	for _, c := range []string{"1e23", "1234567890123456", "1e", "e5", "1.2.3", "--1", "0x10", "inf", "NaN", "1_0", ""} {
		if v, ok := Parse([]byte(c)); ok {
			t.Errorf("%q: fast path accepted %v, must defer to strconv", c, v)
		}
	}
}

// Plain accepts the decimal numbers instruments and spreadsheets write
// (ISO 6093's forms NR1, NR2 and NR3: an integer, a number with a decimal
// point, one with an exponent; from memory) and nothing else that
// strconv.ParseFloat reads as Go syntax: hexadecimal mantissas and '_'
// between digits (The Go Programming Language Specification, "Floating-
// point literals"), nor NaN and Inf, which the readers refuse apart.
func TestPlain(t *testing.T) {
	for _, c := range []string{"0", "-0", "+1", "1.", ".5", "-.5", "24635.637", "1e5", "1E+05", "-1.25e-3", "12345678901234567890", "1e400"} {
		if !Plain([]byte(c)) {
			t.Errorf("Plain(%q) = false, a plain decimal", c)
		}
	}
	for _, c := range []string{"", "+", ".", "-.", "e5", "1e", "1e+", "1.2.3", "--1", "0x10", "0x1.8dp+15", "0X1P-2",
		"50_901.5", "1_20", "1_000", "inf", "-Inf", "NaN", "Infinity", "1,5", "1.5d3", " 1", "1 "} {
		if Plain([]byte(c)) {
			t.Errorf("Plain(%q) = true, not a plain decimal", c)
		}
	}
}
