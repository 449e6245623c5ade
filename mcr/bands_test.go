package mcr

import (
	"math"
	"reflect"
	"runtime"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func gauss(x, mu, w float64) float64 { d := (x - mu) / w; return math.Exp(-0.5 * d * d) }

// twoComponent is an invented, noise-free two-component system: a decay
// and a rise that never reach zero, and two overlapping bands on a common
// baseline, so that no time and no channel is selective.
func twoComponent(offset float64) (*mat.Dense, *mat.Dense) {
	n, m := 41, 60
	c := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		c.Set(i, 0, math.Exp(-2*t)+offset)
		c.Set(i, 1, 1-math.Exp(-2*t)+offset)
	}
	s := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		s.Set(i, 0, gauss(x, 0.35, 0.12)+offset)
		s.Set(i, 1, gauss(x, 0.6, 0.12)+offset)
	}
	return c, s
}

// lawtonSylvestre is the exact feasible region of a two-component
// non-negative resolution (Lawton & Sylvestre, Technometrics 1971): with
// T = [[1, t12], [t21, 1]], C T ≥ 0 and S T⁻ᵀ ≥ 0 reduce to the intervals
// −min c1/c2 ≤ t21 ≤ min s2/s1 and −min c2/c1 ≤ t12 ≤ min s1/s2 (det T > 0
// holds inside them). The extremes of f_1 are then found by a two-level
// exhaustive grid over that rectangle, on closed-form norms.
func lawtonSylvestre(c, s *mat.Dense, comp int) (lo, hi float64) {
	minRatio := func(a *mat.Dense, num, den int) float64 {
		r, _ := a.Dims()
		v := math.Inf(1)
		for i := 0; i < r; i++ {
			if a.At(i, den) > 0 {
				v = math.Min(v, a.At(i, num)/a.At(i, den))
			}
		}
		return v
	}
	l21, u21 := -minRatio(c, 0, 1), minRatio(s, 1, 0)
	l12, u12 := -minRatio(c, 1, 0), minRatio(s, 0, 1)
	gc, gs := gram(c), gram(s)
	norm := math.Sqrt(traceProd(gc, gs))
	// ‖c1 + t21 c2‖² and ‖s1 − t12 s2‖² in closed form; f_2 symmetric.
	f := func(t12, t21 float64) float64 {
		det := 1 - t12*t21
		if comp == 0 {
			a := gc.At(0, 0) + 2*t21*gc.At(0, 1) + t21*t21*gc.At(1, 1)
			b := gs.At(0, 0) - 2*t12*gs.At(0, 1) + t12*t12*gs.At(1, 1)
			return math.Sqrt(a*b) / (det * norm)
		}
		a := t12*t12*gc.At(0, 0) + 2*t12*gc.At(0, 1) + gc.At(1, 1)
		b := t21*t21*gs.At(0, 0) - 2*t21*gs.At(0, 1) + gs.At(1, 1)
		return math.Sqrt(a*b) / (det * norm)
	}
	search := func(sign float64) float64 {
		a0, a1, b0, b1 := l12, u12, l21, u21
		best := math.Inf(1)
		var bi, bj float64
		for level := 0; level < 3; level++ {
			const g = 200
			for i := 0; i <= g; i++ {
				t12 := a0 + (a1-a0)*float64(i)/g
				for j := 0; j <= g; j++ {
					t21 := b0 + (b1-b0)*float64(j)/g
					if v := sign * f(t12, t21); v < best {
						best, bi, bj = v, t12, t21
					}
				}
			}
			da, db := 2*(a1-a0)/200, 2*(b1-b0)/200
			a0, a1 = math.Max(l12, bi-da), math.Min(u12, bi+da)
			b0, b1 = math.Max(l21, bj-db), math.Min(u21, bj+db)
		}
		return sign * best
	}
	return search(1), search(-1)
}

func TestBandsMatchLawtonSylvestre(t *testing.T) {
	for _, off := range []float64{0.05, 0.2} {
		c, s := twoComponent(off)
		got, err := FeasibleBands(c, s, BandOptions{Mode: Species, Tolerance: 1e-4})
		if err != nil {
			t.Fatal(err)
		}
		for comp := 0; comp < 2; comp++ {
			lo, hi := lawtonSylvestre(c, s, comp)
			b := got.Bands[comp]
			t.Logf("offset %g comp %d: [%.6f, %.6f] exact [%.6f, %.6f] value %.4f", off, comp+1, b.Min, b.Max, lo, hi, b.Value)
			if !b.Feasible {
				t.Errorf("offset %g component %d: search ended infeasible", off, comp+1)
			}
			// Penalty solutions sit just outside the region (violation
			// ≤ Tolerance), so the band may exceed the exact one slightly.
			if math.Abs(b.Min-lo) > 2e-3*hi || math.Abs(b.Max-hi) > 2e-3*hi {
				t.Errorf("offset %g component %d: band [%.5f, %.5f], Lawton–Sylvestre [%.5f, %.5f]", off, comp+1, b.Min, b.Max, lo, hi)
			}
			if hi-lo < 0.05 {
				t.Errorf("offset %g: the non-selective case should be ambiguous, exact band only %.4f wide", off, hi-lo)
			}
		}
	}
}

// bump is sin² on [a, b] and zero outside: compact support gives exactly
// selective times and channels.
func bump(x, a, b float64) float64 {
	if x <= a || x >= b {
		return 0
	}
	v := math.Sin(math.Pi * (x - a) / (b - a))
	return v * v
}

func threeComponent(selective bool) (*mat.Dense, *mat.Dense) {
	n, m := 50, 80
	c := mat.NewDense(n, 3, nil)
	s := mat.NewDense(m, 3, nil)
	off := 0.0
	if !selective {
		off = 0.15
	}
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		c.SetRow(i, []float64{bump(t, -0.4, 0.45) + off, bump(t, 0.15, 0.85) + off, bump(t, 0.55, 1.4) + off})
	}
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		s.SetRow(i, []float64{bump(x, -0.1, 0.4) + off, bump(x, 0.25, 0.75) + off, bump(x, 0.6, 1.1) + off})
	}
	return c, s
}

func contribution(c, s *mat.Dense, j int) float64 {
	return math.Sqrt(colNormSq(c, j) * colNormSq(s, j) / traceProd(gram(c), gram(s)))
}

// With a selective time and a selective channel for every component, a
// rotation T keeping C T ≥ 0 and S T⁻ᵀ ≥ 0 must have T ≥ 0 and T⁻¹ ≥ 0,
// and a non-negative matrix with a non-negative inverse is a scaled
// permutation (Berman & Plemmons, Nonnegative Matrices in the Mathematical
// Sciences, 1979, lemma 6.2.3 (from memory)): the bands collapse to the truth.
func TestBandsCollapseWithSelectivity(t *testing.T) {
	c, s := threeComponent(true)
	got, err := FeasibleBands(c, s, BandOptions{Mode: Species, Tolerance: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	for j, b := range got.Bands {
		truth := contribution(c, s, j)
		t.Logf("component %d: [%.5f, %.5f], truth %.5f", j+1, b.Min, b.Max, truth)
		if b.Max-b.Min > 2e-3 || b.Min > truth+1e-9 || b.Max < truth-1e-9 {
			t.Errorf("component %d: band [%.5f, %.5f] should collapse onto %.5f", j+1, b.Min, b.Max, truth)
		}
	}
}

// Without selectivity the bands are wide; searched from a rotated (but
// feasible) solution they must still contain the true contributions, since
// the truth is one of the feasible rotations (definition of the band).
func TestBandsWideAndContainTruth(t *testing.T) {
	c, s := threeComponent(false)
	t0 := mat.NewDense(3, 3, []float64{1, 0.05, 0, 0.04, 1, 0.03, 0, 0.05, 1})
	var c1, s1, inv mat.Dense
	c1.Mul(c, t0)
	if err := inv.Inverse(t0); err != nil {
		t.Fatal(err)
	}
	s1.Mul(s, inv.T())
	if mat.Min(&c1) < 0 || mat.Min(&s1) < 0 {
		t.Fatal("the rotated start is not feasible; choose a smaller rotation")
	}
	got, err := FeasibleBands(&c1, &s1, BandOptions{Mode: Species, Tolerance: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	for j, b := range got.Bands {
		truth := contribution(c, s, j)
		t.Logf("component %d: [%.5f, %.5f], truth %.5f, start %.5f", j+1, b.Min, b.Max, truth, b.Value)
		if b.Max-b.Min < 0.05 {
			t.Errorf("component %d: band only %.4f wide without selectivity", j+1, b.Max-b.Min)
		}
		if truth < b.Min-1e-3 || truth > b.Max+1e-3 {
			t.Errorf("component %d: band [%.5f, %.5f] misses the truth %.5f", j+1, b.Min, b.Max, truth)
		}
		if mat.Min(mat.NewVecDense(len(b.MinSpectrum), b.MinSpectrum)) < -1e-3 {
			t.Errorf("component %d: extreme spectrum is negative", j+1)
		}
	}
	// Closure shrinks the feasible set, so its bands nest inside; every
	// extreme keeps Σ_j c_j(t) (definition of a subset).
	closed, err := FeasibleBands(&c1, &s1, BandOptions{Mode: Species, Closure: true, Tolerance: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	for j, b := range closed.Bands {
		o := got.Bands[j]
		if b.Min < o.Min-1e-3 || b.Max > o.Max+1e-3 {
			t.Errorf("component %d: closure band [%.4f, %.4f] is not inside [%.4f, %.4f]", j+1, b.Min, b.Max, o.Min, o.Max)
		}
	}
	// A known spectrum stays exactly itself at both extremes.
	known, err := FeasibleBands(&c1, &s1, BandOptions{Mode: Species, Known: []bool{true, false, false}, Tolerance: 1e-4})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range known.Bands[0].MaxSpectrum {
		if math.Abs(v-s1.At(i, 0)) > 1e-12 {
			t.Fatalf("known spectrum moved at channel %d: %g vs %g", i, v, s1.At(i, 0))
		}
	}
}

// Found gives each component's band once, as soon as both of its ends are
// found, and it is the band FeasibleBands returns (the same values and the
// same slices), at any number of workers. Checked on the three-component
// system without selectivity (invented, as above), whose bands are wide.
func TestBandsFoundAsReturned(t *testing.T) {
	c, s := threeComponent(false)
	for _, procs := range []int{1, 2, 3} {
		old := runtime.GOMAXPROCS(procs)
		var mu sync.Mutex
		found := map[int][]Band{}
		got, err := FeasibleBands(c, s, BandOptions{Mode: Species, Tolerance: 1e-4, Found: func(j int, b Band) {
			mu.Lock()
			defer mu.Unlock()
			found[j] = append(found[j], b)
		}})
		runtime.GOMAXPROCS(old)
		if err != nil {
			t.Fatal(err)
		}
		for j, b := range got.Bands {
			if len(found[j]) != 1 {
				t.Fatalf("GOMAXPROCS %d: component %d found %d times, want once", procs, j+1, len(found[j]))
			}
			f := found[j][0]
			if !reflect.DeepEqual(f, b) || &f.MinProfile[0] != &b.MinProfile[0] || &f.MaxSpectrum[0] != &b.MaxSpectrum[0] {
				t.Errorf("GOMAXPROCS %d: component %d found %+v, returned %+v", procs, j+1, f, b)
			}
		}
		if len(found) != len(got.Bands) {
			t.Errorf("GOMAXPROCS %d: %d components found, %d returned", procs, len(found), len(got.Bands))
		}
	}
}
