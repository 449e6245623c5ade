package mcr

import (
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The reason given for an outlier says what its residual looks like, from
// measured features. Data from the model (twoSpecies: A → B, Bateman 1910,
// Gaussian bands 8 and 10 points wide, white noise σ = 1e-3), the fit being
// the truth itself, so each row's residual is what was added to it:
//   - row 5: one point raised by 50σ: a spike (definition: one point, its
//     neighbours at the noise);
//   - row 12: single points raised by 30σ every 23 points: sharp lines (each
//     one point wide; common practice: gas lines are a few points wide);
//   - row 20: every band 10 % lower, the whole spectrum scaled (a bubble
//     lifting the film: the loss is the row's own bands, 8–10 points wide at
//     σ, so about 20 at half height) plus a smooth rise: broad, and never
//     "sharp lines", its largest feature wider than a line.
func TestOutlierReasonsFollowTheResidualsShape(t *testing.T) {
	d, c, s, _, _ := twoSpecies(4, 1e-3, false)
	_, m := d.Dims()
	d.Set(5, 90, d.At(5, 90)+0.05)
	for j := 7; j < m; j += 23 {
		d.Set(12, j, d.At(12, j)+0.03)
	}
	var model mat.Dense
	model.Mul(c, s.T())
	for j := 0; j < m; j++ {
		x := float64(j) / float64(m-1)
		d.Set(20, j, d.At(20, j)-0.1*model.At(20, j)+0.004*x*x*x*x)
	}
	out := FindOutliers(d, c, s, nil, nil, nil, 1e-3, nil)
	want := map[int]string{5: "a spike or a bad point", 12: "sharp lines", 20: "broad, not line-like"}
	if len(out) != len(want) {
		t.Fatalf("outliers %+v; want rows 5, 12 and 20", out)
	}
	for _, o := range out {
		w, ok := want[o.Row]
		if !ok || !strings.Contains(o.Reason, w) {
			t.Errorf("row %d: %q; want it to say %q", o.Row, o.Reason, w)
		}
		if o.Row == 20 && strings.Contains(o.Reason, "sharp lines") {
			t.Errorf("row 20, a broad loss, is called sharp lines: %q", o.Reason)
		}
	}
}

// A bubble on a wavenumber axis with the noise of a single-beam detector
// (constant in counts, so σ_A ∝ 1/I: Beer–Lambert and error propagation,
// common practice): the spectrum's bands lose 12 % and a scatter term
// 0.3 (ν/4000)⁴ (Rayleigh, ν⁴) rises toward high wavenumber. Read in units of
// the noise (weights 1/σ²), it is far from the others, its remainder after
// the smooth curve mostly below the fit and the curve rising with wavenumber.
func TestBubbleReasonNamesLossAndScatter(t *testing.T) {
	const n, m = 30, 400
	axis := make([]float64, m)
	col := make([]float64, m)
	c, s := mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	for j := range axis {
		axis[j] = 4000 - 3000*float64(j)/float64(m-1)
		s.Set(j, 0, 0.4*math.Exp(-0.5*math.Pow((axis[j]-1700)/15, 2))+0.2*math.Exp(-0.5*math.Pow((axis[j]-2900)/30, 2)))
		s.Set(j, 1, 0.5*math.Exp(-0.5*math.Pow((axis[j]-1650)/15, 2))+0.3*math.Exp(-0.5*math.Pow((axis[j]-1250)/20, 2)))
		intensity := 2e4 * math.Exp(-math.Pow((axis[j]-2300)/1500, 2))
		sigmaA := 4 / (intensity * math.Ln10)
		col[j] = 1 / (sigmaA * sigmaA)
	}
	row := make([]float64, n)
	for i := range row {
		a := math.Exp(-float64(i) / 10)
		c.SetRow(i, []float64{a, 1 - a})
		row[i] = 1
	}
	d := mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			e := math.Sin(float64(7*i+13*j)) / math.Sqrt(col[j]) // a fixed pattern of the size of the noise
			v := d.At(i, j)
			if i == 17 {
				v = 0.88*v + 0.3*math.Pow(axis[j]/4000, 4)
			}
			d.Set(i, j, v+e)
		}
	}
	out := FindOutliersIn(d, c, s, nil, nil, OutlierInput{Axis: axis, Wavenumbers: axis, Sigma: 1, Row: row, Col: col})
	if len(out) != 1 || out[0].Row != 17 {
		t.Fatalf("outliers %+v; want row 17 only", out)
	}
	for _, w := range []string{"broad, not line-like", "higher toward high wavenumber", "scatter rising with wavenumber"} {
		if !strings.Contains(out[0].Reason, w) {
			t.Errorf("reason %q; want it to say %q", out[0].Reason, w)
		}
	}
}

// Gas lines narrower than the axis resolves are lines whatever their count
// of points: water-vapour lines about 0.2 cm⁻¹ wide (pressure broadening;
// from memory) show the instrument's line shape, here a Gaussian 1.45 cm⁻¹
// wide at half height on a 0.482 cm⁻¹ axis (the spacing of the real
// urethane series), three spacings: wider than the two a sampled axis can
// show at least (Nyquist), so the second differences carry under 5 % of a
// line's energy (3/(24 s⁴) = 4.7 % for a Gaussian of s = 1.27 points; its
// spectrum's fourth moment), and narrower than a condensed sample's bands,
// 5–30 cm⁻¹ (common practice). The lines sit in one spectrum of a series
// fitted by its truth (first order, e^(−t/10)), white noise 1e-3 added by
// a fixed pattern.
func TestUnresolvedLinesAreLinesOnAFineAxis(t *testing.T) {
	const n, m, step = 30, 800, 0.482
	axis := make([]float64, m)
	c, s := mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	g := func(x, at, fwhm float64) float64 { return math.Exp(-4 * math.Ln2 * math.Pow((x-at)/fwhm, 2)) }
	for j := range axis {
		axis[j] = 1700 - step*float64(j)
		s.Set(j, 0, 0.4*g(axis[j], 1600, 15)+0.2*g(axis[j], 1450, 20))
		s.Set(j, 1, 0.5*g(axis[j], 1520, 18)+0.3*g(axis[j], 1380, 25))
	}
	d := firstOrderWithPattern(c, s, func(i, j int, model float64) float64 {
		v := 0.0
		if i == 12 {
			for l := 0; l < 25; l++ {
				v += (0.01 + 0.002*float64(l%7)) * g(axis[j], 1695-15.3*float64(l), 1.45)
			}
		}
		return v
	})
	out := FindOutliersIn(d, c, s, nil, nil, OutlierInput{Axis: axis, Wavenumbers: axis, Sigma: 1e-3})
	if len(out) != 1 || out[0].Row != 12 {
		t.Fatalf("outliers %+v; want row 12 only", out)
	}
	if r := out[0].Reason; !strings.Contains(r, "sharp lines") || strings.Contains(r, "broad") {
		t.Errorf("lines three spacings of %g cm⁻¹ wide: %q; want sharp lines, not broad", step, r)
	}
}

// The width rule reads a width in points against the spacing: three points
// are a line the axis does not resolve at 0.482 cm⁻¹ (1.45 cm⁻¹), a band's
// width at 2 cm⁻¹ (6 cm⁻¹ wide, above the 4 cm⁻¹ under which no condensed
// band at room temperature lies, common practice), and four points exceed
// what an axis that samples its resolution twice shows of a line (common
// practice); without a wavenumber axis the widths of bands and lines are not
// known, and the rule says nothing.
func TestLineWidthRuleAgainstTheSpacing(t *testing.T) {
	axis := []float64{0, 1}
	cases := []struct {
		width      int
		step       float64
		wavenumber bool
		want       bool
	}{
		{3, 0.482, true, true},
		{2, 0.964, true, true},
		{3, 2, true, false},
		{4, 0.482, true, false},
		{3, 0.482, false, false},
	}
	for _, tc := range cases {
		f := residualFeatures{width: tc.width, step: tc.step, axis: axis}
		in := OutlierInput{Axis: axis}
		if tc.wavenumber {
			in.Wavenumbers = axis
		}
		if got := f.unresolved(in); got != tc.want {
			t.Errorf("%d points at %g (wavenumber %v): unresolved %v; want %v", tc.width, tc.step, tc.wavenumber, got, tc.want)
		}
	}
}

// A residual whose largest point stays under the limit a line or a spike
// reaches (√(2 ln m) + 3 robust standard deviations: the usual largest of m
// normal draws, Cramér 1946) has no feature of its own: it is described as
// spread over the axis, not by that point's width (a real spectrum read
// "broad, not line-like: its largest feature (at 1699.94 cm⁻¹) is 0.482 cm⁻¹
// (1 point(s)) wide"). A feature above the limit keeps its width.
func TestBroadResidualWithNoPointStandingOut(t *testing.T) {
	axis := make([]float64, 100)
	for j := range axis {
		axis[j] = 1800 - 0.482*float64(j)
	}
	in := OutlierInput{Axis: axis, Wavenumbers: axis}
	low := residualFeatures{peak: 4, peakAt: 20, width: 1, limit: 6, step: 0.482, axis: axis, smooth: 0.1, negShare: 0.5}
	w := low.words(in)
	if !strings.Contains(w, "no point standing out (the largest, at 1790.36 cm⁻¹, is 4 robust standard deviations of the row, under the 6") || strings.Contains(w, "wide at half height;") {
		t.Errorf("under the limit: %q", w)
	}
	high := low
	high.peak, high.width = 9, 40
	if w := high.words(in); !strings.Contains(w, "broad, not line-like: its largest feature (at 1790.36 cm⁻¹) is 19.3 cm⁻¹ (40 point(s)) wide at half height") {
		t.Errorf("above the limit: %q", w)
	}
	// A feature standing out narrower than a condensed sample's narrowest
	// bands (4 cm⁻¹; common practice) is not called broad: a real spectrum
	// read "broad, not line-like: its largest feature (at 1489.26 cm⁻¹) is
	// 1.93 cm⁻¹ (4 point(s)) wide at half height".
	narrow := high
	narrow.width, narrow.rough = 4, 0.02
	w = narrow.words(in)
	if strings.Contains(w, "broad") || !strings.Contains(w, "its largest feature (at 1790.36 cm⁻¹) is 1.93 cm⁻¹ (4 point(s)) wide at half height, narrower than the 4 cm⁻¹") {
		t.Errorf("a narrow feature: %q", w)
	}
}

// The polynomial basis of the residual's smooth part is the thin QR factor
// of its weighted Vandermonde matrix V: the same columns and R as gonum's
// mat.QR gives (a reference library: Householder QR, the first k columns of
// its full Q), with QᵀQ = I and Q R = V (the definition of a QR
// factorisation). The full Q it was cut from is m × m: 386 MB for the 6950
// points of the real urethane series, 820 MB for a run that used 88 MB
// without an outlier. The bytes allocated must grow with m, not m²: at
// m = 3000 the full Q and its copy were 144 MB, the thin factor a few
// columns of m.
func TestResidualShapeBasisIsThin(t *testing.T) {
	const m = 41
	axis, scale := make([]float64, m), make([]float64, m)
	for j := range axis {
		axis[j] = 4000 - 7.5*float64(j)
		scale[j] = 0.5 + math.Abs(math.Sin(float64(j)))
	}
	rs := newResidualShape(axis, scale, m)
	_, k := rs.q.Dims()
	v := mat.NewDense(m, k, nil)
	for j, x := range axis {
		u := 2*(x-axis[m-1])/(axis[0]-axis[m-1]) - 1
		for c, p := 0, 1.0; c < k; c, p = c+1, p*u {
			v.Set(j, c, scale[j]*p)
		}
	}
	var qr mat.QR
	qr.Factorize(v)
	var q, r mat.Dense
	qr.QTo(&q)
	qr.RTo(&r)
	if !mat.EqualApprox(rs.q, q.Slice(0, m, 0, k), 1e-14) || !mat.EqualApprox(rs.r, r.Slice(0, k, 0, k), 1e-13) {
		t.Errorf("thin factor differs from the first %d columns of mat.QR's Q and its R", k)
	}
	var qtq, back mat.Dense
	qtq.Mul(rs.q.T(), rs.q)
	back.Mul(rs.q, rs.r)
	if !mat.EqualApprox(&qtq, identity(k), 1e-13) || !mat.EqualApprox(&back, v, 1e-13) {
		t.Errorf("QᵀQ ≠ I or Q R ≠ V")
	}

	const big = 3000
	wide := make([]float64, big)
	for j := range wide {
		wide[j] = 4000 - 0.48*float64(j)
	}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	newResidualShape(wide, nil, big)
	runtime.ReadMemStats(&after)
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 100*8*big {
		t.Errorf("allocated %d bytes for %d points, want under %d (linear in the points; the full Q alone is %d)", alloc, big, 100*8*big, 8*big*big)
	}
}

// A forest of gas lines is lines even where they overlap: 60 Lorentzian
// lines 3 cm⁻¹ wide at half height (the instrument's line shape at a few
// cm⁻¹ resolution; common practice) at random places over 1400–1900 cm⁻¹ on
// the 0.482 cm⁻¹ axis of the real urethane series (1000–2000 cm⁻¹ here) merge into features up to
// several lines wide, so the largest alone reads as a band (before: "broad,
// not line-like: its largest feature … is 5.79 cm⁻¹ (12 point(s)) wide" on a
// real series with such lines added). Most features are single lines,
// narrower than a condensed sample's narrowest bands (4 cm⁻¹; 5–30 cm⁻¹ is
// common practice). The counter-case, one spectrum whose twelve bands
// 10–30 cm⁻¹ wide lose 15 % (a bubble over the crystal), is not lines.
func TestForestOfOverlappingLinesIsLines(t *testing.T) {
	const n, m, step = 30, 2075, 0.482
	axis := make([]float64, m)
	c, s := mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	g := func(x, at, fwhm float64) float64 { return math.Exp(-4 * math.Ln2 * math.Pow((x-at)/fwhm, 2)) }
	lor := func(x, at, hwhm float64) float64 { return hwhm * hwhm / ((x-at)*(x-at) + hwhm*hwhm) }
	rng := rand.New(rand.NewPCG(3, 30))
	var lines [60][2]float64
	for l := range lines {
		lines[l] = [2]float64{1400 + 500*rng.Float64(), 0.002 + 0.018*rng.Float64()}
	}
	for j := range axis {
		axis[j] = 2000 - step*float64(j)
		x := axis[j]
		var a, b float64
		for q := 0; q < 6; q++ {
			a += (0.1 + 0.05*float64(q%3)) * g(x, 1750-130*float64(q), 10+4*float64(q))
			b += (0.12 + 0.04*float64(q%2)) * g(x, 1700-120*float64(q), 12+3*float64(q))
		}
		s.Set(j, 0, a)
		s.Set(j, 1, b)
	}
	d := firstOrderWithPattern(c, s, func(i, j int, model float64) float64 {
		v := 0.0
		switch i {
		case 12:
			for _, l := range lines {
				v += l[1] * lor(axis[j], l[0], 1.5)
			}
		case 20:
			v -= 0.15 * model
		}
		return v
	})
	out := FindOutliersIn(d, c, s, nil, nil, OutlierInput{Axis: axis, Wavenumbers: axis, Sigma: 1e-3})
	if len(out) != 2 || out[0].Row != 12 || out[1].Row != 20 {
		t.Fatalf("outliers %+v; want rows 12 and 20", out)
	}
	if r := out[0].Reason; !strings.Contains(r, "sharp lines") || strings.Contains(r, "broad") {
		t.Errorf("a forest of lines 3 cm⁻¹ wide: %q; want sharp lines, not broad", r)
	}
	if r := out[1].Reason; strings.Contains(r, "sharp lines") || !strings.Contains(r, "broad") {
		t.Errorf("a bubble's loss over bands 10–30 cm⁻¹ wide: %q; want broad, not lines", r)
	}
	t.Logf("lines: %s", out[0].Reason)
	t.Logf("bubble: %s", out[1].Reason)
}

// On a wavelength axis in nm the rules written in cm⁻¹ read the axis
// converted, ν̃/cm⁻¹ = 10⁷/(λ/nm) (the definition of the wavenumber): the
// high end of the axis is low wavenumber, so a curve higher there is not
// scatter rising with wavenumber (Rayleigh, ν⁴; common practice), and a
// feature at 4255.3 nm = 2350 cm⁻¹ lies in CO₂'s stretching band
// (2300–2390 cm⁻¹; common practice), its width in cm⁻¹ from the converted
// spacing, 0.5 cm⁻¹ here.
func TestOutlierWordsOnAWavelengthAxis(t *testing.T) {
	const m = 400
	nm, wn := make([]float64, m), make([]float64, m)
	for j := range wn {
		wn[j] = 2500 - 0.5*float64(j)
		nm[j] = 1e7 / wn[j]
	}
	in := OutlierInput{Axis: nm, Wavenumbers: wn}
	rs := newResidualShape(nm, nil, m)
	if !rs.inWavenumbers(wn) || math.Abs(rs.step-0.5) > 1e-9 {
		t.Fatalf("spacing in cm⁻¹ %g; want 0.5", rs.step)
	}
	f := residualFeatures{peak: 9, peakAt: 300, width: 20, limit: 6, step: rs.step, axis: nm, smooth: 0.5, negShare: 0.8, rising: 1}
	w := f.words(in)
	for _, want := range []string{"at 4255.32 on the axis (2350 cm⁻¹)", "10 cm⁻¹ (20 point(s)) wide", "higher toward low wavenumber", "CO₂ in the beam path has its stretching band"} {
		if !strings.Contains(w, want) {
			t.Errorf("rising toward the axis's high end: want %q in %q", want, w)
		}
	}
	f.rising, f.peakAt = -1, 20 // 2490 cm⁻¹, outside CO₂'s band
	w = f.words(in)
	if !strings.Contains(w, "higher toward high wavenumber") || !strings.Contains(w, "scatter rising with wavenumber") {
		t.Errorf("rising toward the axis's low end: %q", w)
	}
	// An axis evenly spaced in nm is not in cm⁻¹ (its spacing there runs
	// from 1.6 to 0.19 cm⁻¹ over 2500–7500 nm, as 10⁷/λ²): no one width in
	// cm⁻¹ per point, the rules are left out.
	even := make([]float64, 2501)
	for j := range even {
		even[j] = 2500 + 2*float64(j)
	}
	if newResidualShape(even, nil, len(even)).inWavenumbers(spectraWavenumbers(even)) {
		t.Error("an axis even in nm taken as even in cm⁻¹")
	}
}

// spectraWavenumbers is 10⁷/λ (io/spectra.Wavenumbers, which mcr does not
// import).
func spectraWavenumbers(nm []float64) []float64 {
	out := make([]float64, len(nm))
	for j, x := range nm {
		out[j] = 1e7 / x
	}
	return out
}

// firstOrderWithPattern fills c (n × 2) with a first-order decay,
// e^(−t/10) and its complement, and returns C Sᵀ plus a fixed pattern of
// white-noise size 1e-3 and what add gives at each point from the model's
// value there: the series the outlier-word tests set their faults in.
func firstOrderWithPattern(c, s *mat.Dense, add func(i, j int, model float64) float64) *mat.Dense {
	n, _ := c.Dims()
	m, _ := s.Dims()
	for i := 0; i < n; i++ {
		a := math.Exp(-float64(i) / 10)
		c.SetRow(i, []float64{a, 1 - a})
	}
	d := mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			model := d.At(i, j)
			d.Set(i, j, model+1e-3*math.Sin(float64(7*i+13*j))*math.Sqrt2+add(i, j, model))
		}
	}
	return d
}
