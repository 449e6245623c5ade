package pipeline

import (
	"encoding/csv"
	"encoding/json"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// countsSeries is A → B (first order, Bateman 1910) as single beams with
// detector noise constant in counts (σ_I; PRIMER §8): I = I₀·10^(−A) + ε,
// ε ~ N(0, σ_I²), under a source envelope and a solvent band of absorbance
// solventA (in blank and sample alike) between 1560 and 1500 cm⁻¹, and with
// an extra band of species B of height satA at 1250 cm⁻¹ (0 = none). The
// blank is co-added from 64 scans (noise σ_I/8; common practice).
func countsSeries(t *testing.T, sigI, solventA, satA float64, seed uint64) *synth {
	t.Helper()
	s := makeBateman(t, 3e-3, 1e-3, 0, seed, 2)
	if satA > 0 {
		col := mat.Col(nil, 1, s.spectra)
		s.spectra.SetCol(1, add(col, gaussian(s.axis, 1250, 5, satA)))
	}
	solventBeams(s, sigI, solventA, seed)
	return s
}

// solventBeams sets s.beams and s.blank from s's species as countsSeries
// describes: noise σ_I constant in counts, a solvent band of absorbance
// solventA between 1560 and 1500 cm⁻¹, a blank of 64 co-added scans.
func solventBeams(s *synth, sigI, solventA float64, seed uint64) {
	n, m := len(s.times), len(s.axis)
	rng := rand.New(rand.NewPCG(seed, 1997))
	env, solvent := make([]float64, m), make([]float64, m)
	for j, x := range s.axis {
		u := (x - 1500) / 500
		env[j] = 2e4 * math.Exp(-u*u)
		if x <= 1560 && x >= 1500 {
			solvent[j] = solventA
		}
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	s.beams = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -a.At(i, j)-solvent[j])+sigI*rng.NormFloat64())
		}
	}
	s.blank = make([]float64, m)
	for j := range env {
		s.blank[j] = env[j]*math.Pow(10, -solvent[j]) + sigI/8*rng.NormFloat64()
	}
}

// checkLitCosines fails t unless every species' resolved spectrum, on the
// channels keep says light reaches, and its profile lie at cosine ≥ 0.99
// to the truth (litCosines).
func checkLitCosines(t *testing.T, s *synth, r *Result, keep func(x float64) bool) {
	t.Helper()
	spec, prof := litCosines(s, r, keep)
	for j := range spec {
		if spec[j] < 0.99 || prof[j] < 0.99 {
			t.Errorf("species %d: spectrum cosine %.5f, profile cosine %.5f; want ≥ 0.99", j+1, spec[j], prof[j])
		}
	}
}

// litCosines compares true and resolved spectra on the channels keep
// says light reaches, and profiles in full (best match for each).
func litCosines(s *synth, r *Result, keep func(x float64) bool) (spec, prof []float64) {
	var rows []int
	for j, x := range s.axis {
		if keep(x) {
			rows = append(rows, j)
		}
	}
	pick := func(a *mat.Dense) *mat.Dense {
		_, k := a.Dims()
		out := mat.NewDense(len(rows), k, nil)
		for i, j := range rows {
			out.SetRow(i, a.RawRowView(j))
		}
		return out
	}
	return bestCosines(pick(s.spectra), pick(r.ALS.S)), bestCosines(s.profiles, r.ALS.C)
}

// A strong solvent band (absorbance 2: 1 % of the light) makes its channels'
// absorbance noise σ_I/(I ln 10) 100× larger than elsewhere (propagation of
// error, PRIMER §1 and §8). With the default settings the run must still
// count 2 species and give their spectra and profiles at cosine ≥ 0.99 on
// the channels where light gets through, and say where the noise is high.
func TestStrongSolventBand(t *testing.T) {
	s := countsSeries(t, 4, 2, 0, 5)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
	st.Weights = "noise"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Rank.Estimate != 2 || r.Components != 2 {
		t.Fatalf("rank %d, components %d; want 2 (%s)", r.Rank.Estimate, r.Components, r.Rank.Reason)
	}
	checkLitCosines(t, s, r, func(x float64) bool { return x > 1562 || x < 1498 })
	if !anyContains(r.Notes, "noise is far from uniform") || !anyContains(r.Notes, "wavenumber 15") {
		t.Errorf("no note on the noisy solvent band: %q", r.Notes)
	}
	// The noise model recovers σ_I (second differences in time, MAD).
	if l := r.Experiments[0].Assembled.Noise.Level; math.Abs(l/4-1) > 0.1 {
		t.Errorf("detector noise estimated %.4g, simulated 4", l)
	}
}

// A saturated band: species B's band at 1250 cm⁻¹ reaches absorbance 3.5,
// so late single beams there are at or below zero (no light; PRIMER §8).
// The run must not stop, must name the blind points, and must still give
// 2 species at cosine ≥ 0.99 where light gets through.
func TestSaturatedBandDoesNotStop(t *testing.T) {
	s := countsSeries(t, 10, 0, 3.5, 6)
	nonPos := 0
	n, m := s.beams.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if s.beams.At(i, j) <= 0 {
				nonPos++
			}
		}
	}
	if nonPos == 0 {
		t.Fatal("the simulated band is not saturated: no single beam ≤ 0")
	}
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
	st.Weights = "noise"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatalf("a saturated band stopped the run: %v", err)
	}
	if r.Blind == nil || r.Blind.Count < nonPos {
		t.Fatalf("blind points %v, want at least the %d single beams ≤ 0", r.Blind, nonPos)
	}
	if !anyContains(r.Notes, "blind point(s)") || !anyContains(r.Notes, "wavenumber 12") {
		t.Errorf("notes do not name the blind band near 1250: %q", r.Notes)
	}
	if r.Rank.Estimate != 2 || r.Components != 2 {
		t.Fatalf("rank %d, components %d; want 2 (%s)", r.Rank.Estimate, r.Components, r.Rank.Reason)
	}
	checkLitCosines(t, s, r, func(x float64) bool { return math.Abs(x-1250) > 12 })
}

// residual_to_noise is recomputed from the written files alone: the
// absorbance from its definition A = −log10(I/I_blank) (IUPAC), the model
// from spectra.csv and profiles.csv, σ_ij = f_i·σ_j from noise_spectra.csv
// and noise.csv, and ν = points − k(n + m − k) (common practice for a
// rank-k bilinear fit). On data made exactly under the model (noise
// constant in counts) it is also 1 within 10 % when the true σ_ij =
// σ_I/(I_ij ln 10) is used (propagation of error, PRIMER §1).
func TestResidualToNoiseFromFiles(t *testing.T) {
	const sigI = 4
	s := countsSeries(t, sigI, 1, 0, 7)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
	st.Weights = "noise"
	st.Out = filepath.Join(t.TempDir(), "out")
	st.Report, st.Bands, st.Checks = "off", "off", "off"
	st.Baseline = "off" // D − C Sᵀ is then the whole residual (no baseline term)
	if _, err := Execute(st, Streams{Out: new(strings.Builder), Err: new(strings.Builder)}); err != nil {
		t.Fatal(err)
	}
	var sum struct {
		R2N   float64 `json:"residual_to_noise"`
		Blind int     `json:"blind_points"`
	}
	b, err := os.ReadFile(filepath.Join(st.Out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	spec := readNumbers(t, filepath.Join(st.Out, "spectra.csv"))
	prof := readNumbers(t, filepath.Join(st.Out, "profiles.csv"))
	sig := readNumbers(t, filepath.Join(st.Out, "noise.csv"))
	fac := readNumbers(t, filepath.Join(st.Out, "noise_spectra.csv"))
	n, m := s.beams.Dims()
	k := len(spec[0]) - 1
	chi, chiTrue := 0.0, 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d := -math.Log10(s.beams.At(i, j) / s.blank[j])
			model := 0.0
			for c := 1; c <= k; c++ {
				model += prof[i][c] * spec[j][c]
			}
			e := d - model
			sd := fac[i][1] * sig[j][1]
			chi += e * e / (sd * sd)
			st := sigI / (s.beams.At(i, j) * math.Ln10)
			chiTrue += e * e / (st * st)
		}
	}
	dof := float64(n*m - k*(n+m-k))
	got := math.Sqrt(chi / dof)
	if math.Abs(got/sum.R2N-1) > 1e-3 {
		t.Errorf("residual_to_noise %.6g in summary.json, %.6g from the written files", sum.R2N, got)
	}
	if r := math.Sqrt(chiTrue / dof); r < 0.9 || r > 1.1 {
		t.Errorf("residual over the true noise %.4g, want 1 ± 0.1", r)
	}
	if sum.R2N < 0.9 || sum.R2N > 1.1 {
		t.Errorf("residual_to_noise %.4g, want 1 ± 0.1 on data made under the model", sum.R2N)
	}
}

// readNumbers reads a CSV with a header into rows of numbers.
func readNumbers(t *testing.T, p string) [][]float64 {
	t.Helper()
	f, err := os.Open(p)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var out [][]float64
	for _, r := range recs[1:] {
		var row []float64
		for _, c := range r {
			v, err := strconv.ParseFloat(c, 64)
			if err != nil {
				t.Fatalf("%s: %q is not a number", p, c)
			}
			row = append(row, v)
		}
		out = append(out, row)
	}
	return out
}

// TestPreThatChangedIsNamed: A → B as single beams with noise constant in
// counts (countsSeries), the reaction starting at t0 = 60 s, so the
// spectra at 0, 30 and 60 s are repeats of one state. --pre 3 is right and
// draws no warning; --pre 6 counts three spectra of the running reaction
// as noise repeats, and the noise level the weights come from is then too
// large: the fit leaves less than 0.8 of it (a resolution leaves about 1,
// the definition of a noise level; 0.991 and 0.668 measured) and one
// warning names --pre, the spectrum that changed and the overestimate.
func TestPreThatChangedIsNamed(t *testing.T) {
	s := countsSeries(t, 4, 0, 0, 17)
	series, blank := s.write(t)
	for _, tc := range []struct {
		pre  int
		want bool
	}{{3, false}, {6, true}} {
		st := NewSettings()
		st.Data, st.Blanks, st.Kind, st.Pre = []string{series}, []string{blank}, "single-beam", tc.pre
		st.Bands, st.Checks = "off", "off"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		q, _ := residualToNoise(r)
		named := 0
		for _, w := range r.Warnings {
			named += strings.Count(w, "probably changed already")
		}
		if (named == 1) != tc.want || named > 1 {
			t.Errorf("--pre %d: residual %.3g × the noise (%s), named %v; want %v\n%q", tc.pre, q, r.NoiseSource, named, tc.want, r.Warnings)
		}
		t.Logf("--pre %d: residual %.3g × the noise", tc.pre, q)
	}
}

// lack_of_fit_percent is 100 ‖D − C Sᵀ − B Pᵀ‖_F/‖D‖_F of the data as given
// (docs/measurement.md; the lack of fit as commonly defined in multivariate
// curve resolution), with D from its definition A = −log10(I/I_blank)
// (IUPAC) and the fitted baseline B Pᵀ a part of the model, not of the data:
// it was divided by ‖D − B Pᵀ‖, and on the real catalyst-0.01 series the
// noise alone then read 0.313 % with a cubic baseline and 0.737 % without
// one, for the same data and noise. The noise-alone figure must not depend
// on the baseline chosen.
func TestLackOfFitIsOfTheDataAsGiven(t *testing.T) {
	s := countsSeries(t, 4, 1, 0, 7)
	series, blank := s.write(t)
	noiseLOF := map[string]float64{}
	for _, baseline := range []string{"off", "offset", "poly:2"} {
		st := NewSettings()
		st.Data, st.Blanks, st.Kind, st.Baseline = []string{series}, []string{blank}, "single-beam", baseline
		st.Report, st.Bands, st.Checks = "off", "off", "off"
		r, err := Run(st, io.Discard)
		if err != nil {
			t.Fatal(err)
		}
		n, m := s.beams.Dims()
		model := fittedModel(r)
		rss, dss := 0.0, 0.0
		for i := range n {
			for j := range m {
				d := -math.Log10(s.beams.At(i, j) / s.blank[j])
				rss += sq(d - model.At(i, j))
				dss += d * d
			}
		}
		// The series is written as text and read back: a few units in the last digits.
		if want := 100 * math.Sqrt(rss/dss); math.Abs(r.LackOfFit/want-1) > 1e-7 {
			t.Errorf("--baseline %s: lack of fit %.10g %%, definition gives %.10g %%", baseline, r.LackOfFit, want)
		}
		noiseLOF[baseline] = r.NoiseLOF
	}
	if a, b, c := noiseLOF["off"], noiseLOF["offset"], noiseLOF["poly:2"]; math.Abs(b/a-1) > 1e-3 || math.Abs(c/a-1) > 1e-3 {
		t.Errorf("noise alone %.5g %% (off), %.5g %% (offset), %.5g %% (poly:2): the same data and noise", a, b, c)
	}
}

// fittedModel is the run's model of its data, C Sᵀ plus the fitted baseline
// B Pᵀ when there is one.
func fittedModel(r *Result) *mat.Dense {
	var model mat.Dense
	model.Mul(r.ALS.C, r.ALS.S.T())
	if r.BaselineProfiles != nil {
		var bp mat.Dense
		bp.Mul(r.BaselineProfiles, r.BaselineShapes.T())
		model.Add(&model, &bp)
	}
	return &model
}
