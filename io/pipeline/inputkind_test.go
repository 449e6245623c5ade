package pipeline

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"gonum.org/v1/gonum/mat"
)

// uvSeries simulates a UV-visible run: a lamp throughput curve in
// arbitrary units 0.15…1.95 (scale), two bands exchanging intensity, and
// detector noise constant in counts (σ_I), as single beams
// I = I0·10^(−A) (Beer–Lambert, definition). It returns the single beams
// and the absorbance A = −log10(I/I_blank) against a separately measured
// noisy blank, whose noise is then ∝ 1/I.
func uvSeries(scale, sigmaI float64) (beams, absorbance *spectra.Series) {
	var axis []float64
	for x := 200.0; x <= 800; x += 2 {
		axis = append(axis, x)
	}
	n, m := 21, len(axis)
	rng := rand.New(rand.NewPCG(16, 5))
	throughput := func(x float64) float64 {
		u := (x - 450) / 200
		return scale * (1.8*math.Exp(-u*u) + 0.15)
	}
	bi, ba := mat.NewDense(n, m, nil), mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		c := math.Exp(-0.2 * float64(i))
		for j, x := range axis {
			a := c*0.8*math.Exp(-0.5*sq((x-350)/30)) + (1-c)*0.6*math.Exp(-0.5*sq((x-500)/40))
			i0 := throughput(x)
			beam := i0*math.Pow(10, -a) + sigmaI*rng.NormFloat64()
			blank := i0 + sigmaI*rng.NormFloat64()
			bi.Set(i, j, beam)
			ba.Set(i, j, -math.Log10(beam/blank))
		}
	}
	times := make([]float64, n)
	for i := range times {
		times[i] = 60 * float64(i)
	}
	mk := func(v *mat.Dense) *spectra.Series {
		return &spectra.Series{AxisName: "wavelength (nm)", Axis: axis, Times: times, Values: v, Source: "uv.csv"}
	}
	return mk(bi), mk(ba)
}

// Absorbance read as single beams must be told apart from single beams in
// arbitrary units that happen to lie in 0…2 too: the range alone (the old
// rule, −1…5 with values below 1) flags both. The evidence is physical
// (Beer–Lambert, A = −log10(I/I0); common practice): intensities are
// positive and well above zero over a throughput curve, and single beams
// of one run differ by the light absorbed; absorbance has a baseline near
// zero with negative noise excursions.
func TestAbsorbanceLook(t *testing.T) {
	beams, abs := uvSeries(1, 1e-3)
	noiseless, _ := uvSeries(1, 0)
	_, clean := uvSeries(1, 0)
	n, m := clean.Values.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			clean.Values.Set(i, j, clean.Values.At(i, j)+0.02) // positive baseline, no negative values
		}
	}
	counts, _ := uvSeries(2e4, 20)
	// Single beams with an opaque range (a solvent band that leaves no
	// light): zero in noise there, negative half the time, yet a
	// throughput curve everywhere else.
	opaque, _ := uvSeries(1, 1e-3)
	rng := rand.New(rand.NewPCG(3, 9))
	for i := 0; i < n; i++ {
		for j := 40; j < 60; j++ {
			opaque.Values.Set(i, j, 1e-3*rng.NormFloat64())
		}
	}
	// Difference spectra against the first: zero at first, signed after.
	diff, _ := uvSeries(1, 0)
	for i := n - 1; i >= 0; i-- {
		for j := 0; j < m; j++ {
			diff.Values.Set(i, j, abs.Values.At(i, j)-abs.Values.At(0, j))
		}
	}
	cases := []struct {
		name string
		ser  *spectra.Series
		want string // part of the reason, "" for no warning
		sure bool   // cannot be single beams: the run refuses to guess
	}{
		{"single beams, arbitrary units 0–2, noise constant in counts", beams, "", false},
		{"single beams without noise", noiseless, "", false},
		{"single beams in counts", counts, "", false},
		{"single beams with an opaque range", opaque, "zero or negative", false},
		{"absorbance with noise ∝ 1/I", abs, "first spectrum lies near zero", true},
		{"difference spectra", diff, "zero or negative", true},
		{"absorbance on a positive baseline", clean, "lies near zero", false},
	}
	for _, c := range cases {
		got, sure := absorbanceLook(c.ser)
		if c.want == "" && got != "" {
			t.Errorf("%s: flagged as absorbance: %s", c.name, got)
		}
		if c.want != "" && !strings.Contains(got, c.want) {
			t.Errorf("%s: reason %q, want one saying %q", c.name, got, c.want)
		}
		if sure != c.sure {
			t.Errorf("%s: sure = %v, want %v (%s)", c.name, sure, c.sure, got)
		}
	}
	// The single beams in 0…2 are exactly what the range rule alone
	// flagged: otherwise this test could not fail for the old rule.
	lo, hi := mat.Min(beams.Values), mat.Max(beams.Values)
	if !(lo >= -1 && hi <= 5 && lo < 1) {
		t.Fatalf("single beams span %g…%g, outside the range that used to warn", lo, hi)
	}
}

// The ratio evidence on its own: absorbance spectra whose first spectrum is
// well above zero everywhere (a broad band over the whole axis) but which
// change by large factors, as absorbance of a growing product does; single
// beams change only by the fraction of light absorbed (Beer–Lambert).
func TestAbsorbanceLookRatio(t *testing.T) {
	_, abs := uvSeries(1, 0)
	n, m := abs.Values.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			abs.Values.Set(i, j, 0.1+0.2*float64(i))
		}
	}
	if got, _ := absorbanceLook(abs); !strings.Contains(got, "factor") {
		t.Errorf("absorbance rising 0.1 → 4.1 not flagged by its ratio: %q", got)
	}
}

// An absolute absorbance above 2 (under 1 % of the light transmitted;
// common practice) is named in the run's warnings, so the terminal and
// summary.json carry it, not only the report.
func TestSaturationReachesSummary(t *testing.T) {
	_, abs := uvSeries(1, 1e-4)
	n, m := abs.Values.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			abs.Values.Set(i, j, 3*abs.Values.At(i, j)) // band at 350 nm reaches 2.4 at first
		}
	}
	var b strings.Builder
	b.WriteString("wavelength (nm)")
	for _, tm := range abs.Times {
		b.WriteString("," + output.Float(tm))
	}
	b.WriteString("\n")
	for j, x := range abs.Axis {
		b.WriteString(output.Float(x))
		for i := 0; i < n; i++ {
			b.WriteString("," + output.Float(abs.Values.At(i, j)))
		}
		b.WriteString("\n")
	}
	dir := t.TempDir()
	p := filepath.Join(dir, "abs.csv")
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	s := NewSettings()
	s.Data, s.Kind, s.Out, s.Report = []string{p}, "absorbance", filepath.Join(dir, "out"), "off"
	var out strings.Builder
	if _, err := Execute(s, Streams{Out: &out, Err: new(strings.Builder)}); err != nil {
		t.Fatal(err)
	}
	// Where the simulated absorbance exceeds 2: 2.4·exp(−d²/2) > 2 for
	// |x − 350| < 30·√(2 ln 1.2) ≈ 18.1 nm, so 332–368 nm on a 2 nm grid
	// (only the first spectrum, c = 1, gets there; the next peaks at
	// 2.4·e^(−0.2) = 1.96).
	want := "absorbance exceeds 2 (under 1 % of the light transmitted) at 332–368 nm"
	if !strings.Contains(out.String(), "warning: "+want) {
		t.Errorf("terminal lacks %q:\n%s", want, out.String())
	}
	raw, err := os.ReadFile(filepath.Join(s.Out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum struct{ Warnings []string }
	if err := json.Unmarshal(raw, &sum); err != nil {
		t.Fatal(err)
	}
	if !anyContains(sum.Warnings, want) {
		t.Errorf("summary.json warnings lack %q: %q", want, sum.Warnings)
	}
}

// Single beams given as absorbance or differences are named when no absorbance could be
// that large: counts of a lamp curve (uvSeries at 3·10⁴, noise constant in counts) have a
// median far above 10, where A = 10 would leave 10⁻¹⁰ of the light (Beer–Lambert,
// definition). Single beams in arbitrary units of 0.15…1.95 cannot be told from
// absorbance by size and are not named; nor is absorbance itself, simulated or the real
// urethane series (source as urethaneDir).
func TestSingleBeamLook(t *testing.T) {
	counts, countsA := uvSeries(3e4, 30)
	units, _ := uvSeries(1, 1e-3)
	ure, err := spectra.Load(filepath.Join(urethaneDir, "catalyst-1.00"), spectra.FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name  string
		ser   *spectra.Series
		named bool
	}{{"counts", counts, true}, {"arbitrary units", units, false}, {"simulated absorbance", countsA, false}, {"urethane absorbance", ure, false}} {
		if why := singleBeamLook(c.ser); (why != "") != c.named {
			t.Errorf("%s: %q, want named %v", c.name, why, c.named)
		}
	}
	// Through Run, on a matrix CSV of the counts: the warning with --kind absorbance and
	// with --kind difference, where the differences' own warning (they look like
	// absorbances) would send the user the wrong way and is left out.
	dir := t.TempDir()
	path := filepath.Join(dir, "beams.csv")
	var b strings.Builder
	b.WriteString("wavelength")
	for _, tm := range counts.Times {
		b.WriteString("," + strconvFloat(tm))
	}
	b.WriteString("\n")
	n, m := counts.Values.Dims()
	for j := 0; j < m; j++ {
		b.WriteString(strconvFloat(counts.Axis[j]))
		for i := 0; i < n; i++ {
			b.WriteString("," + strconvFloat(counts.Values.At(i, j)))
		}
		b.WriteString("\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, kind := range []string{"absorbance", "difference"} {
		s := NewSettings()
		s.Data, s.Kind = []string{path}, kind
		s.Bands, s.Checks, s.MaxIter = "off", "off", 20
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		all := strings.Join(r.Warnings, "\n")
		if !strings.Contains(all, "look like single-beam intensities") {
			t.Errorf("--kind %s: no single-beam warning; warnings %q", kind, r.Warnings)
		}
		if strings.Contains(all, "look like absorbances") {
			t.Errorf("--kind %s: told the single beams look like absorbances", kind)
		}
	}
}

func strconvFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// urethaneFour is the four real ATR absorbance spectra of
// testdata/urethane-atr (files 1, 10, 20 and 58 of the catalyst-1.00
// series, 2000–2700 cm⁻¹; jevandezande/spectra, MIT) as one series, and
// the same spectra through f value by value.
func urethaneFour(t *testing.T, f func(a float64) float64) *spectra.Series {
	t.Helper()
	files, err := filepath.Glob(filepath.Join("..", "..", "testdata", "urethane-atr", "*.CSV"))
	if err != nil || len(files) != 4 {
		t.Fatalf("urethane files: %v, %v", files, err)
	}
	var ser *spectra.Series
	for i, p := range files {
		sp, err := spectra.ReadSpectrumFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if ser == nil {
			ser = &spectra.Series{AxisName: sp.AxisName, Axis: sp.Axis, Values: mat.NewDense(len(files), len(sp.Axis), nil), Source: "urethane"}
		}
		for j, a := range sp.Values {
			ser.Values.Set(i, j, f(a))
		}
		ser.Times = append(ser.Times, float64(i))
	}
	return ser
}

// Transmittance T = 10^−A is at most 1 (100 %) and near 1 where nothing
// absorbs (IUPAC Gold Book, "transmittance" and "absorbance"): given with
// no --kind, it is read as single beams, which must be said, naming
// --kind transmittance. Single beams (in counts, in arbitrary units 0–2,
// or scaled to their peak) and absorbance are not taken for it.
func TestTransmittanceLookWithoutKind(t *testing.T) {
	beams, _ := uvSeries(1, 1e-3)
	peak, _ := uvSeries(1/1.95, 1e-3) // a throughput curve scaled to its peak, ≤ 1
	counts, _ := uvSeries(2e4, 20)
	cases := []struct {
		name string
		ser  *spectra.Series
		want bool
	}{
		{"transmittance as a fraction, T = 10^−A", urethaneFour(t, func(a float64) float64 { return math.Pow(10, -a) }), true},
		{"transmittance in per cent, 100·10^−A", urethaneFour(t, func(a float64) float64 { return 100 * math.Pow(10, -a) }), true},
		{"absorbance", urethaneFour(t, func(a float64) float64 { return a }), false},
		{"single beams, arbitrary units 0.15–1.95", beams, false},
		{"single beams scaled to their peak", peak, false},
		{"single beams in counts", counts, false},
	}
	for _, c := range cases {
		s := NewSettings()
		s.Data = []string{"series"}
		r := &Result{}
		kind, _ := beamKind(s, r, []*spectra.Series{c.ser}, "")
		said := strings.Contains(strings.Join(r.Warnings, "\n"), "--kind transmittance")
		if said != c.want {
			t.Errorf("%s: said --kind transmittance: %v, want %v (%q)", c.name, said, c.want, r.Warnings)
		}
		if c.want && (kind != spectra.SingleBeam || len(r.Warnings) != 1) {
			t.Errorf("%s: kind %q, %d warnings: want single beams and one warning", c.name, kind, len(r.Warnings))
		}
	}
	// With a --kind given, the user's word stands and nothing is said.
	s := NewSettings()
	s.Data = []string{"series"}
	r := &Result{}
	tr := urethaneFour(t, func(a float64) float64 { return math.Pow(10, -a) })
	if _, err := beamKind(s, r, []*spectra.Series{tr}, spectra.SingleBeam); err != nil || len(r.Warnings) != 0 {
		t.Errorf("--kind single-beam on transmittance: %v, %q", err, r.Warnings)
	}
}

// Absorbance given as --kind transmittance: a transmittance is near 1 where
// the sample absorbs nothing (IUPAC Gold Book, "transmittance"), the real
// urethane absorbance nowhere exceeds 0.5; it must be said, naming --kind
// absorbance. True transmittance, as a fraction or in per cent, is not.
func TestAbsorbanceGivenAsTransmittance(t *testing.T) {
	cases := []struct {
		name string
		f    func(a float64) float64
		want bool
	}{
		{"absorbance", func(a float64) float64 { return a }, true},
		{"transmittance, T = 10^−A", func(a float64) float64 { return math.Pow(10, -a) }, false},
		{"transmittance in per cent", func(a float64) float64 { return 100 * math.Pow(10, -a) }, false},
	}
	for _, c := range cases {
		s := NewSettings()
		s.Data = []string{"series"}
		r := &Result{}
		if err := transmittanceToAbsorbance(s, r, []*spectra.Series{urethaneFour(t, c.f)}); err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		said := strings.Contains(strings.Join(r.Warnings, "\n"), "--kind absorbance")
		if said != c.want {
			t.Errorf("%s: said --kind absorbance: %v, want %v (%q)", c.name, said, c.want, r.Warnings)
		}
	}
}
