package spectra

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// beams simulates n single beams × m channels of a slow A → B change under
// a source envelope with a strong solvent band (transmission down to 1 %),
// with detector noise constant in counts (σ_I; PRIMER §8): the case where
// absorbance noise σ_I/(I ln 10) is 100× larger under the band.
func beams(rng *rand.Rand, n, m int, sigI float64, smooth int, step float64) *Series {
	s := &Series{AxisName: "wavenumber", Values: mat.NewDense(n, m, nil), Source: "sim"}
	for j := 0; j < m; j++ {
		s.Axis = append(s.Axis, 2000-float64(j))
	}
	for i := 0; i < n; i++ {
		s.Times = append(s.Times, 30*float64(i))
		s.Names = append(s.Names, "sim")
	}
	noise := make([]float64, m+smooth)
	for i := 0; i < n; i++ {
		x := 1 - math.Exp(-float64(i)/float64(n/3))
		for l := range noise {
			noise[l] = rng.NormFloat64()
		}
		for j := 0; j < m; j++ {
			u := float64(j) / float64(m)
			env := 1e4 * (0.6 + 0.4*math.Sin(3*u))
			solvent := 2 * math.Exp(-0.5*sq((u-0.7)/0.02)) // A = 2: 1 % transmission
			a := 0.4*(1-x)*math.Exp(-0.5*sq((u-0.3)/0.03)) + 0.5*x*math.Exp(-0.5*sq((u-0.45)/0.03))
			e := noise[j]
			if smooth > 1 {
				// A moving average over smooth channels, rescaled to unit
				// variance: noise correlated along the axis.
				e = 0
				for l := 0; l < smooth; l++ {
					e += noise[j+l]
				}
				e /= math.Sqrt(float64(smooth))
			}
			v := env*math.Pow(10, -a-solvent) + sigI*e
			if step > 0 {
				v = step * math.Round(v/step)
			}
			s.Values.Set(i, j, v)
		}
	}
	return s
}

// The detector's noise is recovered from the beams themselves within 10 %:
// white, correlated along the axis (time differences do not see that), and
// rounded in the export (rounding to a step q adds q²/12 of variance:
// Sheppard's correction, common practice).
func TestNoiseRecoversDetectorSigma(t *testing.T) {
	const sigI = 5.0
	for _, c := range []struct {
		name   string
		smooth int
		step   float64
		want   float64
	}{
		{"white", 1, 0, sigI},
		{"correlated along the axis", 5, 0, sigI},
		{"rounded to 2σ", 1, 10, math.Sqrt(sigI*sigI + 100.0/12)},
	} {
		rng := rand.New(rand.NewPCG(8, 1997))
		s := beams(rng, 50, 400, sigI, c.smooth, c.step)
		a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
		if err != nil {
			t.Fatal(err)
		}
		if r := a.Noise.Level / c.want; r < 0.9 || r > 1.1 {
			t.Errorf("%s: σ_I estimated %.4g, simulated %.4g (ratio %.3f)", c.name, a.Noise.Level, c.want, r)
		}
	}
}

// Propagation of error (PRIMER §1, §8): σ_A = σ_I/(I ln 10) combined with
// the reference's own σ. The per-channel noise the weights imply must follow
// 1/I: under the solvent band (I at 1 % of the rest) it is about 100×
// larger, and the note says where.
func TestWeightsFollowTheLight(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 1997))
	s := beams(rng, 60, 400, 5, 1, 0)
	i0 := mat.Row(nil, 0, s.Values)
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	sig := a.DifferenceWeights.ChannelSigma()
	// Channel 100 (u = 0.25, bright) against 280 (u = 0.7, band centre).
	want := i0[100] / i0[280]
	if r := (sig[280] / sig[100]) / want; r < 0.8 || r > 1.25 {
		t.Errorf("σ ratio band/bright %.4g, 1/I gives %.4g", sig[280]/sig[100], want)
	}
	notes := NoiseNotes(s.AxisName, s.Axis, sig, nil)
	if len(notes) != 1 || !strings.Contains(notes[0], "wavenumber 17") {
		t.Errorf("noise note %q should name the band near wavenumber 1720", notes)
	}
}

// Points without light (a single beam at or below zero, not finite, or at
// the detector's flat ceiling) are blind: the assembly goes on, the
// matrices stay finite, the points are listed and named in a note.
func TestBlindPoints(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 1997))
	s := beams(rng, 30, 200, 5, 1, 0)
	s.Values.Set(10, 50, 0)
	s.Values.Set(11, 50, -3)
	s.Values.Set(12, 51, math.Inf(1))
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range [][2]int{{10, 50}, {11, 50}, {12, 51}} {
		if !a.Blind.Has(p[0], p[1]) {
			t.Errorf("point %v not blind", p)
		}
	}
	if a.Blind.Has(9, 50) {
		t.Errorf("point (9, 50) is lit but marked blind")
	}
	n, m := a.Difference.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if v := a.Difference.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("ΔA[%d,%d] = %v", i, j, v)
			}
		}
	}
	if len(a.Notes) == 0 || !strings.Contains(a.Notes[len(a.Notes)-1], "wavenumber 1950–1949 in 3 spectra (300–360 s)") {
		t.Errorf("notes %q", a.Notes)
	}
	// Mostly non-positive values are not single beams at all: the old
	// message naming --kind stays.
	bad := series([]float64{0.1, -0.2, 0.3}, []float64{-0.1, 0.2, -0.3})
	if _, err := Assemble(bad, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}}); err == nil || !strings.Contains(err.Error(), "--kind absorbance") {
		t.Errorf("absorbance-like values as single beams: %v", err)
	}
}

// Beams cut flat at the detector's ceiling over more than a quarter of the
// points (a gain set so that the source's peak saturates) hold no
// absorbance there; a flat top is a saturated detector, not a measured
// value (common practice). The assembly refuses them with one line naming
// the ceiling, the share and the range, where it used to return no
// matrices at all and the caller panicked on them.
func TestMostlyAtTheCeilingIsRefused(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 1998))
	s := beams(rng, 30, 200, 5, 1, 0)
	ceiling := 5500.0
	n, m := s.Values.Dims()
	clipped := 0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if s.Values.At(i, j) >= ceiling {
				s.Values.Set(i, j, ceiling)
				clipped++
			}
		}
	}
	if clipped <= n*m/4 {
		t.Fatalf("only %d of %d points clipped: the case is not made", clipped, n*m)
	}
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err == nil {
		t.Fatalf("%d of %d points at the ceiling accepted (matrices %v)", clipped, n*m, a.Difference != nil)
	}
	for _, want := range []string{"are blind", "at the detector's ceiling 5500 (wavenumber", "saturated detector", "more than a quarter", "--exclude"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q lacks %q", err, want)
		}
	}
}

// StepToNoise on repeats with known noise σ_ij = 1/√(a_i b_j): each step's Σ z² is χ²
// with m degrees of freedom, so ρ² = χ²_m/m lies within 1 ± 4√(2/m) (mean 1, standard
// deviation √(2/m): definition of χ²); the drift taken out first keeps that (each point's
// residual scaled back by its leverage: Draper & Smith 1998). A band of height δ on w
// channels added to a spectrum moves its step by ρ² ≈ 1 + δ²·Σ_band b_j/(m·(1/a_i + 1/a_{i−1}))
// less the little of it the smooth shapes take (a 40-channel block in 4000: a few per cent);
// a spectrum lifted and tilted as a whole (a baseline drift) does not move it.
func TestStepToNoise(t *testing.T) {
	n, m := 6, 4000
	rng := rand.New(rand.NewPCG(3, 11))
	w := &Weights{Row: []float64{1, 2, 1, 4, 1, 1}, Col: make([]float64, m)}
	for j := range w.Col {
		w.Col[j] = 0.5 + float64(j%7)
	}
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, 0.3+rng.NormFloat64()/math.Sqrt(w.Row[i]*w.Col[j]))
		}
	}
	const delta, lo, hi = 8.0, 1980, 2020
	for j := lo; j < hi; j++ {
		d.Set(4, j, d.At(4, j)+delta)
	}
	for j := 0; j < m; j++ { // spectrum 6: spectrum 5's band, and a lift and a tilt
		u := 2*float64(j)/float64(m-1) - 1
		d.Set(5, j, d.At(5, j)+2+u+0.5*u*u*u)
		if j >= lo && j < hi {
			d.Set(5, j, d.At(5, j)+delta)
		}
	}
	rho := StepToNoise(d, 0, n, w, nil)
	tol := 4 * math.Sqrt(2/float64(m))
	for _, i := range []int{0, 1, 2, 4} {
		if r := rho[i]; math.Abs(r*r-1) > tol {
			t.Errorf("step %d between repeats (the last one drifted): ρ² = %.4f, want 1 ± %.3f", i+1, r*r, tol)
		}
	}
	band := 0.0
	for j := lo; j < hi; j++ {
		band += delta * delta * w.Col[j]
	}
	want := 1 + band/float64(m)/(1/w.Row[4]+1/w.Row[3])
	if got := rho[3] * rho[3]; math.Abs(got-want) > 0.1*(want-1) {
		t.Errorf("a band added: ρ² = %.4f, want about %.4f", got, want)
	}
}

// TestObservedOnly checks the values a weight fit keeps against the
// definitions in the comments of scaleObserved and logObserved: NaN at the
// blind channels and at every value that is not positive and finite, the
// product ai·col_j·v elsewhere (Go's own arithmetic, the reference; with
// ai = col_j = 1 the product is v itself, IEEE 754), with the largest of
// those products as the peak, NaN when one of the channels not blind is
// NaN (scaleObserved); log v (Go's math.Log, the reference) at every
// channel not blind, finite exactly at the positive finite values
// (logObserved); blind lists with a channel at either end, repeated or
// beyond the row change nothing else.
func TestObservedOnly(t *testing.T) {
	row := []float64{2, 0, -1, math.Inf(1), math.NaN(), 0.5, 1e-300, math.Inf(-1), 3, math.Copysign(0, -1), 1}
	clean := []float64{2, 7, 0.5, 1e-300, 3, 1, 4.5, 9, 8, 2.5, 1}
	col := []float64{1, 2, 3, 0.5, 0.25, 1e10, 1, 1, 7, 1, 3}
	for _, r := range [][]float64{row, clean} {
		for _, bl := range [][]int{nil, {0}, {10}, {0, 5, 10}, {3, 3, 6}, {1, 20}, {1, 2, 3, 4, 7, 9}} {
			for _, sc := range []struct {
				ai  float64
				col []float64
			}{{1, slices.Repeat([]float64{1}, len(r))}, {0.75, col}} {
				checkObserved(t, r, bl, sc.ai, sc.col)
			}
		}
	}
}

func checkObserved(t *testing.T, row []float64, bl []int, ai float64, col []float64) {
	t.Helper()
	got := append([]float64(nil), row...)
	peak := scaleObserved(got, col, ai, bl)
	logs := append([]float64(nil), row...)
	logObserved(logs, bl)
	wantPeak := 0.0
	for j, v := range row {
		blind := slices.Contains(bl, j)
		want := ai * col[j] * v
		if blind || !(v > 0) || math.IsInf(v, 0) {
			want = math.NaN()
		}
		if !blind && (want > wantPeak || math.IsNaN(want)) && !math.IsNaN(wantPeak) {
			wantPeak = want
		}
		if math.Float64bits(got[j]) != math.Float64bits(want) && !(math.IsNaN(got[j]) && math.IsNaN(want)) {
			t.Errorf("blind %v, a %g: value %d (%g) became %g, want %g", bl, ai, j, v, got[j], want)
		}
		wantLog := math.Log(v)
		if blind {
			wantLog = math.NaN()
		}
		if math.Float64bits(logs[j]) != math.Float64bits(wantLog) && !(math.IsNaN(logs[j]) && math.IsNaN(wantLog)) {
			t.Errorf("blind %v: log of value %d (%g) is %g, want %g", bl, j, v, logs[j], wantLog)
		}
		if kept := !math.IsNaN(logs[j]) && !math.IsInf(logs[j], 0); kept != (v > 0 && !math.IsInf(v, 0) && !blind) {
			t.Errorf("blind %v: value %d (%g) kept %v in the fit", bl, j, v, kept)
		}
	}
	if math.Float64bits(peak) != math.Float64bits(wantPeak) && !(math.IsNaN(peak) && math.IsNaN(wantPeak)) {
		t.Errorf("blind %v, a %g: peak %g, want %g", bl, ai, peak, wantPeak)
	}
}

// What the assembly says of its matrices as it forms them matches the
// matrices themselves (the reference: a loop over every final value with
// Go's math.IsNaN and math.IsInf, and the largest value per channel, NaN
// left out): Finite only when every value of both is finite, and
// AbsoluteTop the largest absolute absorbance per channel, placeholders of
// blind points included and the values they replaced not. Cases: plain
// beams with a blank (every value finite, so Finite must be set), beams at
// or below zero (blind, their absorbances not finite until replaced), and a
// beam so small that blank/I overflows (1e4/1e-305: beyond the largest
// double, IEEE 754) at a point the weak-beam test makes blind.
func TestAssembledFiniteAndTop(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for _, c := range []string{"plain", "dark points", "overflow", "overflow in sight"} {
		s := beams(rng, 70, 300, 5, 1, 0)
		if c == "overflow in sight" {
			s.Values.Scale(1e-4, s.Values) // a detector reading about 1
		}
		switch c {
		case "dark points":
			for k := 0; k < 40; k++ {
				s.Values.Set(1+rng.IntN(69), rng.IntN(300), -1)
			}
			for i := 0; i < 70; i++ {
				s.Values.Set(i, 200, -1) // a channel with no light: placeholders 0
			}
		case "overflow":
			s.Values.Set(30, 100, 1e-305)
		}
		blank := make([]float64, 300)
		for j := range blank {
			blank[j] = 1.05 * s.Values.At(0, j)
		}
		if c == "overflow in sight" {
			// A channel at half the beams' size, well above their noise
			// (5·10⁻⁴), against a blank near the largest double: blank/I
			// overflows in every spectrum, and the matrix keeps the
			// infinities.
			for i := 0; i < 70; i++ {
				s.Values.Set(i, 100, 0.5*(1+1e-6*rng.NormFloat64()))
			}
			blank[100] = 1.7e308
		}
		a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: 1}, Consume: true})
		if err != nil {
			t.Fatal(err)
		}
		if (c == "dark points" || c == "overflow") && a.Blind.Count == 0 {
			t.Fatalf("%s: no blind point: the case tests nothing", c)
		}
		allFinite := true
		for _, x := range []*mat.Dense{a.Absolute, a.Difference} {
			for _, v := range x.RawMatrix().Data {
				allFinite = allFinite && !math.IsNaN(v) && !math.IsInf(v, 0)
			}
		}
		if a.Finite && !allFinite {
			t.Errorf("%s: said finite, and a value is not", c)
		}
		if c == "overflow in sight" && allFinite {
			t.Fatalf("%s: every value is finite: the case tests nothing", c)
		}
		if c == "plain" && !a.Finite {
			t.Errorf("%s: every value is finite, and the assembly did not say so", c)
		}
		n, m := a.Absolute.Dims()
		for j := 0; j < m; j++ {
			want := math.Inf(-1)
			for i := 0; i < n; i++ {
				if v := a.Absolute.At(i, j); v > want {
					want = v
				}
			}
			if a.AbsoluteTop[j] != want {
				t.Fatalf("%s: channel %d: largest absorbance %g, the matrix's %g", c, j, a.AbsoluteTop[j], want)
			}
		}
	}
}

// A series of two spectra has no second difference in time; the noise is
// then taken from fourth differences along the axis of their step, whose
// variance is 140σ² for white noise (2σ² for the step, times 1+16+36+16+1:
// the variance of a sum of independent values) on a change smooth beside
// the point spacing. The two beams here are 39 % of a conversion apart, and
// the bands' change adds a little of its own curvature: the estimate may
// err high, by up to 15 % (9 % with this seed), never low. Before, two
// difference spectra reported the export's rounding step as their noise
// (3.4e-7 for 1e-3 simulated) and a residual 2800 times it.
func TestTwoSpectraTakeTheNoiseAlongTheAxis(t *testing.T) {
	const sigI = 5.0
	rng := rand.New(rand.NewPCG(11, 1997))
	s := beams(rng, 6, 600, sigI, 1, 0)
	s.Values, s.Times, s.Names = mat.DenseCopyOf(s.Values.Slice(0, 2, 0, 600)), s.Times[:2], s.Names[:2]
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	if r := a.Noise.Level / sigI; r < 0.95 || r > 1.15 || !strings.Contains(a.Noise.Source, "along the axis") {
		t.Errorf("two single beams: σ_I %.4g from %q, simulated %g (ratio %.3f)", a.Noise.Level, a.Noise.Source, sigI, r)
	} else {
		t.Logf("two single beams: ratio %.3f", r)
	}
	const sigA = 1e-3
	d := &Series{AxisName: "wavenumber", Values: mat.NewDense(2, 600, nil), Times: []float64{0, 60}, Names: []string{"a", "b"}, Source: "sim"}
	for j := range 600 {
		d.Axis = append(d.Axis, 4000-5*float64(j))
		band := 0.1 * math.Exp(-sq((d.Axis[j]-1700)/20))
		for i := range 2 {
			d.Values.Set(i, j, 0.5*float64(i+1)*band+sigA*rng.NormFloat64())
		}
	}
	b, err := Assemble(d, AssembleOptions{Kind: Difference})
	if err != nil {
		t.Fatal(err)
	}
	if r := b.Noise.Level / sigA; r < 0.9 || r > 1.1 {
		t.Errorf("two difference spectra: σ_A %.4g from %q, simulated %g (ratio %.3f)", b.Noise.Level, b.Noise.Source, sigA, r)
	} else {
		t.Logf("two difference spectra: ratio %.3f", r)
	}
}

// A channel blind in every spectrum holds no observation, so a bilinear
// model determines nothing there (no equation involves it): the note says
// the resolved spectra are not determined there rather than letting their
// zeros pass for measured ones. Blind in some spectra only, the model is
// determined by the others and the note does not say so.
func TestBlindEverywhereIsNamedNotDetermined(t *testing.T) {
	axis, times := []float64{1000, 1002, 1004, 1006}, []float64{0, 30, 60}
	every := &Blind{Rows: [][]int{{2}, {2}, {2}}, Count: 3}
	some := &Blind{Rows: [][]int{{2}, nil, nil}, Count: 1}
	for _, c := range []struct {
		b    *Blind
		want bool
	}{{every, true}, {some, false}} {
		notes := blindNotes("s.csv", "wavenumber", axis, times, c.b, "no light")
		if got := len(notes) == 1 && strings.Contains(notes[0], "not determined there"); got != c.want {
			t.Errorf("blind rows %v: note %q; want 'not determined' %v", c.b.Rows, notes, c.want)
		}
	}
}

// A detector that saturates clips every beam at one ceiling, the blank's too
// (common practice: the blank is recorded on the same detector). Beams at the
// ceiling (a flat top in 3 or more neighbouring channels) are blind where
// they stand; a blank at the ceiling makes its channel blind in every
// spectrum, even where the sample's beams come under it, since the ratio to a
// clipped blank is an absorbance low by the light the ceiling cut off. The
// other points stay lit.
func TestClippedBlankIsBlindInEverySpectrum(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 5))
	s := beams(rng, 20, 200, 5, 1, 0)
	n, m := s.Values.Dims()
	const ceiling = 9500.0 // the envelope peaks at 10⁴ counts
	blank := make([]float64, m)
	for j := range blank {
		u := float64(j) / float64(m)
		blank[j] = math.Min(1e4*(0.6+0.4*math.Sin(3*u)), ceiling)
		for i := 0; i < n; i++ {
			s.Values.Set(i, j, math.Min(s.Values.At(i, j), ceiling))
		}
	}
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	under := 0 // spectra under the ceiling where the blank is at it
	for j := 0; j < m; j++ {
		for i := 0; i < n; i++ {
			v := s.Values.At(i, j)
			switch {
			case blank[j] >= ceiling && v < ceiling:
				under++
				fallthrough
			case v == ceiling:
				if !a.Blind.Has(i, j) {
					t.Errorf("spectrum %d, channel %d (beam %g, blank %g): not blind", i, j, v, blank[j])
				}
			case a.Blind.Has(i, j) && v > 1000:
				t.Errorf("spectrum %d, channel %d (beam %g, blank %g under the ceiling): blind", i, j, v, blank[j])
			}
		}
	}
	t.Logf("%d beams under the ceiling where the blank is at it", under)
	if under == 0 {
		t.Fatal("no beam under the ceiling where the blank is at it: the case tests nothing")
	}
}

// With BlankOffsetFree (species with closure, which absorbs one offset per
// channel constant in time), a channel where the blank is at the ceiling
// keeps the sample's beams under it as data when they are at least half the
// spectra: their absolute absorbance is −log10(I/I_ceiling), which is
// −log10(I/I_blank) − log10(I_blank/I_ceiling) (Beer–Lambert, the blank
// before the ceiling cut it), the same offset in every spectrum. The beams
// at the ceiling stay blind, and a channel with fewer than half its beams
// under the ceiling is blind in every spectrum as without the option.
func TestClippedBlankKeptWhereTheSampleIsMeasured(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 5))
	s := beams(rng, 20, 200, 5, 1, 0)
	n, m := s.Values.Dims()
	const ceiling = 9500.0
	open, blank := make([]float64, m), make([]float64, m)
	for j := range blank {
		u := float64(j) / float64(m)
		open[j] = 1e4 * (0.6 + 0.4*math.Sin(3*u))
		blank[j] = math.Min(open[j], ceiling)
		for i := 0; i < n; i++ {
			s.Values.Set(i, j, math.Min(s.Values.At(i, j), ceiling))
		}
	}
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: 1}, BlankOffsetFree: true})
	if err != nil {
		t.Fatal(err)
	}
	kept, gone := 0, 0
	every := a.Blind.Everywhere(m)
	for j := 0; j < m; j++ {
		if blank[j] < ceiling {
			continue
		}
		under := 0
		for i := 0; i < n; i++ {
			if s.Values.At(i, j) < ceiling {
				under++
			}
		}
		switch {
		case 2*under >= n+2 && !every[j]:
			kept++
			if a.BlankOffset == nil || !a.BlankOffset[j] {
				t.Errorf("channel %d kept but not marked as offset", j)
			}
			delta := math.Log10(open[j] / ceiling)
			for i := 0; i < n; i++ {
				v := s.Values.At(i, j)
				if v >= ceiling {
					if !a.Blind.Has(i, j) {
						t.Errorf("spectrum %d, channel %d: beam at the ceiling not blind", i, j)
					}
					continue
				}
				want := -math.Log10(v/open[j]) - delta
				if a.Blind.Has(i, j) || math.Abs(a.Absolute.At(i, j)-want) > 1e-12 {
					t.Errorf("spectrum %d, channel %d: blind %v, absorbance %.15g, want %.15g", i, j, a.Blind.Has(i, j), a.Absolute.At(i, j), want)
				}
			}
		case 2*under <= n-2:
			gone++
			if !every[j] {
				t.Errorf("channel %d: %d of %d beams under the ceiling, not blind in every spectrum", j, under, n)
			}
		}
	}
	t.Logf("%d clipped blank's channels kept, %d blind in every spectrum", kept, gone)
	if kept == 0 || gone == 0 {
		t.Fatalf("kept %d, blind %d: the case tests one side only", kept, gone)
	}
	if !slices.ContainsFunc(a.Notes, func(s string) bool { return strings.Contains(s, "common to all species") }) {
		t.Errorf("no note on the offset: %q", a.Notes)
	}
}

// An absorbance export of a detector whose noise is constant in counts
// has σ_A = σ_I/(I ln 10) (propagation of error): under a solvent band of
// absorbance 1.5, constant in time, the noise is 10^1.5 ≈ 32 times the
// rest. With three pre-reaction spectra the channels' noise used to be a
// median over 201 channels of their two steps each, which averaged the
// band's peak away (about 6 times too low at its centre); the shape along
// the axis now comes from the whole series' differences in time and the
// level from the pre-reaction steps, so the noise at the band's centre and
// away from it are both within 25 % of σ_I/(I ln 10).
func TestPreNoiseFollowsASolventBand(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 2026))
	n, m, pre := 90, 600, 3
	s := &Series{AxisName: "wavenumber", Values: mat.NewDense(n, m, nil), Source: "sim"}
	for j := 0; j < m; j++ {
		s.Axis = append(s.Axis, 2000-2*float64(j))
	}
	sigI, i0 := 5.0, 2e4
	solvent := func(j int) float64 { return 1.5 * math.Exp(-0.5*sq((float64(j)-150)/4)) }
	for i := 0; i < n; i++ {
		s.Times = append(s.Times, 30*float64(i))
		x := 0.0
		if i >= pre {
			x = 1 - math.Exp(-0.003*30*float64(i-pre+1))
		}
		for j := 0; j < m; j++ {
			a := solvent(j) + 0.3*(1-x)*math.Exp(-0.5*sq((float64(j)-350)/12)) + 0.4*x*math.Exp(-0.5*sq((float64(j)-420)/12))
			beam := i0*math.Pow(10, -a) + sigI*rng.NormFloat64()
			s.Values.Set(i, j, -math.Log10(beam/i0))
		}
	}
	out, err := Assemble(s, AssembleOptions{Kind: Absorbance, Reference: Reference{Mean: 1}, Pre: pre})
	if err != nil {
		t.Fatal(err)
	}
	truth := func(j int) float64 { return sigI / (i0 * math.Pow(10, -solvent(j)) * math.Ln10) }
	for _, j := range []int{150, 40, 550} {
		if got := out.Noise.Channel[j]; math.Abs(got/truth(j)-1) > 0.25 {
			t.Errorf("channel %d (solvent absorbance %.2f): noise %.3g, σ_I/(I ln 10) = %.3g", j, solvent(j), got, truth(j))
		}
	}
	if !strings.Contains(out.Noise.Source, "its shape along the axis from second differences in time of all 90 spectra") {
		t.Errorf("source %q does not say where the shape came from", out.Noise.Source)
	}
}
