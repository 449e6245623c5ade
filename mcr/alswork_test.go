package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// ALS's half steps form their products in kept buffers, without the
// transposes they took before; each must give the bits of the plain path
// (gramW, the Data's own products, SolveMany on the transposed right-hand
// sides), so that a resolution's output does not move. The reference is
// the definition each replaces: Cᵀ A C, Dᵀ A C = B^{-1/2} V Σ Uᵀ A^{1/2} C
// (WeightedCompressed's doc) and tr(Cᵀ diag(w) X).
func TestALSWorkIsThePlainPath(t *testing.T) {
	for _, weighted := range []bool{false, true} {
		wc, c := benchWeightedCompressed(300, 401, 4)
		var d Data = wc
		if !weighted {
			d = Compressed{U: wc.U, Sigma: wc.Sigma, V: wc.V, FrobSq: wc.FrobSq}
		}
		row, col := weightsOf(d)
		w := newALSWork(d, 4)
		s := d.MulProfiles(c)
		for pass := 0; pass < 2; pass++ { // the second pass reuses dirty buffers
			g, dtc := w.profilesProducts(d, c)
			if !vecmath.SameBitsMatrix(g, gramW(c, row)) || !vecmath.SameBitsMatrix(dtc, d.MulProfiles(c)) {
				t.Fatalf("weighted %v pass %d: profiles' products differ from gramW and MulProfiles", weighted, pass)
			}
			g, ds := w.spectraProducts(d, s)
			if !vecmath.SameBitsMatrix(g, gramW(s, col)) || !vecmath.SameBitsMatrix(ds, d.MulSpectra(s)) {
				t.Fatalf("weighted %v pass %d: spectra's products differ from gramW and MulSpectra", weighted, pass)
			}
			if !vecmath.SameBitsMatrix(w.profilesGram(c), gramW(c, row)) {
				t.Fatalf("weighted %v: profilesGram in the buffer differs from gramW", weighted)
			}
			got, want := w.residualSS(d, c, s, 1e9, 7), residualSS(d, c, s, 1e9, 7)
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("weighted %v: residualSS in the buffers %v, residualSS %v", weighted, got, want)
			}
			got, want = traceScaled(c, row, ds), traceProd(scaleRowsOrSame(c, row), ds)
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("weighted %v: traceScaled %v, traceProd of the scaled copy %v", weighted, got, want)
			}
			next := mat.NewDense(300, 4, nil)
			next.Apply(func(_, _ int, v float64) float64 { return v + 0.1 }, c)
			c, s = next, d.MulProfiles(next)
		}
	}
}

// solveRows is SolveMany on the transposed problem: the same answer to the
// bit, transposed, with and without closure, fixed values and warm starts.
func TestSolveRowsIsSolveManyTransposed(t *testing.T) {
	for _, closure := range []bool{false, true} {
		p := benchProblem(5, 700)
		if closure {
			p.Equality, p.Total = ones(5), []float64{1}
		}
		p.FixMask = make([][]bool, 5)
		p.FixMask[2] = make([]bool, 700)
		for c := 0; c < 700; c += 7 {
			p.FixMask[2][c] = true
		}
		p.Fixed = mat.NewDense(5, 700, nil)
		rng := rand.New(rand.NewPCG(1, 2))
		for c := 0; c < 700; c++ {
			p.Fixed.Set(2, c, 0.01*rng.Float64())
		}
		pa, pb := p, p
		pa.Passive, pb.Passive = make([]uint64, 700), make([]uint64, 700)
		for pass := 0; pass < 2; pass++ {
			want, err := SolveMany(pa)
			if err != nil {
				t.Fatal(err)
			}
			var out *mat.Dense // a new answer, then one written over a dirty buffer
			if pass > 0 {
				out = mat.NewDense(700, 5, nil)
				out.Apply(func(_, _ int, _ float64) float64 { return math.NaN() }, out)
			}
			got, err := solveRows(pb, mat.DenseCopyOf(p.B.T()), out)
			if err != nil {
				t.Fatal(err)
			}
			if !vecmath.SameBitsMatrix(got, want.T()) {
				t.Fatalf("closure %v pass %d: solveRows differs from SolveMany", closure, pass)
			}
			for c := range pa.Passive {
				if pa.Passive[c] != pb.Passive[c] {
					t.Fatalf("closure %v: passive set of column %d differs", closure, c)
				}
			}
		}
	}
}

// normaliseSpectra gives each free spectrum unit Euclidean norm (the scale
// convention of ALS, common practice) and leaves the fixed ones alone.
func TestNormaliseSpectraUnitNorm(t *testing.T) {
	s := mat.NewDense(3, 2, []float64{3, 1, 4, 2, 0, 2})
	normaliseSpectra(s, [][]bool{nil, {true, true, true}})
	if got := mat.Norm(s.ColView(0), 2); math.Abs(got-1) > 1e-15 {
		t.Fatalf("free spectrum's norm %v, want 1", got)
	}
	if s.At(0, 0) != 0.6 || s.At(1, 0) != 0.8 || s.At(0, 1) != 1 || s.At(2, 1) != 2 {
		t.Fatalf("spectra after normalising: %v", mat.Formatted(s))
	}
}

// plainData hides the truncated SVD behind a Data, so that Resolve takes
// the products through the interface, as for any other data.
type plainData struct{ Weighted }

// A whole resolution on a weighted truncated SVD through the kept buffers
// gives the bits of the one through the Data interface (gramW and the
// products formed anew every iteration) and of the one whose answers are
// new matrices, with closure and without (the spectra's normalisation),
// extrapolated and rejected steps included, and when it stops on a
// rejected step.
func TestResolveBuffersAreThePlainPath(t *testing.T) {
	wc, c0 := benchWeightedCompressed(400, 501, 4)
	for _, closure := range []bool{true, false} {
		opt := Options{Mode: Species, Closure: closure, MaxIter: 60}
		res := resolveThreeWays(t, wc, c0, opt)
		undone := lastUndone(res)
		if undone == 0 {
			t.Fatalf("closure %v: no extrapolated step was undone in %d iterations: the rejected steps are not covered", closure, res.Iterations)
		}
		// A rejected step restores the spectra it started from, and only
		// a resolution that stops there returns them: every later
		// iteration solves for new spectra before it reads the old ones.
		// So only this run shows a spectra buffer handed out while it still
		// held them (output's busy check).
		opt.MaxIter = undone
		res = resolveThreeWays(t, wc, c0, opt)
		if res.Iterations != undone || lastUndone(res) != undone {
			t.Fatalf("closure %v: the run to iteration %d stopped at %d, last undone %d: it does not stop on a rejected step", closure, undone, res.Iterations, lastUndone(res))
		}
	}
}

// resolveThreeWays resolves wc from c0 with the kept buffers, through the
// Data interface and with fresh answers (recycling off), fails t unless
// the three agree to the bit, and returns the first.
func resolveThreeWays(t *testing.T, wc WeightedCompressed, c0 *mat.Dense, opt Options) *Result {
	t.Helper()
	want, err := Resolve(plainData{wc}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Resolve(wc, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	if got.Iterations != want.Iterations || len(got.History) != len(want.History) {
		t.Fatalf("closure %v, %d iterations at most: %d iterations (%d kept), want %d (%d)", opt.Closure, opt.MaxIter, got.Iterations, len(got.History), want.Iterations, len(want.History))
	}
	if !vecmath.SameBitsMatrix(got.C, want.C) || !vecmath.SameBitsMatrix(got.S, want.S) || !vecmath.SameBits(got.History, want.History) {
		t.Fatalf("closure %v, %d iterations at most: the resolution through the buffers differs", opt.Closure, opt.MaxIter)
	}
	// A hard model that hands the profiles back unchanged turns off the
	// answers' recycling (a model may keep what it is handed).
	fresh := opt
	fresh.HardModel = func(c *mat.Dense) (*mat.Dense, error) { return mat.DenseCopyOf(c), nil }
	fresh.HardKept = func(bool) bool { return false }
	again, err := Resolve(wc, c0, fresh)
	if err != nil {
		t.Fatal(err)
	}
	if !vecmath.SameBitsMatrix(got.C, again.C) || !vecmath.SameBitsMatrix(got.S, again.S) || !vecmath.SameBits(got.History, again.History) {
		t.Fatalf("closure %v, %d iterations at most: the resolution with recycled answers differs from the one with fresh ones", opt.Closure, opt.MaxIter)
	}
	return got
}

// lastUndone returns the last iteration of res that was not kept (absent
// from HistoryAt), or 0 when every iteration was.
func lastUndone(res *Result) int {
	kept := make(map[int]bool, len(res.HistoryAt))
	for _, it := range res.HistoryAt {
		kept[it] = true
	}
	for it := res.Iterations; it > 0; it-- {
		if !kept[it] {
			return it
		}
	}
	return 0
}

// normW is the weighted column norm √(Σ_i w_i x_ij²) (its definition, summed
// down the column in order), on a view with a stride wider than its columns.
func TestNormWIsItsDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	full := mat.NewDense(50, 7, nil)
	full.Apply(func(_, _ int, _ float64) float64 { return rng.NormFloat64() }, full)
	x := full.Slice(3, 40, 1, 5).(*mat.Dense)
	w := make([]float64, 37)
	for i := range w {
		w[i] = rng.Float64()
	}
	for j := 0; j < 4; j++ {
		ss := 0.0
		for i := 0; i < 37; i++ {
			v := x.At(i, j)
			ss += w[i] * v * v
		}
		if got, want := normW(x, j, w), math.Sqrt(ss); math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("column %d: normW %v, definition %v", j, got, want)
		}
	}
}
