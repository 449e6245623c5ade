package mcr

import (
	"math"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// lowerEnvelope against its definition, the modified polynomial baseline of
// Lieber & Mahadevan-Jansen (Appl. Spectrosc. 2003): fit a polynomial to y by
// least squares, replace y by the fit wherever the fit lies below it, and
// repeat (here at most 200 times). The reference solves each fit with
// gonum's QR on the monomials 1, x, x², not with the
// orthonormal basis lowerEnvelope works in, so it checks the projection as
// well as the loop; a spectrum with a band, a slope and ripple that keeps
// the clipping going for all 200 iterations.
func TestLowerEnvelopeIsIteratedClippedPolynomialFit(t *testing.T) {
	const m = 601
	p := mat.NewDense(m, 3, nil)
	y := make([]float64, m)
	for i := 0; i < m; i++ {
		x := -1 + 2*float64(i)/float64(m-1)
		p.SetRow(i, []float64{1, x, x * x})
		u := (x - 0.2) / 0.05
		y[i] = 0.3 + 0.1*x + math.Exp(-u*u) + 0.01*math.Sin(7*float64(i))
	}
	got := lowerEnvelope(y, orthonormalColumns(p))

	if worst := clippedFitGap(t, p, y, got); worst > 1e-9 {
		t.Errorf("envelope differs from the iterated clipped least-squares fit by %.3g", worst)
	}
}

// The cubic basis (--baseline poly:3, the highest order auto tries) has its
// own loop with the coefficients in registers; it must give the same bits as
// the loop for any number of columns, on a spectrum whose clipping runs all
// 200 iterations and on one that stops early (common practice for a
// specialised kernel: compared with the general one it replaces), and match
// the definition as the quadratic test above does.
//
// With vector lanes (envelopePass4, AVX2) the cubic loop takes four points at
// a time and the last m mod 4 in Go: every remainder is tried, and the loop
// without lanes too.
func TestLowerEnvelopeCubicMatchesGeneralLoop(t *testing.T) {
	t.Logf("vector lanes: %v", haveEnvelopeLanes)
	for _, m := range []int{5, 6, 7, 8, 601, 6950, 6951} {
		p, y, q := cubicCase(m, -0.05)
		want := lowerEnvelopeAny(y, q.RawMatrix(), 4)
		got := lowerEnvelope(y, q)
		plain := lowerEnvelope4(y, q.RawMatrix().Data, nil)
		for i := range got {
			if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
				t.Fatalf("m = %d: point %d: cubic loop %v, general loop %v", m, i, got[i], want[i])
			}
			if math.Float64bits(plain[i]) != math.Float64bits(want[i]) {
				t.Fatalf("m = %d: point %d: cubic loop without lanes %v, general loop %v", m, i, plain[i], want[i])
			}
		}
		if m < 601 {
			continue
		}
		// The definition: iterated clipped least-squares fit on the monomials.
		if worst := clippedFitGap(t, p, y, got); worst > 1e-9 {
			t.Errorf("m = %d: envelope differs from the iterated clipped least-squares fit by %.3g", m, worst)
		}
	}
}

// clippedFitGap runs the definition (Lieber & Mahadevan-Jansen 2003): a
// least-squares fit of y on the columns of p by gonum's QR, y replaced by
// the fit wherever the fit lies below it, at most 200 times; it returns the
// largest gap between got and that fit.
func clippedFitGap(t *testing.T, p *mat.Dense, y, got []float64) float64 {
	t.Helper()
	m := len(y)
	var qr mat.QR
	qr.Factorize(p)
	cur := mat.NewVecDense(m, append([]float64(nil), y...))
	var coef, fit mat.VecDense
	for it := 0; it < 200; it++ {
		if err := qr.SolveVecTo(&coef, false, cur); err != nil {
			t.Fatal(err)
		}
		fit.MulVec(p, &coef)
		changed := false
		for i := 0; i < m; i++ {
			if fit.AtVec(i) < cur.AtVec(i) {
				cur.SetVec(i, fit.AtVec(i))
				changed = true
			}
		}
		if !changed {
			break
		}
	}
	worst := 0.0
	for i := 0; i < m; i++ {
		worst = math.Max(worst, math.Abs(got[i]-fit.AtVec(i)))
	}
	return worst
}

// cubicCase is the cubic basis 1, x, x², x³ on m points of [−1, 1] (p, and q
// its orthonormal columns) and a spectrum on it: a band at x = 0.2 on the
// baseline 0.3 + 0.1 x + c3 x³, with a ripple of 0.01.
func cubicCase(m int, c3 float64) (*mat.Dense, []float64, *mat.Dense) {
	p := mat.NewDense(m, 4, nil)
	y := make([]float64, m)
	for i := 0; i < m; i++ {
		x := -1 + 2*float64(i)/float64(m-1)
		p.SetRow(i, []float64{1, x, x * x, x * x * x})
		u := (x - 0.2) / 0.05
		y[i] = 0.3 + 0.1*x + c3*x*x*x + math.Exp(-u*u) + 0.01*math.Sin(7*float64(i))
	}
	return p, y, orthonormalColumns(p)
}

func BenchmarkLowerEnvelopeCubic(b *testing.B) {
	const m = 6950
	_, y, q := cubicCase(m, 0)
	b.Run("cubic", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			lowerEnvelope(y, q)
		}
	})
	b.Run("general", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			lowerEnvelopeAny(y, q.RawMatrix(), 4)
		}
	})
}

// lowerSpectra shares the spectra out to workers: the same bits at
// GOMAXPROCS 1 and 2 (the project's determinism rule).
func TestLowerSpectraSameAtAnyGOMAXPROCS(t *testing.T) {
	const m, k = 2000, 3
	p := mat.NewDense(m, 4, nil)
	s := mat.NewDense(m, k, nil)
	for i := 0; i < m; i++ {
		x := -1 + 2*float64(i)/float64(m-1)
		p.SetRow(i, []float64{1, x, x * x, x * x * x})
		for j := 0; j < k; j++ {
			u := (x - 0.3*float64(j-1)) / 0.05
			s.Set(i, j, 0.2+0.1*x*float64(j)+math.Exp(-u*u)+0.01*math.Sin(float64(7*i+j)))
		}
	}
	q := orthonormalColumns(p)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var got [2]*mat.Dense
	for w, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		got[w] = mat.DenseCopyOf(s)
		lowerSpectra(got[w], k, []bool{true, true, true}, q, envelopeLanes(q))
	}
	for i := 0; i < m; i++ {
		for j := 0; j < k; j++ {
			if math.Float64bits(got[0].At(i, j)) != math.Float64bits(got[1].At(i, j)) {
				t.Fatalf("(%d, %d): %v at GOMAXPROCS 1, %v at 2", i, j, got[0].At(i, j), got[1].At(i, j))
			}
		}
	}
}
