package svd

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Legendre polynomials against their closed forms P2 = (3x²−1)/2, P3 = (5x³−3x)/2
// (Abramowitz & Stegun, Handbook of Mathematical Functions, Table 22.9; from memory), on
// an axis given in descending order as spectra often are.
func TestLegendreClosedForms(t *testing.T) {
	axis := []float64{4000, 3000, 2500, 1000}
	p := Legendre(axis, 3)
	for j, a := range axis {
		x := 2*(a-1000)/3000 - 1
		want := []float64{1, x, (3*x*x - 1) / 2, (5*x*x*x - 3*x) / 2}
		for q, w := range want {
			if got := p.At(j, q); math.Abs(got-w) > 1e-14 {
				t.Errorf("P%d(%g) = %v, want %v", q, x, got, w)
			}
		}
	}
	if Legendre(axis, -1) != nil {
		t.Error("order −1 should give no baseline")
	}
}

// nuisanceData: two species with Gaussian bands and smooth profiles plus white noise of
// σ = 1e-3 (the analytic model D = C Sᵀ + E), with extra(i, j) added.
func nuisanceData(seed uint64, extra func(i, j int, x float64) float64) (*mat.Dense, []float64) {
	const n, m = 40, 300
	rng := rand.New(rand.NewPCG(seed, 3))
	axis := make([]float64, m)
	d := mat.NewDense(n, m, nil)
	for j := range axis {
		axis[j] = 1000 + 2*float64(j)
	}
	for i := 0; i < n; i++ {
		a := math.Exp(-float64(i) / 12)
		for j, x := range axis {
			s1 := math.Exp(-0.5 * math.Pow((x-1200)/15, 2))
			s2 := math.Exp(-0.5 * math.Pow((x-1450)/20, 2))
			v := a*s1 + (1-a)*s2 + 1e-3*rng.NormFloat64()
			if extra != nil {
				v += extra(i, j, 2*(x-1000)/598-1)
			}
			d.Set(i, j, v)
		}
	}
	return d, axis
}

// The extra-sum-of-squares F-test (Draper & Smith 1998, §6) picks a linear baseline when
// each spectrum has an offset and a slope, and none when there is none.
func TestChooseBaselineOrder(t *testing.T) {
	drift, axis := nuisanceData(1, func(i, j int, x float64) float64 {
		return 0.01*math.Sin(float64(i)) + 0.005*math.Cos(float64(i)/3)*x
	})
	ch, err := ChooseBaselineOrder(drift, nil, axis, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if ch.Order != 1 {
		t.Errorf("offset and slope per spectrum: order %d, want 1 (steps %+v)", ch.Order, ch.Steps)
	}
	clean, _ := nuisanceData(2, nil)
	if ch, err = ChooseBaselineOrder(clean, nil, axis, 2, 3, 0.05); err != nil {
		t.Fatal(err)
	}
	if ch.Order != -1 {
		t.Errorf("no baseline: order %d, want none (steps %+v)", ch.Order, ch.Steps)
	}
}

// A spectrum with sharp lines makes a factor whose time vector sits in that one spectrum:
// named an outlier, not counted; the two species are (definition of the classes in
// ClassifyFactors; data built from the model).
func TestClassifyOutlierFactor(t *testing.T) {
	d, axis := nuisanceData(3, func(i, j int, x float64) float64 {
		if i == 17 && j%37 == 5 {
			return 0.05
		}
		return 0
	})
	rep, err := EstimateRank(d, nil, RankOptions{ReferenceRow: -1})
	if err != nil {
		t.Fatal(err)
	}
	f, _ := Decompose(d, DecomposeOptions{})
	cr := ClassifyFactors(d, f, rep, NuisanceOptions{Axis: axis, MeanLevel: true})
	if cr.Estimate != 2 {
		t.Errorf("chemical count %d, want 2 (nuisance %+v)", cr.Estimate, cr.Nuisance)
	}
	found := false
	for _, nf := range cr.Nuisance {
		if nf.Kind == NuisanceOutlier && len(nf.Spectra) == 1 && nf.Spectra[0] == 17 {
			found = true
		}
	}
	if !found {
		t.Errorf("no outlier factor on spectrum 17: %+v", cr.Nuisance)
	}
}

// The baseline share a classification measures every factor with is its
// definition: ‖P x‖²/‖x‖², x = √B s(v) with s the 5-point moving average
// weighted by b_j, and P the least-squares projector onto span(√B X), X the
// polynomials up to baselineOrder on the axis (here the monomials of the
// axis mapped to [−1, 1], which span what the Legendre polynomials span;
// the projection solved by gonum's QR least squares, Golub & Van Loan,
// Matrix Computations, §5.3). Column weights spread over four decades, and
// none (b = 1); the basis the classification shares (polyBasisOnce) is
// formed once and is the weighted one.
func TestPolyShareIsItsDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 37))
	const m = 301
	axis, v, col := make([]float64, m), make([]float64, m), make([]float64, m)
	for j := range axis {
		axis[j] = 1800 - 2*float64(j) // descending, as spectra often are
		u := float64(j) / (m - 1)
		v[j] = 0.3 - 0.5*u + 0.8*u*u*u + math.Exp(-0.5*math.Pow((axis[j]-1500)/15, 2)) + 0.01*rng.NormFloat64()
		col[j] = math.Pow(10, 4*rng.Float64()-2)
	}
	for _, weights := range [][]float64{nil, col} {
		b := weights
		if b == nil {
			b = make([]float64, m)
			for j := range b {
				b[j] = 1
			}
		}
		x := mat.NewVecDense(m, nil)
		a := mat.NewDense(m, baselineOrder+1, nil)
		for j := range axis {
			var s, w float64
			for i := max(j-2, 0); i <= min(j+2, m-1); i++ {
				s += b[i] * v[i]
				w += b[i]
			}
			x.SetVec(j, math.Sqrt(b[j])*s/w)
			tj := 2*(axis[j]-axis[m-1])/(axis[0]-axis[m-1]) - 1
			for q := 0; q <= baselineOrder; q++ {
				a.Set(j, q, math.Sqrt(b[j])*math.Pow(tj, float64(q)))
			}
		}
		var beta, px mat.VecDense
		if err := beta.SolveVec(a, x); err != nil {
			t.Fatal(err)
		}
		px.MulVec(a, &beta)
		want := mat.Dot(&px, &px) / mat.Dot(x, x)

		basis := polyBasisOnce(axis, weights)
		got := polyShareWeighted(v, axis, weights, basis)
		if math.Abs(got-want) > 1e-10*want {
			t.Errorf("weights %t: baseline share %.15g, its definition %.15g", weights != nil, got, want)
		}
		//lint:ignore SA4000 two calls, which must return the same matrix
		if basis() != basis() {
			t.Errorf("weights %t: the shared basis is formed again at each use", weights != nil)
		}
	}
}

// TestCarbonDioxideAt: a factor spectrum with one Gaussian line is named as
// CO₂ when the line sits at 664–671 on the axis and is at most 6 wide at
// half height; the width quoted is the Gaussian's full width at half height
// (its definition; linear interpolation between points 0.5 apart, so
// within 0.05). CO₂'s bending Q branch at 667.4 cm⁻¹ is common practice
// (value from memory). On an axis that stops short of 1500, as a
// UV-visible one in nm does, nothing is named.
func TestCarbonDioxideAt(t *testing.T) {
	axis := make([]float64, 2000)
	for j := range axis {
		axis[j] = 600 + 0.5*float64(j)
	}
	line := func(c, fwhm, sign float64) []float64 {
		v := make([]float64, len(axis))
		for j, x := range axis {
			v[j] = sign * math.Exp(-4*math.Ln2*(x-c)*(x-c)/(fwhm*fwhm))
		}
		return v
	}
	for _, tc := range []struct {
		name      string
		v         []float64
		wantWidth float64 // 0: not named
	}{
		{"sharp at 667.4", line(667.4, 2, 1), 2},
		{"sharp, pointing down", line(667.4, 3, -1), 3},
		{"broad at 667", line(667, 30, 1), 0},
		{"sharp at 700", line(700, 2, 1), 0},
	} {
		at := 0
		for j := range tc.v {
			if math.Abs(tc.v[j]) > math.Abs(tc.v[at]) {
				at = j
			}
		}
		got := carbonDioxideAt(tc.v, axis, at, "")
		if nm := carbonDioxideAt(tc.v[:400], axis[:400], min(at, 399), ""); nm != "" {
			t.Errorf("%s on an axis that stops at 800 (nm, UV-visible): %q, want nothing", tc.name, nm)
		}
		if tc.wantWidth == 0 {
			if got != "" {
				t.Errorf("%s: %q, want nothing", tc.name, got)
			}
			continue
		}
		var w float64
		if _, err := fmt.Sscanf(got, " (a line %g wide", &w); err != nil || math.Abs(w-tc.wantWidth) > 0.05 || !strings.Contains(got, "CO₂") {
			t.Errorf("%s: %q, want CO₂ named with width %g", tc.name, got, tc.wantWidth)
		}
	}
}

// Twelve spectra of A → B → C (Bateman 1910; k 2.5e-3 and 8e-4 s⁻¹, one
// spectrum every 320 s from 320 s before the start) with white noise: three
// species, far above the noise. The time vectors of the second and third
// factors fell short of the lag-1 autocorrelation 3/√12 that twelve points
// need, so they were called noise correlated along the axis and one species
// was counted. A factor holding more energy than all the noise (s² > n·m·σ²,
// the noise's expected squared Frobenius norm) is not noise of any colour.
func TestTwelveSpectraKeepTheirThirdSpecies(t *testing.T) {
	const n, m, sigma = 12, 600, 1e-3
	rng := rand.New(rand.NewPCG(12, 3))
	d := mat.NewDense(n, m, nil)
	for i := range n {
		tm := math.Max(0, 320*float64(i)-320)
		a := math.Exp(-2.5e-3 * tm)
		b := 2.5e-3 / (8e-4 - 2.5e-3) * (math.Exp(-2.5e-3*tm) - math.Exp(-8e-4*tm))
		c := []float64{a, b, 1 - a - b}
		for j := range m {
			x := float64(j)
			v := 0.0
			for k, centre := range []float64{150, 300, 450} {
				v += c[k] * 0.5 * math.Exp(-0.5*(x-centre)*(x-centre)/625)
			}
			d.Set(i, j, v+sigma*rng.NormFloat64())
		}
	}
	rep, err := EstimateRank(d, nil, RankOptions{ReferenceRow: -1, Sigma: sigma})
	if err != nil {
		t.Fatal(err)
	}
	f, _ := Decompose(d, DecomposeOptions{})
	cr := ClassifyFactors(d, f, rep, NuisanceOptions{MeanLevel: true})
	if cr.Estimate != 3 || cr.NoiseLike != 0 {
		t.Errorf("chemical count %d (%d called noise), want the 3 species the data were made with; singular values %.3g", cr.Estimate, cr.NoiseLike, f.S[:4])
	}
}

// A factor's time vector is a few odd spectra (outliers) or a profile whose
// fast part lies in a few spectra, told apart by where those spectra fall.
// Each vector is built from its definition, 90 spectra 40 s apart:
//   - a species consumed within two spectra down to a level it keeps,
//     exp(−k t) with k = 0.03 s⁻¹ (first order) less the level 0.04 the
//     factor's time vector is offset by: 82 % of its energy in spectrum 0,
//     the rest its smooth tail, so not concentrated;
//   - two bubble spectra (rows 37 and 61, 64 % and 27 % of the energy) beside a
//     smooth leak of 9 % (the slow trend the decomposition mixed into the same
//     factor, as a smooth baseline left in the data makes it): odd spectra at
//     separate times, concentrated. Counted as a species before, the fourth
//     of three on an invented series with --baseline offset, while --baseline
//     auto called it an outlier;
//   - two odd spectra alone with white noise of 1 % of their energy elsewhere:
//     concentrated.
func TestConcentratedTellsOddSpectraFromAFastProfile(t *testing.T) {
	const n = 90
	fast := make([]float64, n)
	for i := range fast {
		fast[i] = math.Exp(-0.03*40*float64(i)) - 0.04
	}
	leak := make([]float64, n)
	for i := range leak {
		leak[i] = math.Sin(math.Pi * float64(i) / n)
	}
	scaleTo(leak, math.Sqrt(0.09))
	bubbles := append([]float64(nil), leak...)
	bubbles[37] += math.Sqrt(0.64)
	bubbles[61] += math.Sqrt(0.27)
	rng := rand.New(rand.NewPCG(3, 5))
	lone := make([]float64, n)
	for i := range lone {
		lone[i] = 0.01 * rng.NormFloat64()
	}
	lone[20], lone[70] = 1, -0.8
	for _, tc := range []struct {
		name string
		u    []float64
		want []int
	}{
		{"species consumed within two spectra", fast, nil},
		{"two bubbles beside a smooth leak", bubbles, []int{37, 61}},
		{"two odd spectra in white noise", lone, []int{20, 70}},
	} {
		rows, ok := concentrated(tc.u)
		if ok != (tc.want != nil) || !slices.Equal(rows, tc.want) {
			t.Errorf("%s: concentrated = %v, %v; want %v", tc.name, rows, ok, tc.want)
		}
	}
}

// scaleTo scales x to Euclidean length l.
func scaleTo(x []float64, l float64) {
	var s float64
	for _, v := range x {
		s += v * v
	}
	for i := range x {
		x[i] *= l / math.Sqrt(s)
	}
}

// differenceSeries is ΔA(t_i) = x_i r + y_i q + noise for 80 spectra every 30 s on 600
// channels (white noise of σ 1e-4, given): A → B of first order from t = 60 s (x = 1 −
// e^{−k t}, k = 6e-3 s⁻¹; Bateman 1910), r = s_B − s_A, beside a second change q with
// amount y_i.
func differenceSeries(q []float64, y func(tm float64) float64) (*mat.Dense, []float64) {
	const n, m, sigma = 80, 600, 1e-4
	rng := rand.New(rand.NewPCG(21, 5))
	axis := make([]float64, m)
	band := func(x, centre, width, height float64) float64 {
		return height * math.Exp(-0.5*(x-centre)*(x-centre)/(width*width))
	}
	d := mat.NewDense(n, m, nil)
	for j := range axis {
		axis[j] = 1800 - float64(j)
	}
	for i := range n {
		tm := math.Max(0, 30*float64(i)-60)
		x := 1 - math.Exp(-6e-3*tm)
		for j, a := range axis {
			r := band(a, 1660, 10, 0.45) + band(a, 1400, 12, 0.3) - band(a, 1700, 10, 0.5) - band(a, 1450, 14, 0.25)
			d.Set(i, j, x*r+y(tm)*q[j]+sigma*rng.NormFloat64())
		}
	}
	return d, axis
}

// A reagent added with the start of A → B (a permanent step: it dilutes A by 1/1.15
// and brings its own bands, construction of the test) changes the differences
// independently of the reaction, however parallel the two profiles run: their second
// factor stands hundreds of times above the noise edge, with under 2 % of the first's
// signal, and must be counted (rank 2). The same size of factor made by the reaction
// spectrum's bands broadening with time (shape of a width change: Taylor's theorem, its
// derivative with respect to the width; up to 1.2 channels, 10 % of the widths) is a
// change of band shape: still minor (rank 1).
func TestClearFactorIsCountedUnlessBandShape(t *testing.T) {
	const f = 1 / 1.15
	band := func(x, centre, width, height float64) float64 {
		return height * math.Exp(-0.5*(x-centre)*(x-centre)/(width*width))
	}
	// widthDeriv is ∂/∂w of a Gaussian of height h·w₀/w (constant area) at w = w₀.
	widthDeriv := func(x, centre, width, height float64) float64 {
		u := (x - centre) / width
		return height * math.Exp(-0.5*u*u) * (u*u - 1) / width
	}
	cases := []struct {
		name string
		q    func(x float64) float64
		y    func(tm float64) float64
		want int
	}{
		{"reagent step", func(x float64) float64 {
			return (f-1)*(band(x, 1700, 10, 0.5)+band(x, 1450, 14, 0.25)) + 0.4*f*(band(x, 1550, 12, 0.35)+band(x, 1250, 16, 0.25))
		}, func(tm float64) float64 {
			if tm > 0 {
				return 1
			}
			return 0
		}, 2},
		{"broadening", func(x float64) float64 {
			return widthDeriv(x, 1660, 10, 0.45) + widthDeriv(x, 1400, 12, 0.3) - widthDeriv(x, 1700, 10, 0.5) - widthDeriv(x, 1450, 14, 0.25)
		}, func(tm float64) float64 { return 1.2 * tm / 2340 }, 1},
	}
	for _, c := range cases {
		q := make([]float64, 600)
		for j := range q {
			q[j] = c.q(1800 - float64(j))
		}
		d, axis := differenceSeries(q, c.y)
		rep, err := EstimateRank(d, nil, RankOptions{ReferenceRow: -1, Sigma: 1e-4})
		if err != nil {
			t.Fatal(err)
		}
		fa, _ := Decompose(d, DecomposeOptions{})
		// The case must be the one the rule is about: factor 2 far above the noise
		// edge and below minorEnergy of factor 1.
		if fa.S[1] < clearOfNoise*rep.NoiseEdge || fa.S[1]*fa.S[1] >= minorEnergy*fa.S[0]*fa.S[0] {
			t.Fatalf("%s: test data: factor 2 at %.3g × the noise edge and %.3g of factor 1's signal; want ≥ %d and < %.2g", c.name, fa.S[1]/rep.NoiseEdge, fa.S[1]*fa.S[1]/(fa.S[0]*fa.S[0]), clearOfNoise, minorEnergy)
		}
		cr := ClassifyFactors(d, fa, rep, NuisanceOptions{Axis: axis})
		t.Logf("%s: factor 2 at %.0f × the edge, %.2g %% of factor 1; nuisance %+v", c.name, fa.S[1]/rep.NoiseEdge, 100*fa.S[1]*fa.S[1]/(fa.S[0]*fa.S[0]), cr.Nuisance)
		if cr.Estimate != c.want {
			t.Errorf("%s: chemical count %d, want %d", c.name, cr.Estimate, c.want)
		}
	}
}

// Factors above the white-noise edge whose time vectors are white are noise;
// the colour of their spectra says which. Smoothing along the axis (a
// running mean of 3 points: correlated noise of the same variance per point
// as common practice scales it) lifts the largest noise values above the
// white edge with spectra correlated along the axis; white noise measured
// against a level set 8 % low (the rank's Sigma) lifts them with white
// spectra (definition of white noise: independent points). Only the first
// is noise correlated along the axis.
func TestNoiseFactorsToldApartByTheirSpectra(t *testing.T) {
	const n, m, sigma = 60, 400, 1e-3
	for _, smooth := range []bool{true, false} {
		rng := rand.New(rand.NewPCG(21, 5))
		d := mat.NewDense(n, m, nil)
		for i := range n {
			a := math.Exp(-0.05 * float64(i))
			e := make([]float64, m+2)
			for j := range e {
				e[j] = sigma * rng.NormFloat64()
			}
			for j := range m {
				x := float64(j)
				v := a*0.5*math.Exp(-0.5*(x-120)*(x-120)/400) + (1-a)*0.5*math.Exp(-0.5*(x-280)*(x-280)/400)
				noise := e[j+1]
				if smooth {
					noise = (e[j] + e[j+1] + e[j+2]) / math.Sqrt(3)
				}
				d.Set(i, j, v+noise)
			}
		}
		level := sigma
		if !smooth {
			level = 0.92 * sigma
		}
		rep, err := EstimateRank(d, nil, RankOptions{ReferenceRow: -1, Sigma: level})
		if err != nil {
			t.Fatal(err)
		}
		f, _ := Decompose(d, DecomposeOptions{})
		cr := ClassifyFactors(d, f, rep, NuisanceOptions{MeanLevel: true})
		t.Logf("smoothed %v: %d chemical, %d noise-like, %d of them white along the axis", smooth, cr.Estimate, cr.NoiseLike, cr.NoiseWhite)
		if cr.Estimate != 2 || cr.NoiseLike == 0 {
			t.Fatalf("smoothed %v: %d chemical, %d noise-like; want 2 and some noise above the edge", smooth, cr.Estimate, cr.NoiseLike)
		}
		if smooth && cr.NoiseWhite != 0 || !smooth && cr.NoiseWhite != cr.NoiseLike {
			t.Errorf("smoothed %v: %d of %d noise factors white along the axis", smooth, cr.NoiseWhite, cr.NoiseLike)
		}
	}
}
