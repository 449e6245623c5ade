package svd

import (
	"math"
	"testing"

	lapackgonum "gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/mat"
)

// bidiagonalValues must be gonum's Dlasq1 (the reference library's dqds,
// LAPACK's DLASQ1) to the bit, and say the same info, on bidiagonals of 3
// to 60 rows: random entries over twelve decades, strongly graded ones
// (ratios down to 1e−8 per step, where dqds deflates and splits early),
// values near the underflow end (1e−150, so that the squares are 1e−300),
// zero diagonal and off-diagonal entries (rank-deficient and split
// matrices), repeated values, and the bidiagonals of triangular factors as
// EFA builds them; each alone and in a pair with the one before
// (bidiagonalValuesPair must give each the values it has alone).
func TestBidiagonalValuesAreDlasq1s(t *testing.T) {
	rng := newRNG(1994)
	var impl lapackgonum.Implementation
	type solved struct {
		name       string
		d, e, want []float64
		info       int
	}
	var prev *solved
	same := func(name string, n int, got []float64, c *solved) {
		t.Helper()
		for k := range got {
			if math.Float64bits(got[k]) != math.Float64bits(c.want[k]) {
				t.Fatalf("%s (n = %d): value %d = %v, Dlasq1 gives %v", name, n, k, got[k], c.want[k])
			}
		}
	}
	// Each bidiagonal alone, and in a pair with the one before
	// (bidiagonalValuesPair, other kinds and sizes included).
	check := func(name string, d, e []float64) {
		t.Helper()
		n := len(d)
		c := &solved{name: name, d: append([]float64(nil), d...), e: append(append([]float64(nil), e...), 0)}
		c.want = append([]float64(nil), d...)
		c.info = impl.Dlasq1(n, c.want, append([]float64(nil), c.e...), make([]float64, 4*n))
		d1, e1 := append([]float64(nil), c.d...), append([]float64(nil), c.e...)
		if info := bidiagonalValues(d1, e1, make([]float64, 4*n)); info != c.info {
			t.Fatalf("%s (n = %d): info %d, Dlasq1 %d", name, n, info, c.info)
		}
		if c.info == 0 { // else d holds nothing of use (see bidiagonalValues)
			same(name, n, d1, c)
		}
		if prev != nil {
			m := len(prev.d)
			d0, e0 := append([]float64(nil), prev.d...), append([]float64(nil), prev.e...)
			d1, e1 := append([]float64(nil), c.d...), append([]float64(nil), c.e...)
			info0, info1 := bidiagonalValuesPair(d0, e0, make([]float64, 4*m), d1, e1, make([]float64, 4*n))
			if info0 != prev.info || info1 != c.info {
				t.Fatalf("pair of %s and %s: info %d, %d; Dlasq1 %d, %d", prev.name, name, info0, info1, prev.info, c.info)
			}
			if prev.info == 0 {
				same(prev.name+" paired", m, d0, prev)
			}
			if c.info == 0 {
				same(name+" paired", n, d1, c)
			}
		}
		prev = c
	}
	for _, n := range []int{2, 3, 4, 5, 7, 12, 24, 25, 40, 60} {
		for trial := 0; trial < 40; trial++ {
			d, e := make([]float64, n), make([]float64, n-1)
			for i := range d {
				d[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(13)-6))
			}
			for i := range e {
				e[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(13)-6))
			}
			check("random", d, e)
			g := math.Pow(10, -float64(1+trial%8))
			for i := range d {
				d[i] = (1 + rng.Float64()) * math.Pow(g, float64(i))
				if i < n-1 {
					e[i] = rng.NormFloat64() * math.Pow(g, float64(i)+0.5)
				}
			}
			check("graded", d, e)
			for i := range d {
				d[n-1-i], d[i] = d[i], d[n-1-i]
				if i < n/2 {
					e[n-2-i], e[i] = e[i], e[n-2-i]
				}
			}
			check("graded upwards", d, e)
			for i := range d {
				d[i] = rng.NormFloat64() * 1e-150
				if i < n-1 {
					e[i] = rng.NormFloat64() * 1e-150
				}
			}
			check("tiny", d, e)
			for i := range d {
				d[i] = rng.NormFloat64()
				if i < n-1 {
					e[i] = rng.NormFloat64()
				}
			}
			d[rng.IntN(n)] = 0
			e[rng.IntN(n-1)] = 0
			check("zeros", d, e)
			for i := range d {
				d[i] = 1
				if i < n-1 {
					e[i] = 1e-3 * float64(i%2)
				}
			}
			check("repeated", d, e)
		}
	}
	// The bidiagonals Dgebrd makes of triangular factors, including
	// rank-deficient ones (a zero row and repeated rows).
	for _, p := range []int{3, 8, 24, 40} {
		for trial := 0; trial < 30; trial++ {
			d, e := efaBidiagonal(rng, p, trial)
			check("of a triangular factor", d, e)
		}
	}
}

// efaBidiagonal is the bidiagonal Dgebrd makes of a p × p triangular
// factor grown row by row as in evolve: trial%4 == 1 puts in a zero row,
// trial%4 == 2 repeats the first row, trial%4 == 3 grades the columns.
func efaBidiagonal(rng interface {
	NormFloat64() float64
	IntN(int) int
}, p, trial int) (d, e []float64) {
	r := make([]float64, p*p)
	rm := mat.NewDense(p, p, r) // R as evolve holds it, on r
	row := make([]float64, p)
	first := make([]float64, p)
	for i := 0; i < p+3; i++ {
		for j := range row {
			row[j] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(13)-6))
			if trial%4 == 3 {
				row[j] = rng.NormFloat64() * math.Pow(10, -0.5*float64(j))
			}
		}
		switch {
		case i == 0:
			copy(first, row)
		case trial%4 == 1 && i == 2:
			clear(row)
		case trial%4 == 2 && i%3 == 0:
			copy(row, first)
		}
		givensAppend(rm, row)
	}
	var impl lapackgonum.Implementation
	d, e = make([]float64, p), make([]float64, p)
	tq, tp := make([]float64, p), make([]float64, p)
	work := make([]float64, 64*p)
	impl.Dgebrd(p, p, r, p, d, e, tq, tp, work, len(work))
	return d, e[:p-1]
}

// randomQD is a qd array of n rows in DLASQ2's interleaved layout (4n
// entries, all non-negative) over decades of magnitude, with some zero,
// some near underflow entries, and a state for one step on rows i0..n0.
func randomQD(rng interface {
	NormFloat64() float64
	Float64() float64
	IntN(int) int
}, n int) *qdState {
	z := make([]float64, 4*n+8)
	for i := range z {
		v := rng.Float64() * math.Pow(10, float64(rng.IntN(9)-4))
		switch rng.IntN(20) {
		case 0:
			v = 0
		case 1:
			v *= 1e-300
		}
		z[i] = v
	}
	s := &qdState{z: z, n0: n - 1, i0: rng.IntN(max(1, n-3)), pp: rng.IntN(2)}
	s.tol = qdEps * 100
	s.tol2 = s.tol * s.tol
	s.sigma = math.Abs(rng.NormFloat64()) * float64(rng.IntN(2))
	s.dmin = rng.NormFloat64()
	s.dmin1, s.dmin2 = rng.NormFloat64(), rng.NormFloat64()
	s.dn, s.dn1, s.dn2 = rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
	switch rng.IntN(4) { // the equalities DLASQ4's cases look for
	case 0:
		s.dmin, s.dmin1 = s.dn, s.dn1
	case 1:
		s.dmin = s.dn1
	case 2:
		s.dmin = s.dn2
	}
	if rng.IntN(2) == 0 {
		s.dmin1, s.dmin2 = s.dn1, s.dn2
	}
	s.dmin = math.Abs(s.dmin)
	s.tau = math.Abs(rng.NormFloat64()) * 1e-3 * float64(rng.IntN(2))
	s.ttype = -rng.IntN(25)
	s.g = rng.Float64()
	s.qmax = 10 * rng.Float64()
	return s
}

// sameBits: equal to the bit, except that any NaN equals any NaN (Go does
// not promise which NaN an operation on NaNs returns).
func sameBits(a, b []float64) bool {
	for i := range a {
		if math.IsNaN(a[i]) && math.IsNaN(b[i]) {
			continue
		}
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return len(a) == len(b)
}

// Each step of the port against its gonum routine (the reference library,
// LAPACK's DLASQ3–DLASQ6 as gonum writes them) on random states, so that
// paths a whole run seldom takes (the protected transform, every shift
// case and its early returns, the negligible-shift transform) are checked
// bit for bit too.
func TestDqdsStepsAreGonums(t *testing.T) {
	rng := newRNG(2000)
	var impl lapackgonum.Implementation
	for trial := 0; trial < 4000; trial++ {
		n := 4 + rng.IntN(30)
		s := randomQD(rng, n)
		z0 := append([]float64(nil), s.z...)
		switch trial % 4 {
		case 0: // DLASQ6
			dmin, dmin1, dmin2, dn, dn1, dn2 := impl.Dlasq6(s.i0, s.n0, z0, s.pp)
			s.transformSafe()
			got := []float64{s.dmin, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2}
			if !sameBits(got, []float64{dmin, dmin1, dmin2, dn, dn1, dn2}) || !sameBits(s.z, z0) {
				t.Fatalf("trial %d: transformSafe differs from Dlasq6", trial)
			}
		case 1: // DLASQ5
			_, _, _, tau, _, dmin, dmin1, dmin2, dn, dn1, dn2 := impl.Dlasq5(s.i0, s.n0, z0, s.pp, s.tau, s.sigma)
			s.transform()
			got := []float64{s.tau, s.dmin, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2}
			if !sameBits(got, []float64{tau, dmin, dmin1, dmin2, dn, dn1, dn2}) || !sameBits(s.z, z0) {
				t.Fatalf("trial %d: transform differs from Dlasq5", trial)
			}
		case 2: // DLASQ4
			n0in := s.n0 + rng.IntN(4)
			tau, ttype, g := impl.Dlasq4(s.i0, s.n0, z0, s.pp, n0in, s.dmin, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2, s.tau, s.ttype, s.g)
			s.shift(n0in)
			if !sameBits([]float64{s.tau, s.g}, []float64{tau, g}) || s.ttype != ttype {
				t.Fatalf("trial %d (n0in−n0 = %d): shift (%v, %d, %v), Dlasq4 (%v, %d, %v)",
					trial, n0in-s.n0, s.tau, s.ttype, s.g, tau, ttype, g)
			}
		case 3: // DLASQ3
			i0, n0, pp, dmin, sigma, desig, qmax, nFail, iter, nDiv, ttype, dmin1, dmin2, dn, dn1, dn2, g, tau :=
				impl.Dlasq3(s.i0, s.n0, z0, s.pp, s.dmin, s.sigma, s.desig, s.qmax, s.nFail, s.iter, s.nDiv,
					s.ttype, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2, s.g, s.tau)
			s.step()
			got := []float64{s.dmin, s.sigma, s.desig, s.qmax, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2, s.g, s.tau}
			want := []float64{dmin, sigma, desig, qmax, dmin1, dmin2, dn, dn1, dn2, g, tau}
			ints := [7]int{s.i0, s.n0, s.pp, s.nFail, s.iter, s.nDiv, s.ttype}
			if !sameBits(got, want) || ints != [7]int{i0, n0, pp, nFail, iter, nDiv, ttype} || !sameBits(s.z, z0) {
				t.Fatalf("trial %d: step differs from Dlasq3", trial)
			}
		}
	}
}
