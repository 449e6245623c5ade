package svd

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Definition of EFA (Gampp et al., Talanta 1985): forward row i holds the singular values of
// rows 0..i, backward row i those of rows i..n−1. Checked against a direct LAPACK SVD of each
// block.
func TestEFAAgainstBlockSVDs(t *testing.T) {
	rng := newRNG(1985)
	n, m := 30, 50
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	e, err := EFA(d, 5)
	if err != nil {
		t.Fatal(err)
	}
	if !e.Exact || e.Columns != n {
		t.Fatalf("exact %v, columns %d", e.Exact, e.Columns)
	}
	for i := 0; i < n; i++ {
		fw := singularValues(t, d.Slice(0, i+1, 0, m))
		bw := singularValues(t, d.Slice(i, n, 0, m))
		for k := 0; k < 5; k++ {
			check := func(name string, got float64, vals []float64) {
				want := math.Log10(e.Floor)
				if k < len(vals) && vals[k] > e.Floor {
					want = math.Log10(vals[k])
				}
				if !(math.Abs(got-want) <= 1e-9) {
					t.Errorf("%s row %d value %d: %g, block SVD %g", name, i, k, got, want)
				}
			}
			check("forward", e.Forward.At(i, k), fw)
			check("backward", e.Backward.At(i, k), bw)
		}
	}
}

// Projected EFA on a matrix too large for the exact sweep: signal values agree with the
// block SVDs, noise values are lower bounds (a projection cannot raise singular values,
// Cauchy interlacing).
func TestEFAProjected(t *testing.T) {
	rng := newRNG(1987)
	n, m := 300, 600
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	e, err := EFA(d, 5)
	if err != nil {
		t.Fatal(err)
	}
	if e.Exact {
		t.Fatal("expected the projected sweep for 300x600")
	}
	for _, i := range []int{40, 150, 299} {
		fw := singularValues(t, d.Slice(0, i+1, 0, m))
		edge := 1e-3 * (math.Sqrt(float64(i+1)) + math.Sqrt(float64(m))) // Marchenko–Pastur edge of the block
		for k := 0; k < 5; k++ {
			got := math.Pow(10, e.Forward.At(i, k))
			if fw[k] > 3*edge && !(math.Abs(got/fw[k]-1) <= 1e-3) {
				t.Errorf("row %d signal value %d: %g, block SVD %g", i, k, got, fw[k])
			}
			if got > fw[k]*(1+1e-9) {
				t.Errorf("row %d value %d: %g above the exact %g", i, k, got, fw[k])
			}
		}
	}
}

// Analytic presence windows: species 1 on rows 0..39, species 2 on rows 15..52, species 3
// from row 30 to the end (profiles exactly zero outside, by construction). First-in-first-out
// pairing (Maeder 1987) must give windows [0,39], [15,52], [30,59].
func TestEFAWindowsAnalytic(t *testing.T) {
	n, m := 60, 200
	c := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		fi := float64(i)
		switch {
		case i <= 30:
			c.Set(i, 0, 1)
		case i <= 39:
			c.Set(i, 0, 1-0.8*(fi-30)/9)
		}
		if i >= 15 && i <= 52 {
			c.Set(i, 1, (1-math.Exp(-(fi-14)/5))*math.Min(1, (53-fi)/6))
		}
		if i >= 30 {
			c.Set(i, 2, 1-math.Exp(-(fi-29)/4))
		}
	}
	s := mat.NewDense(m, 3, nil)
	for k, band := range [][]float64{gaussBand(m, 50, 12), gaussBand(m, 95, 15), gaussBand(m, 140, 10)} {
		for j := range band {
			s.Set(j, k, band[j])
		}
	}
	d := product(c, s)
	sigma := 1e-3
	addNoise(newRNG(15), d, sigma)
	e, err := EFA(d, 4)
	if err != nil {
		t.Fatal(err)
	}
	w := e.Windows(3, sigma)
	wantA, wantD := []int{0, 15, 30}, []int{39, 52, 59}
	for j := 0; j < 3; j++ {
		if abs(w.Appear[j]-wantA[j]) > 1 || abs(w.Disappear[j]-wantD[j]) > 1 {
			t.Errorf("component %d: window [%d, %d], want [%d, %d]", j, w.Appear[j], w.Disappear[j], wantA[j], wantD[j])
		}
	}
	for _, row := range []struct{ i, rank int }{{5, 1}, {20, 2}, {35, 3}, {45, 2}, {57, 1}} {
		if w.LocalRank[row.i] != row.rank {
			t.Errorf("local rank at row %d = %d, want %d", row.i, w.LocalRank[row.i], row.rank)
		}
	}
	// With the noise level left to EFA's own estimate the windows are the same.
	w2 := e.Windows(3, 0)
	for j := 0; j < 3; j++ {
		if abs(w2.Appear[j]-wantA[j]) > 1 || abs(w2.Disappear[j]-wantD[j]) > 1 {
			t.Errorf("estimated σ %g: component %d window [%d, %d]", e.Sigma, j, w2.Appear[j], w2.Disappear[j])
		}
	}
	// Initial profiles resemble the true ones (cosine similarity), zero outside the windows.
	p := w.InitialProfiles(d, 3)
	if p == nil {
		t.Fatal("no profiles")
	}
	for j, min := range []float64{0.99, 0.95, 0.99} {
		got := cosine(p.ColView(j), c.ColView(j))
		if got < min {
			t.Errorf("profile %d: cosine %.4f with the true profile, want ≥ %.2f", j, got, min)
		}
		for i := 0; i < n; i++ {
			if !w.Present[i][j] && p.At(i, j) != 0 {
				t.Errorf("profile %d nonzero at absent row %d", j, i)
				break
			}
		}
	}
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

func cosine(a, b mat.Vector) float64 {
	return mat.Dot(a, b) / (mat.Norm(a, 2) * mat.Norm(b, 2))
}

func TestEFAZeroAndErrors(t *testing.T) {
	d := mat.NewDense(8, 20, nil)
	e, err := EFA(d, 3)
	if err != nil {
		t.Fatal(err)
	}
	for _, v := range append(e.Forward.RawMatrix().Data, e.Backward.RawMatrix().Data...) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatal("non-finite EFA value for the zero matrix")
		}
	}
	w := e.Windows(2, 0)
	for i, r := range w.LocalRank {
		if r != 0 {
			t.Errorf("zero matrix: local rank %d at row %d", r, i)
		}
	}
	if p := w.InitialProfiles(d, 2); p == nil || mat.Norm(p, 2) != 0 {
		t.Errorf("zero matrix: profiles %v", p)
	}
	if _, err := EFA(nil, 2); err == nil {
		t.Error("nil: no error")
	}
	if _, err := EFA(d, -1); err == nil {
		t.Error("negative maxFactors: no error")
	}
}

// The sweeps' own route to a window's singular values (squareValues:
// Householder bidiagonalization as LAPACK's Dgebd2, its reflectors formed
// by reflector, then dqds as Dlasq1) against gonum's mat.SVD (LAPACK's
// Dgesvd, the reference library) on triangular factors as the sweeps
// build them, from 2 to 40 columns, with entries over twelve decades, a
// zero row and repeated rows, alone and two at a time (pair, as evolve
// takes them); matrices that Dgesvd would scale first are left to mat.SVD
// (values reports false). Both routes are backward stable: each gives the
// exact values of R + E with ‖E‖₂ a small multiple of p·ε·‖R‖₂ (Golub &
// Van Loan, Matrix Computations, 4th ed. 2013, §5.1.3 and §8.6.3), so by
// Weyl's inequality they differ by at most that much in every value; the
// test holds them to 2·p·ε·σ₁, and a pair to each alone, bit for bit.
func TestSquareValuesAreDgesvds(t *testing.T) {
	rng := newRNG(85)
	worst := 0.0
	for _, p := range []int{2, 3, 8, 24, 25, 40} {
		var prev *mat.Dense
		var prevGot []float64
		for trial := 0; trial < 20; trial++ {
			r := mat.NewDense(p, p, nil)
			row := make([]float64, p)
			for i := 0; i < p+3; i++ {
				for j := range row {
					row[j] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(13)-6))
				}
				switch {
				case trial%4 == 1 && i == 2:
					for j := range row {
						row[j] = 0
					}
				case trial%4 == 2 && i > 0 && i%3 == 0:
					copy(row, r.RawRowView(0))
				}
				givensAppend(r, row)
			}
			got := make([]float64, p)
			if !newSquareValues(p).values(r, got) {
				t.Fatalf("p = %d, trial %d: values refused an ordinary matrix", p, trial)
			}
			var sv mat.SVD
			if !sv.Factorize(r, mat.SVDNone) {
				t.Fatal("mat.SVD did not converge")
			}
			want := sv.Values(nil)
			bound := 2 * float64(p) * 0x1p-52 * want[0]
			for k := range want {
				if d := math.Abs(got[k] - want[k]); !(d <= bound) {
					t.Fatalf("p = %d, trial %d: value %d = %v, mat.SVD gives %v (%.3g of σ₁ apart, bound %.3g)", p, trial, k, got[k], want[k], d/want[0], bound/want[0])
				} else {
					worst = math.Max(worst, d/(0x1p-52*want[0]))
				}
			}
			// Two at once (pair, as evolve takes them) give each the same
			// as alone.
			if prev != nil {
				g0, g1 := make([]float64, p), make([]float64, p)
				if ok0, ok1 := newSquareValues(p).pair(prev, r, g0, g1); !ok0 || !ok1 {
					t.Fatalf("p = %d, trial %d: pair refused ordinary matrices", p, trial)
				}
				for k := range want {
					if math.Float64bits(g0[k]) != math.Float64bits(prevGot[k]) || math.Float64bits(g1[k]) != math.Float64bits(got[k]) {
						t.Fatalf("p = %d, trial %d: value %d in a pair %v, %v; alone %v, %v", p, trial, k, g0[k], g1[k], prevGot[k], got[k])
					}
				}
			}
			prev, prevGot = r, got
		}
	}
	t.Logf("largest difference from mat.SVD: %.3g ε·σ₁", worst)
	tiny := mat.NewDense(3, 3, []float64{1e-120, 2e-120, 0, 0, 1e-121, 0, 0, 0, 3e-122})
	if newSquareValues(3).values(tiny, make([]float64, 3)) {
		t.Error("values took a matrix Dgesvd scales first")
	}
}

// Windows whose triangular factor squareValues leaves to mat.SVD (largest
// entry outside [1e−100, 1e100], where Dgesvd would scale first) mixed with
// windows it takes, alone and in either place of a pair: scores whose rows
// grow by a factor 10^0.25 from about 1e−105 (or 1e95), so that the forward
// factor crosses 1e−100 (1e100) about row 20, at an odd or an even row by
// the offset. The sweeps
// must give each block's singular values as mat.SVD of the block itself
// (the definition of EFA, Gampp et al. 1985; gonum's Dgesvd as the
// reference) within what both routes guarantee, 64·ε·σ₁ of the block
// (normwise backward stability, Golub & Van Loan §8.6; the constant from
// memory, generous for 12 columns).
func TestEFAAcrossTheScalingLimit(t *testing.T) {
	for _, start := range []float64{-105, -105.25, 95, 94.75} {
		rng := newRNG(100)
		n, p := 40, 12
		// U S = Y exactly: S a power of two, so that the scores are the rows below.
		const two300 = 0x1p300
		u := mat.NewDense(n, p, nil)
		y := mat.NewDense(n, p, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < p; j++ {
				v := rng.NormFloat64() * math.Pow(10, start+0.25*float64(i))
				y.Set(i, j, v)
				u.Set(i, j, v*two300)
			}
		}
		s := make([]float64, p)
		for k := range s {
			s[k] = 1 / two300
		}
		fac := &Factors{U: u, S: s, V: mat.NewDense(p, p, nil)}
		e, err := efaSweeps(fac, n, p, 4, true)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < n; i++ {
			for _, c := range []struct {
				name string
				got  []float64
				blk  mat.Matrix
			}{
				{"forward", e.Forward.RawRowView(i), y.Slice(0, i+1, 0, p)},
				{"backward", e.Backward.RawRowView(i), y.Slice(i, n, 0, p)},
			} {
				vals := singularValues(t, c.blk)
				for k, g := range c.got {
					want := 0.0
					if k < len(vals) {
						want = vals[k]
					}
					// In log10, plus the rounding of the logarithm itself.
					tol := 64*0x1p-52*vals[0]/(want*math.Ln10) + 8*0x1p-52*math.Abs(math.Log10(want))
					ok := math.Abs(g-math.Log10(want)) <= tol
					if want <= 2*e.Floor { // near or below the floor: reported as the floor
						ok = ok || g == math.Log10(e.Floor)
					}
					if !ok {
						t.Errorf("start 1e%g, %s row %d value %d: log10 %g, block SVD %g", start, c.name, i, k, g, math.Log10(want))
					}
				}
			}
		}
	}
}
