package output

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// AppendG against its definition, strconv.AppendFloat(b, v, 'g', prec, 64)
// (Go's standard library: correctly rounded digits of the exact binary
// value), byte for byte: random bit patterns (every exponent), numbers of
// every magnitude from 1e−25 to 1e25, short decimals as instruments write
// them, integers, the neighbours of every power of ten and of numbers half
// way between two prec-digit decimals (where rounding turns), negatives
// and the precisions the result files use (6 and 10) and every other from
// 1 to 17. It also checks that the fast path is taken for most numbers
// of ordinary size, so that the comparison is not of strconv with itself.
func TestAppendGAsStrconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	var vals []float64
	for range 200000 {
		vals = append(vals, math.Float64frombits(rng.Uint64()))
		vals = append(vals, math.Pow(10, 50*rng.Float64()-25)*(rng.Float64()+0.5))
		vals = append(vals, float64(rng.IntN(2000000)-1000000)/math.Pow(10, float64(rng.IntN(9))))
		vals = append(vals, float64(rng.Int64N(1<<53)))
	}
	for k := -25; k <= 25; k++ {
		p := math.Pow(10, float64(k))
		for _, v := range []float64{p, math.Nextafter(p, 0), math.Nextafter(p, math.Inf(1)), 9.9999995 * p, 9.999999999995 * p, 0.99999949999 * p} {
			vals = append(vals, v, math.Nextafter(v, 0), math.Nextafter(v, math.Inf(1)))
		}
	}
	halves := func(prec int) []float64 {
		var out []float64
		for range 20000 {
			m := float64(rng.Int64N(int64(9*math.Pow(10, float64(prec-1))))) + math.Pow(10, float64(prec-1))
			v := (m + 0.5) * math.Pow(10, float64(rng.IntN(30)-15))
			out = append(out, v, math.Nextafter(v, 0), math.Nextafter(v, math.Inf(1)))
		}
		return out
	}
	fast, total := 0, 0
	for prec := 1; prec <= 17; prec++ {
		vs := append(append([]float64{}, vals...), halves(min(prec, 15))...)
		if prec != 6 && prec != 10 {
			vs = vs[:len(vs)/10]
		}
		for _, v := range vs {
			for _, x := range []float64{v, -v} {
				want := strconv.AppendFloat([]byte("x"), x, 'g', prec, 64)
				got := AppendG([]byte("x"), x, prec)
				if string(got) != string(want) {
					t.Fatalf("AppendG(%v, %d) = %q, strconv gives %q", x, prec, got[1:], want[1:])
				}
			}
			if a := math.Abs(v); prec == 10 && a > 1e-15 && a < 1e15 {
				total++
				var d [16]byte
				if _, _, ok := gDigits(a, prec, &d); ok {
					fast++
				}
			}
		}
	}
	if fast < total*3/4 {
		t.Errorf("the fast path took %d of %d numbers, want most", fast, total)
	}
}

func BenchmarkAppendG(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	vals := make([]float64, 1024)
	for i := range vals {
		vals[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(8)-4))
	}
	buf := make([]byte, 0, 32)
	b.Run("AppendG", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			buf = AppendG(buf[:0], vals[i%len(vals)], 10)
		}
	})
	b.Run("strconv", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			buf = strconv.AppendFloat(buf[:0], vals[i%len(vals)], 'g', 10, 64)
		}
	})
}

// AppendGValue writes AppendG's text, and the value it gives when exact is
// the one strconv.ParseFloat reads from that text (the standard library's
// correctly rounded reader, the reference), bit for bit; on most numbers
// of ordinary size it is exact. AppendDigitsValue's "0" is 0.
func TestAppendGValueReadsBack(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 24))
	exact, total := 0, 0
	for range 300000 {
		for _, v := range []float64{
			math.Float64frombits(rng.Uint64()),
			math.Pow(10, 50*rng.Float64()-25) * (rng.Float64() + 0.5),
			float64(rng.IntN(2000000)-1000000) / math.Pow(10, float64(rng.IntN(9))),
		} {
			prec := []int{6, 10, 1 + rng.IntN(15)}[rng.IntN(3)]
			got, val, ok := AppendGValue([]byte("x"), v, prec)
			if want := AppendG([]byte("x"), v, prec); string(got) != string(want) {
				t.Fatalf("AppendGValue(%v, %d) wrote %q, AppendG %q", v, prec, got[1:], want[1:])
			}
			if a := math.Abs(v); a > 1e-15 && a < 1e15 {
				total++
			}
			if !ok {
				continue
			}
			exact++
			want, err := strconv.ParseFloat(string(got[1:]), 64)
			if err != nil || math.Float64bits(val) != math.Float64bits(want) {
				t.Fatalf("AppendGValue(%v, %d) = %q gave %v, ParseFloat %v (%v)", v, prec, got[1:], val, want, err)
			}
		}
	}
	if exact < total*9/10 {
		t.Errorf("exact for %d of %d numbers of ordinary size", exact, total)
	}
	if b, v, ok := AppendDigitsValue(nil, math.Copysign(0, -1), 6); string(b) != "0" || v != 0 || math.Signbit(v) || !ok {
		t.Errorf("−0: %q, %v, %v", b, v, ok)
	}
	if b, _, ok := AppendDigitsValue(nil, math.NaN(), 6); len(b) != 0 || ok {
		t.Error("NaN written or exact")
	}
}
