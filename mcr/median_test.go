package mcr

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// The sample median by its definition (the middle order statistic, or the
// mean of the two middle ones; common practice), computed by sorting, is the
// reference for the selection the outlier test uses.
func sortedMedian(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	h := len(s) / 2
	if len(s)%2 == 1 {
		return s[h]
	}
	return 0.5 * (s[h-1] + s[h])
}

func TestMedianBySelectionEqualsSortedMedian(t *testing.T) {
	cases := []struct {
		name string
		x    []float64
		want float64 // by hand from the definition
	}{
		{"odd", []float64{3, 1, 2}, 2},
		{"even", []float64{4, 1, 3, 2}, 2.5},
		{"one", []float64{7}, 7},
		{"all equal", []float64{5, 5, 5, 5}, 5},
		{"ties at the middle", []float64{1, 2, 2, 2, 9, 9}, 2},
	}
	for _, c := range cases {
		if got := median(c.x); got != c.want {
			t.Errorf("%s: median %v, want %v", c.name, got, c.want)
		}
	}
	r := rand.New(rand.NewPCG(1, 2))
	for trial := range 300 {
		n := 1 + r.IntN(400)
		x := make([]float64, n)
		for i := range x {
			switch trial % 3 {
			case 0:
				x[i] = r.NormFloat64()
			case 1: // heavily rounded, as an export with few digits
				x[i] = float64(r.IntN(4))
			default: // mostly zero, as the deviations of a MAD
				if r.IntN(10) == 0 {
					x[i] = r.ExpFloat64()
				}
			}
		}
		orig := append([]float64(nil), x...)
		if got, want := median(x), sortedMedian(x); got != want {
			t.Fatalf("trial %d (n=%d): median %v, sorted %v", trial, n, got, want)
		}
		for i := range x {
			if x[i] != orig[i] {
				t.Fatalf("trial %d: median changed its input", trial)
			}
		}
	}
}

// The per-spectrum robust deviation worked in one reused buffer is the
// MAD of its definition (1.4826 · median |x − median x|; Hampel, J. Am.
// Stat. Assoc. 1974; 1.4826 common practice for normal data), here the
// sorted-median form, bit for bit, and it leaves its input unchanged.
func TestRobustSDIntoEqualsDefinition(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	scratch := make([]float64, 500)
	for trial := range 200 {
		n := 1 + r.IntN(500)
		x := make([]float64, n)
		for i := range x {
			if trial%2 == 0 {
				x[i] = r.NormFloat64()
			} else {
				x[i] = float64(r.IntN(5)) // ties
			}
		}
		keep := append([]float64(nil), x...)
		med := sortedMedian(x)
		dev := make([]float64, n)
		for i, v := range x {
			dev[i] = math.Abs(v - med)
		}
		want := 1.4826 * sortedMedian(dev)
		if got := robustSDInto(x, scratch); got != want {
			t.Fatalf("trial %d (n %d): %v, want %v", trial, n, got, want)
		}
		for i := range x {
			if x[i] != keep[i] {
				t.Fatalf("trial %d: input changed at %d", trial, i)
			}
		}
	}
	if got := robustSDInto(nil, scratch); got != 0 {
		t.Errorf("empty: %v, want 0", got)
	}
	// By hand: 1, 2, 3, 4, 100 has median 3, deviations 2, 1, 0, 1, 97,
	// their median 1.
	if got := robustSDInto([]float64{4, 100, 1, 3, 2}, scratch); got != 1.4826 {
		t.Errorf("by hand: %v, want 1.4826", got)
	}
}
