package fresh

import "testing"

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
