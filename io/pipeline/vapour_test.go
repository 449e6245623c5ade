package pipeline

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// TestVapourWarningOnRealSeries runs the trimmed copies of the urethane ATR
// series (source as urethaneDir; every second spectrum, 3500–4000 cm⁻¹) as
// a user would. At catalyst loading 0.01 water-vapour lines grow during the
// run (seen in the data: the last spectrum less the first is a forest of
// lines there, about 0.05 absorbance high): the warning fires, names the
// resolved spectra holding the lines, and vapour.csv gives the height per
// spectrum, whose range is summary.json's line_change (recomputed here from
// the file). At 1.00 there is no warning and no vapour.csv. The copy of
// the 0.01 series over 1300–2000 cm⁻¹ is checked on the bending lines and
// warns the same way.
func TestVapourWarningOnRealSeries(t *testing.T) {
	for _, tc := range []struct {
		run  string
		want bool
	}{{"vapour-catalyst-0.01", true}, {"vapour-catalyst-1.00", false}, {"vapour-bend-catalyst-0.01", true}} {
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, tc.run)}, "absorbance", true
		s.Bands, s.Checks, s.Report = "off", "off", "off"
		s.Out, s.Quiet = t.TempDir(), true
		r, err := Execute(s, Streams{Out: new(strings.Builder), Err: new(strings.Builder)})
		if err != nil {
			t.Fatal(err)
		}
		warned := false
		for _, w := range r.Warnings {
			warned = warned || strings.HasPrefix(w, "water vapour: ")
		}
		b, err := os.ReadFile(filepath.Join(s.Out, "summary.json"))
		if err != nil {
			t.Fatal(err)
		}
		var sum struct {
			Vapour struct {
				Checked, Detected bool
				Change            []float64 `json:"line_change"`
				With              []struct {
					Component string
					Height    float64 `json:"line_height"`
				} `json:"spectra_with_lines"`
			} `json:"water_vapour"`
		}
		if err := json.Unmarshal(b, &sum); err != nil {
			t.Fatal(err)
		}
		_, statErr := os.Stat(filepath.Join(s.Out, "vapour.csv"))
		if warned != tc.want || sum.Vapour.Detected != tc.want || !sum.Vapour.Checked || (statErr == nil) != tc.want {
			t.Fatalf("%s: warned %v, detected %v, checked %v, vapour.csv %v; want %v\n%s", tc.run, warned, sum.Vapour.Detected, sum.Vapour.Checked, statErr, tc.want, r.Warnings)
		}
		if !tc.want {
			continue
		}
		if len(sum.Vapour.With) == 0 {
			t.Errorf("%s: no resolved spectrum holds the lines", tc.run)
		}
		// The warning quotes each line height as summary.json holds it,
		// sign included (a user read 0.11 where the file had -0.1107).
		for _, w := range sum.Vapour.With {
			if h := fmt.Sprintf("%.2g (", w.Height); !anyContains(r.Warnings, h) {
				t.Errorf("%s: %s's line height %.4g, no warning quotes it as %q: %q", tc.run, w.Component, w.Height, h, r.Warnings)
			}
		}
		lo, hi := vapourColumnRange(t, filepath.Join(s.Out, "vapour.csv"), len(r.Times))
		if len(sum.Vapour.Change) != 1 || math.Abs(sum.Vapour.Change[0]-(hi-lo)) > 1e-9*(hi-lo) {
			t.Errorf("%s: line_change %v, vapour.csv's range %.10g", tc.run, sum.Vapour.Change, hi-lo)
		}
	}
}

// vapourColumnRange reads vapour.csv's line_height column (rows rows) and
// returns its smallest and largest value.
func vapourColumnRange(t *testing.T, path string, rows int) (lo, hi float64) {
	t.Helper()
	head, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if first, _, _ := strings.Cut(string(head), "\n"); first != "time,line_height" {
		t.Fatalf("vapour.csv header %q, want time,line_height", first)
	}
	recs := readNumbers(t, path)
	if len(recs) != rows {
		t.Fatalf("vapour.csv: %d rows, want %d", len(recs), rows)
	}
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, rec := range recs {
		lo, hi = math.Min(lo, rec[1]), math.Max(hi, rec[1])
	}
	return lo, hi
}

// TestVapourSubtractedFromRealSeries: the real urethane series (source as
// urethaneDir; the trimmed 1150–2700 cm⁻¹ copy, no vapour change of its
// own) with an invented forest of narrow lines added over 1300–2000 cm⁻¹,
// whose amount rises and falls during the run unlike the chemistry, as a
// humidity change would. The answer known without it is the untouched
// series' own: 2 species, 1 reaction, the isocyanate following its
// isolated N=C=O band (README's independent check). With the lines given
// as --vapour the amounts fitted are the ones added (within 0.02 of a
// largest amount of 1) and the answer is that again, its spectra those of
// the untouched run (cosine ≥ 0.999); without, the lines change the count.
func TestVapourSubtractedFromRealSeries(t *testing.T) {
	src := filepath.Join(urethaneDir, "catalyst-1.00")
	ser, err := spectra.Load(src, spectra.FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	n, m := ser.Values.Dims()
	rng := rand.New(rand.NewPCG(7, 8))
	lines := make([]float64, m)
	for l := 0; l < 150; l++ {
		c, a := 1300+700*rng.Float64(), 0.03*rng.Float64()
		for j, x := range ser.Axis {
			if dx := x - c; math.Abs(dx) < 10 {
				lines[j] += a * math.Exp(-4*math.Ln2*dx*dx/9)
			}
		}
	}
	dir := t.TempDir()
	added := make([]float64, n)
	for i, name := range ser.Names {
		f := float64(i) / float64(n-1)
		added[i] = math.Sin(math.Pi * f) // up, then down
		var b strings.Builder
		for j, x := range ser.Axis {
			fmt.Fprintf(&b, "%.6e,%.6e\r\n", x, ser.Values.At(i, j)+added[i]*lines[j])
		}
		if err := os.WriteFile(filepath.Join(dir, filepath.Base(name)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	ref := filepath.Join(t.TempDir(), "vapour.csv")
	var b strings.Builder
	for j, x := range ser.Axis {
		fmt.Fprintf(&b, "%.6e,%.6e\n", x, lines[j])
	}
	if err := os.WriteFile(ref, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	run := func(data string, vapour []string) *Result {
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName, s.Vapour = []string{data}, "absorbance", true, vapour
		s.Bands, s.Checks = "off", "off"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	plain, with, without := run(src, nil), run(dir, []string{ref}), run(dir, nil)
	// The real spectra's own sharp features (edges of the carbonyl and
	// amide bands, lines of the background) project on the invented lines
	// too: a share that barely changes, which the first spectrum's amount
	// measures. The changes of the amount must be those added.
	off := with.LineAmounts.At(0, 0)
	worst := 0.0
	for i := range added {
		worst = math.Max(worst, math.Abs(with.LineAmounts.At(i, 0)-off-added[i]))
	}
	t.Logf("amounts: the first %.4f, their changes within %.4f of those added", off, worst)
	if worst > 0.02 || math.Abs(off) > 0.1 {
		t.Errorf("amounts: first %.4f, changes off by up to %.4f of a largest 1", off, worst)
	}
	if with.Components != 2 || with.DiffRank == nil || with.DiffRank.Estimate != 1 {
		t.Fatalf("with --vapour: %d components, difference rank %v; want 2 and 1 as without the lines", with.Components, with.DiffRank)
	}
	if plain.Components != 2 {
		t.Fatalf("the untouched series gives %d components", plain.Components)
	}
	for k := 0; k < 2; k++ {
		best := 0.0
		for q := 0; q < 2; q++ {
			best = math.Max(best, math.Abs(cosineCols(with.ALS.S, k, plain.ALS.S, q)))
		}
		if best < 0.999 {
			t.Errorf("with --vapour, spectrum %d's best cosine with the untouched run's: %.5f", k+1, best)
		}
	}
	iso := isocyanate(with)
	area := isocyanateAreas(ser)
	if c := stat.Correlation(mat.Col(nil, iso, with.ALS.C), area, nil); math.Abs(c) < 0.98 {
		t.Errorf("with --vapour, isocyanate profile vs N=C=O band area: r = %.4f", c)
	}
	// The lines matter: without --vapour they are one more change (3 and
	// 2 measured).
	if without.Components == 2 && without.DiffRank != nil && without.DiffRank.Estimate == 1 {
		t.Errorf("without --vapour the count stays 2 and 1: the invented lines change nothing to test")
	}
}

// cosineCols is the cosine between column p of a and column q of b.
func cosineCols(a *mat.Dense, p int, b *mat.Dense, q int) float64 {
	x, y := mat.Col(nil, p, a), mat.Col(nil, q, b)
	return floats.Dot(x, y) / (floats.Norm(x, 2) * floats.Norm(y, 2))
}

// isocyanate is the component whose spectrum is largest near 2270 cm⁻¹.
func isocyanate(r *Result) int {
	iso, best := 0, math.Inf(-1)
	for j, x := range r.Axis {
		if math.Abs(x-2270) < 5 {
			for k := 0; k < r.Components; k++ {
				if v := r.ALS.S.At(j, k); v > best {
					best, iso = v, k
				}
			}
		}
	}
	return iso
}

// TestVapourNamedInAStack: the trimmed urethane copies (source as
// urethaneDir) stacked as a user stacks runs (--data twice). Each spectrum
// weighted by its own noise (the first spectra of both runs are 2–3× as
// noisy as the last), alone they count 2 and 1 components over 3500–4000
// cm⁻¹; stacked, 2, the second the vapour, which grew only in the second
// run (with one weight for every spectrum the stack counted 3, the third
// the vapour); its differences count 3, the third the vapour. The warning
// measures that the vapour's course accounts for the stack's second, and the advice that the
// differences' third is the vapour too: the singular values they quote are
// recomputed here directly, by an SVD of the counted matrices with and
// without that course projected out of their rows (not the Gram route of
// vapourInStack).
//
// The counts above are with a cubic baseline, set here: --baseline auto,
// counting the copies' noise correlated along the axis (τ = 2.5), takes a
// linear one on this narrow window, whose largest factor (91 % of the 1.00
// copy's signal, 98 % a cubic of the axis) the count then sets aside as
// drift: 1 and 1 alone, 2 stacked, the second named as the vapour's change
// the same way.
func TestVapourNamedInAStack(t *testing.T) {
	s := NewSettings()
	s.Data = []string{filepath.Join(urethaneDir, "vapour-catalyst-1.00"), filepath.Join(urethaneDir, "vapour-catalyst-0.01")}
	s.Kind, s.TimesFromName, s.Bands, s.Checks = "absorbance", true, "off", "off"
	s.Baseline = "poly:3"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	w := ""
	for _, x := range r.Warnings {
		if strings.HasPrefix(x, "water vapour: ") {
			w = x
		}
	}
	if r.Rank.Estimate != 2 || !strings.Contains(w, "the 2nd component counted in the stack is the vapour's change") {
		t.Fatalf("rank %d, warning %q; want 2 and the vapour named as the second", r.Rank.Estimate, w)
	}
	if !anyContains(r.Advice, "the count of 2 includes the water vapour's change") || !anyContains(r.Advice, "the chemistry of the stack has 1 component(s)") {
		t.Errorf("no advice correcting the count: %q", r.Advice)
	}
	// The correction follows the advice it corrects, and summary.json says
	// which components are the vapour's change.
	for i, a := range r.Advice {
		if strings.HasPrefix(a, rankAdvicePrefix) && (i+1 >= len(r.Advice) || !strings.HasPrefix(r.Advice[i+1], "the count of 2 includes")) {
			t.Errorf("the correction does not follow the count's advice: %q", r.Advice)
		}
	}
	if j := vapourSummary(r); j.CountedComponent != 2 || j.CountedReaction != 3 {
		t.Errorf("summary counted_component %d, counted_reaction %d; want 2 and 3", j.CountedComponent, j.CountedReaction)
	}
	// The values quoted before the projection are the count's own
	// (rank.csv): the warning's for the stack, the advice's for the
	// differences.
	m := decideVapourStack(r)
	want := fmt.Sprintf("go from %.4g and %.4g to %.4g and %.4g", tableValue(t, r.Rank, 2), tableValue(t, r.Rank, 3), m.after[1], m.after[2])
	if !strings.Contains(w, want) {
		t.Errorf("warning %q\nwant it to say %q", w, want)
	}
	wantDiff := fmt.Sprintf("its differences 2, not 3 (their singular value 3 goes from %.4g to %.4g without the vapour's course, the 4th was %.4g)", tableValue(t, r.DiffRank, 3), m.dAfter[2], tableValue(t, r.DiffRank, 4))
	if r.DiffRank.Estimate != 3 || !anyContains(r.Advice, wantDiff) {
		t.Errorf("difference rank %d, advice %q\nwant %q", r.DiffRank.Estimate, r.Advice, wantDiff)
	}
	// The projection by the Gram route (valuesWithout) against an SVD of
	// the projected matrix, on the run's matrix as it ends.
	d := countedMatrix(r.D, r.Axis, r.BaselineOrder, r.Weights)
	gb, ga, _ := valuesWithout(d, r.Vapour.Height, r.Weights)
	sb, sa := svdWithout(t, d, r.Vapour.Height, r.Weights.Row)
	for q := 0; q < 5; q++ {
		if math.Abs(gb[q]-sb[q]) > 1e-6*sb[0] || math.Abs(ga[q]-sa[q]) > 1e-6*sb[0] {
			t.Errorf("value %d: Gram %.8g and %.8g, SVD %.8g and %.8g", q+1, gb[q], ga[q], sb[q], sa[q])
		}
	}
}

// tableValue is the singular value of factor k in rep's table (rank.csv).
func tableValue(t *testing.T, rep *svd.RankReport, k int) float64 {
	t.Helper()
	for _, row := range rep.Table {
		if row.K == k {
			return row.SingularValue
		}
	}
	t.Fatalf("no factor %d in the rank table", k)
	return 0
}

// TestVapourNamedInAReactionsStack: the same stack in reactions mode (the
// copies read as differences). The extents are free there, so a
// combination of them can follow the vapour's course and the projection
// proves nothing: the warning keeps the general sentence and nothing is
// recorded as counted. (This path once dereferenced the absent
// differences' count.)
func TestVapourNamedInAReactionsStack(t *testing.T) {
	s := NewSettings()
	s.Data = []string{filepath.Join(urethaneDir, "vapour-catalyst-1.00"), filepath.Join(urethaneDir, "vapour-catalyst-0.01")}
	s.Kind, s.TimesFromName, s.Bands, s.Checks = "difference", true, "off", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.DiffRank != nil || !anyContains(r.Warnings, "can be counted as a component that no experiment shows alone") || anyContains(r.Warnings, "component counted in the stack is the vapour's change") || anyContains(r.Advice, "the count of") {
		t.Errorf("difference rank %v, warnings %q, advice %q", r.DiffRank, r.Warnings, r.Advice)
	}
	if j := vapourSummary(r); j.CountedComponent != 0 || j.CountedReaction != 0 {
		t.Errorf("counted_component %d, counted_reaction %d; want neither", j.CountedComponent, j.CountedReaction)
	}
}

// svdWithout are the singular values of d, and of d with the course
// (scaled by the square roots of the row weights a, then to unit length)
// projected out of its rows, by SVD.
func svdWithout(t *testing.T, d *mat.Dense, course, a []float64) (before, after []float64) {
	t.Helper()
	n, _ := d.Dims()
	g := make([]float64, n)
	for i := range g {
		g[i] = course[i] * math.Sqrt(a[i])
	}
	floats.Scale(1/floats.Norm(g, 2), g)
	gv := mat.NewVecDense(n, g)
	var gtd, p mat.Dense
	gtd.Mul(gv.T(), d)
	p.Mul(gv, &gtd)
	p.Sub(d, &p)
	values := func(a *mat.Dense) []float64 {
		var sv mat.SVD
		if !sv.Factorize(a, mat.SVDNone) {
			t.Fatal("SVD failed")
		}
		return sv.Values(nil)
	}
	return values(d), values(&p)
}

// A resolved spectrum holding the vapour's lines upside down has a
// negative line height in summary.json (line_height −0.1107 on the real
// catalyst-0.01 series); the warning must print that sign and say what it
// means, not the magnitude alone ("0.11 (11 %)" was read as lines added).
func TestVapourLineHeightKeepsItsSign(t *testing.T) {
	for _, c := range []struct {
		h, big  float64
		want    string
		pointed bool
	}{
		{-0.1106959637, 1, "-0.11 (pointing down", true},
		{0.05292794292, 0.63, "0.053 (8.4 %", false},
	} {
		got := vapourHolder{name: "species_1", height: c.h, largest: c.big}.size()
		// The printed value read back has the height's sign (the JSON's).
		var v float64
		if _, err := fmt.Sscanf(got, "%g", &v); err != nil || (v < 0) != (c.h < 0) || !strings.HasPrefix(got, c.want) {
			t.Errorf("height %.4g: %q, want it to start %q", c.h, got, c.want)
		}
		if strings.Contains(got, "pointing down") != c.pointed {
			t.Errorf("height %.4g: %q says pointing down %v", c.h, got, !c.pointed)
		}
	}
}
