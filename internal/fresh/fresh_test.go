package fresh

import (
	"runtime"
	"testing"
)

// Advice changes no value (madvise(2): MADV_HUGEPAGE only tells the kernel
// how to back the pages), whatever the slice's size or alignment.
func TestAdviceKeepsValues(t *testing.T) {
	for _, n := range []int{0, 1, 1000, 3 << 18, 1<<20 + 7} {
		buf := make([]float64, n+1)
		v := buf[1:] // not aligned to a page
		for i := range v {
			v[i] = float64(i) * 0.5
		}
		Advise(v)
		for i := range v {
			if v[i] != float64(i)*0.5 {
				t.Fatalf("n=%d: value %d changed to %g", n, i, v[i])
			}
		}
	}
}

func TestMatrixIsZero(t *testing.T) {
	a := Matrix(700, 900) // 5 MB: advised
	r, c := a.Dims()
	if r != 700 || c != 900 {
		t.Fatalf("dims %d × %d, want 700 × 900", r, c)
	}
	for i := 0; i < r; i++ {
		for j, v := range a.RawRowView(i) {
			if v != 0 {
				t.Fatalf("entry (%d,%d) = %g, want 0", i, j, v)
			}
		}
	}
}

// A matrix from Overwritten keeps what is written into it: its memory is
// the matrix's own (the garbage collector keeps it while the matrix lives
// and hands it to nothing else), after collections and other allocations
// of the same size, which would reuse it were it free.
func TestOverwrittenKeepsWhatIsWritten(t *testing.T) {
	for _, d := range [][2]int{{1, 1}, {1, 3}, {7, 5}, {700, 900}} {
		a := Overwritten(d[0], d[1])
		if r, c := a.Dims(); r != d[0] || c != d[1] {
			t.Fatalf("dims %d × %d, want %d × %d", r, c, d[0], d[1])
		}
		for i := 0; i < d[0]; i++ {
			for j := range a.RawRowView(i) {
				a.Set(i, j, float64(i*d[1]+j)+0.5)
			}
		}
		for k := 0; k < 3; k++ {
			runtime.GC()
			b := Overwritten(d[0], d[1])
			for i := 0; i < d[0]; i++ {
				row := b.RawRowView(i)
				for j := range row {
					row[j] = -1
				}
			}
		}
		for i := 0; i < d[0]; i++ {
			for j, v := range a.RawRowView(i) {
				if want := float64(i*d[1]+j) + 0.5; v != want {
					t.Fatalf("%d × %d: entry (%d,%d) = %g after collections, want %g", d[0], d[1], i, j, v, want)
				}
			}
		}
	}
}
