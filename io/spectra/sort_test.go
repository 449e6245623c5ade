package spectra

import (
	"fmt"
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
