package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// realCollinearGram is the Gram matrix CᵀC and right-hand side Cᵀd of one
// spectra-step column (channel 5596, ALS iteration 2) of the real ATR-FTIR
// urethane series /work/shared/real-data/urethane-atr/catalyst-1.00 (MIT
// licence, see its README) resolved with 12 components: one profile is zero
// and several are nearly collinear, as baselines make them. The active-set
// solver cycled here until its iteration limit and ended the run.
var realCollinearGram = [][]float64{
	{0.33442318363485934, 0.22508024132464352, 3.108774165747095, 1.8905877293317428, 0.15323923347067817, 8.562415736227266e-05, 0.1328707012779488, 0.09902357937465973, 0.0, 0.0009695219991539204, 0.6987539693490219, 0.059929154103212076},
	{0.22508024132464352, 0.2874042558435232, 3.114426704371172, 1.909455978693387, 0.16902066354041748, 7.670190896086573e-06, 0.12716315908569523, 0.1006044320094377, 0.0, 0.0004077838911834147, 0.7286171477728494, 0.0642442956501935},
	{3.108774165747095, 3.114426704371172, 36.604942953157234, 22.372365998776168, 1.9182216940740904, 0.00039109644710361976, 1.5212340815768979, 1.1762083768051637, 0.0, 0.007287588847181271, 8.426222311177662, 0.736520528293828},
	{1.8905877293317428, 1.909455978693387, 22.372365998776168, 13.684023154002908, 1.1738860010204364, 0.0002353575826689523, 0.928646759092695, 0.717571035310352, 0.0, 0.004493396172203847, 5.153118239744443, 0.45064728888519495},
	{0.15323923347067817, 0.16902066354041748, 1.9182216940740904, 1.1738860010204364, 0.10327950263424257, 1.7613016736840276e-05, 0.07888996006563581, 0.06191103698991361, 0.0, 0.0003411181025988629, 0.44801630000132325, 0.03905482640215587},
	{8.562415736227266e-05, 7.670190896086573e-06, 0.00039109644710361976, 0.0002353575826689523, 1.7613016736840276e-05, 2.851965522576677e-07, 1.7820221180739497e-05, 1.3887051776158708e-05, 0.0, 0.0, 0.00010325902901361061, 6.944068020234142e-06},
	{0.1328707012779488, 0.12716315908569523, 1.5212340815768979, 0.928646759092695, 0.07888996006563581, 1.7820221180739497e-05, 0.06401487956628328, 0.04884313656157431, 0.0, 0.0003379972945134249, 0.3486416438649784, 0.03052940094399818},
	{0.09902357937465973, 0.1006044320094377, 1.1762083768051637, 0.717571035310352, 0.06191103698991361, 1.3887051776158708e-05, 0.04884313656157431, 0.039004036014062625, 0.0, 0.00022437423168271804, 0.2733015250134586, 0.023797156721957542},
	{0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0},
	{0.0009695219991539204, 0.0004077838911834147, 0.007287588847181271, 0.004493396172203847, 0.0003411181025988629, 0.0, 0.0003379972945134249, 0.00022437423168271804, 0.0, 6.233595175073243e-05, 0.001711051315929378, 0.00016585831230384062},
	{0.6987539693490219, 0.7286171477728494, 8.426222311177662, 5.153118239744443, 0.44801630000132325, 0.00010325902901361061, 0.3486416438649784, 0.2733015250134586, 0.0, 0.001711051315929378, 1.9698800887790076, 0.17134100383640735},
	{0.059929154103212076, 0.0642442956501935, 0.736520528293828, 0.45064728888519495, 0.03905482640215587, 6.944068020234142e-06, 0.03052940094399818, 0.023797156721957542, 0.0, 0.00016585831230384062, 0.17134100383640735, 0.01540094944958279},
}

var realCollinearRHS = []float64{0.05938523887378656, 0.07058260766014186, 0.7819886841100737, 0.47898644777440996, 0.04209342959847558, 5.004099718519929e-06, 0.032069941022594854, 0.025310923133208138, 0.0, 0.00011908345626599567, 0.182716687940026, 0.016055171390380263}

// The real collinear problem must be solved, not end the run, and the answer
// must satisfy the optimality (KKT) conditions of Lawson & Hanson (1974,
// ch. 23) to a tolerance scaled by the conditioning.
func TestSolveManyRecoversRealCollinearGram(t *testing.T) {
	k := len(realCollinearRHS)
	g := mat.NewSymDense(k, nil)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			g.SetSym(i, j, realCollinearGram[i][j])
		}
	}
	x, err := SolveMany(Problem{G: g, B: mat.NewDense(k, 1, realCollinearRHS)})
	if err != nil {
		t.Fatalf("solve: %v", err)
	}
	xs := mat.Col(nil, 0, x)
	checkKKTTol(t, "real ATR Gram", g, realCollinearRHS, xs, 1e-6)
}

// checkKKTTol is checkKKT without closure and with a chosen relative
// tolerance, for problems whose Gram matrix is nearly singular.
func checkKKTTol(t *testing.T, name string, g *mat.SymDense, b, x []float64, rel float64) {
	t.Helper()
	k := len(x)
	scale := 0.0
	for j := 0; j < k; j++ {
		scale = math.Max(scale, math.Abs(b[j])+g.At(j, j)*math.Abs(x[j]))
	}
	for j := 0; j < k; j++ {
		w := b[j]
		for i := 0; i < k; i++ {
			w -= g.At(j, i) * x[i]
		}
		switch {
		case x[j] < 0:
			t.Errorf("%s: x[%d] = %g < 0", name, j, x[j])
		case x[j] > 0 && math.Abs(w) > rel*scale:
			t.Errorf("%s: x[%d] = %g > 0 but gradient %g ≠ 0", name, j, x[j], w)
		case x[j] == 0 && w > rel*scale:
			t.Errorf("%s: x[%d] = 0 but gradient %g > 0", name, j, w)
		}
	}
}

// baselineColumns makes m × k columns like the profiles or spectra of a
// resolution with baselines: three bands, an offset, a slope, a curvature,
// a band repeated with a 1e-7 relative perturbation and a zero column.
func baselineColumns(rng *rand.Rand, m int) *mat.Dense {
	a := mat.NewDense(m, 8, nil)
	for i := 0; i < m; i++ {
		u := float64(i) / float64(m-1)
		band := func(c, w float64) float64 { return math.Exp(-0.5 * (u - c) * (u - c) / (w * w)) }
		a.Set(i, 0, band(0.3, 0.05))
		a.Set(i, 1, band(0.5, 0.2))
		a.Set(i, 2, band(0.7, 0.08))
		a.Set(i, 3, 1)
		a.Set(i, 4, u)
		a.Set(i, 5, u*u)
		a.Set(i, 6, band(0.5, 0.2)*(1+1e-7*rng.NormFloat64()))
	}
	return a
}

// The recovery path on degenerate columns reaches the same objective as the
// exact Lawson–Hanson solver on A itself (NNLS, checked against SciPy in
// TestNNLSMatchesSciPy): ½xᵀGx − bᵀx = ½‖Ax − d‖² − ½‖d‖², a definition.
func TestRecoverMatchesLawsonHansonOnBaselines(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 1))
	const m = 120
	a := baselineColumns(rng, m)
	g := gram(a)
	for trial := 0; trial < 20; trial++ {
		d := make([]float64, m)
		for i := range d {
			d[i] = 0.8*a.At(i, 0) + 0.3*a.At(i, 2) + 0.05*a.At(i, 3) - 0.02*a.At(i, 4) + 0.01*rng.NormFloat64()
		}
		var bv mat.VecDense
		bv.MulVec(a.T(), mat.NewVecDense(m, d))
		b := mat.NewDense(8, 1, bv.RawVector().Data)
		ref, err := NNLS(a, d)
		if err != nil {
			t.Fatal(err)
		}
		want := residualNorm(a, ref, d)
		s := newSolver(Problem{G: g, B: b}, 8)
		copy(s.b, bv.RawVector().Data)
		x := mat.NewDense(8, 1, nil)
		if err := s.recover(0, x, ErrNotConverged); err != nil {
			t.Fatalf("trial %d: recover: %v", trial, err)
		}
		got := residualNorm(a, mat.Col(nil, 0, x), d)
		if got > want*(1+1e-9)+1e-12 {
			t.Errorf("trial %d: recovered ‖Ax−d‖ = %.12g, Lawson–Hanson %.12g", trial, got, want)
		}
		xs, err := SolveMany(Problem{G: g, B: b})
		if err != nil {
			t.Fatalf("trial %d: SolveMany: %v", trial, err)
		}
		if r := residualNorm(a, mat.Col(nil, 0, xs), d); r > want*(1+1e-6)+1e-12 {
			t.Errorf("trial %d: SolveMany ‖Ax−d‖ = %.12g, Lawson–Hanson %.12g", trial, r, want)
		}
	}
}

// With closure the recovery keeps Σx = 1 exactly and satisfies the KKT
// conditions (Lawson & Hanson 1974, ch. 23) — checked by checkKKT.
func TestRecoverKeepsClosure(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 2))
	const m = 120
	a := baselineColumns(rng, m)
	// Drop the zero column: closure over a column that carries nothing is
	// a free direction, not a property of the solver.
	a = mat.DenseCopyOf(a.Slice(0, m, 0, 7))
	g := gram(a)
	eq := ones(7)
	for trial := 0; trial < 10; trial++ {
		d := make([]float64, m)
		for i := range d {
			d[i] = 0.6*a.At(i, 0) + 0.4*a.At(i, 2) + 0.01*rng.NormFloat64()
		}
		var bv mat.VecDense
		bv.MulVec(a.T(), mat.NewVecDense(m, d))
		b := mat.NewDense(7, 1, bv.RawVector().Data)
		s := newSolver(Problem{G: g, B: b, Equality: eq, Total: []float64{1}}, 7)
		copy(s.b, bv.RawVector().Data)
		x := mat.NewDense(7, 1, nil)
		if err := s.recover(0, x, ErrNotConverged); err != nil {
			t.Fatalf("trial %d: recover: %v", trial, err)
		}
		checkKKT(t, "closure recovery", g, bv.RawVector().Data, mat.Col(nil, 0, x), eq, 1)
	}
}
