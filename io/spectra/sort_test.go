package spectra

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// descendingSeries is n one-point spectra recorded at times that fall, every
// time shared by two neighbours, each spectrum's value its file position.
func descendingSeries(n int) *Series {
	s := &Series{Axis: []float64{1000}, Values: mat.NewDense(n, 1, nil)}
	for i := 0; i < n; i++ {
		s.Times = append(s.Times, float64((n-i)/2))
		s.Names = append(s.Names, fmt.Sprint(i))
		s.Values.Set(i, 0, float64(i))
	}
	return s
}

// Rows come out in increasing time, and rows of equal time keep the order
// they had in the file: the definition of a stable sort (Knuth, The Art of
// Computer Programming vol. 3, §5, from memory). Each row's value travels
// with its time and name.
func TestSortByTimeIsStable(t *testing.T) {
	const n = 2001
	s := descendingSeries(n)
	s.sortByTime()
	for r := 1; r < n; r++ {
		a, b := s.Values.At(r-1, 0), s.Values.At(r, 0)
		switch {
		case s.Times[r] < s.Times[r-1]:
			t.Fatalf("row %d: time %g after %g", r, s.Times[r], s.Times[r-1])
		case s.Times[r] == s.Times[r-1] && b < a:
			t.Fatalf("row %d: spectra %g and %g of equal time %g swapped", r, a, b, s.Times[r])
		}
	}
	for r := 0; r < n; r++ {
		i := int(s.Values.At(r, 0))
		if s.Names[r] != fmt.Sprint(i) || s.Times[r] != float64((n-i)/2) {
			t.Fatalf("row %d: name %q and time %g do not belong to spectrum %d", r, s.Names[r], s.Times[r], i)
		}
	}
}

// BenchmarkSortByTime sorts 3·10⁵ one-point spectra given in descending
// time, the worst case of an insertion sort (minutes); n log n is ~0.1 s.
func BenchmarkSortByTime(b *testing.B) {
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		s := descendingSeries(300000)
		b.StartTimer()
		s.sortByTime()
	}
}

// median by selection equals the median by its definition (the middle value
// of the sorted sample, or the mean of the two middle ones; common
// practice), on random samples with many ties, sorted and reversed runs and
// sizes around the point where selection hands over to a sort.
func TestMedianMatchesSortedDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for n := 1; n < 300; n += 1 + n/7 {
		for trial := 0; trial < 6; trial++ {
			v := make([]float64, n)
			for i := range v {
				switch trial {
				case 0:
					v[i] = rng.NormFloat64()
				case 1:
					v[i] = float64(rng.IntN(4)) // ties
				case 2:
					v[i] = float64(i)
				case 3:
					v[i] = float64(n - i)
				case 4:
					v[i] = 7
				default:
					v[i] = math.Abs(rng.NormFloat64()) * 1e-3
				}
			}
			s := append([]float64(nil), v...)
			sort.Float64s(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			in := append([]float64(nil), v...)
			if got := median(v); got != want {
				t.Fatalf("n=%d trial %d: median %g, sorted definition %g", n, trial, got, want)
			}
			for i := range v {
				if v[i] != in[i] {
					t.Fatalf("n=%d: median changed its argument", n)
				}
			}
		}
	}
}
