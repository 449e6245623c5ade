package pipeline

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// referenceSeries is A → B → C (first order, Bateman 1910; k1 = 0.02 s⁻¹,
// k2 = 0.002 s⁻¹, so the first reaction's extent rises within a few
// minutes and stays) as 60 single beams 15 s apart, the first six (0–75 s)
// before the reaction, with detector noise constant in counts and the same
// in every beam: I = I₀·10^(−A) + ε, ε ~ N(0, σ_I²), σ_I = 4 (common
// practice for a detector's noise). No blank: the run is in reactions mode
// and every difference spectrum holds the reference beam's noise.
func referenceSeries(t *testing.T, seed uint64) *synth {
	t.Helper()
	s := &synth{}
	for x := 1800.0; x >= 1200; x -= 2 {
		s.axis = append(s.axis, x)
	}
	for i := 0; i < 60; i++ {
		s.times = append(s.times, 15*float64(i))
	}
	sp := [][]float64{
		add(gaussian(s.axis, 1700, 14, 0.5), gaussian(s.axis, 1450, 20, 0.25)),
		add(gaussian(s.axis, 1660, 14, 0.45), gaussian(s.axis, 1400, 18, 0.3)),
		add(gaussian(s.axis, 1620, 12, 0.4), gaussian(s.axis, 1300, 16, 0.35)),
	}
	n, m := len(s.times), len(s.axis)
	s.spectra = mat.NewDense(m, 3, nil)
	for j, v := range sp {
		s.spectra.SetCol(j, v)
	}
	s.profiles = mat.NewDense(n, 3, nil)
	for i, tm := range s.times {
		a, b, c := demo.Bateman(0.02, 0.002, math.Max(0, tm-75))
		s.profiles.SetRow(i, []float64{a, b, c})
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	rng := rand.New(rand.NewPCG(seed, 2718))
	s.beams = mat.NewDense(n, m, nil)
	s.blank = make([]float64, m) // written beside the series, never read
	for j, x := range s.axis {
		u := (x - 1500) / 500
		env := 2e4 * math.Exp(-u*u)
		s.blank[j] = env
		for i := 0; i < n; i++ {
			s.beams.Set(i, j, env*math.Pow(10, -a.At(i, j))+4*rng.NormFloat64())
		}
	}
	return s
}

// runReference resolves referenceSeries(seed) with the defaults but for
// the reference and the weights, and returns residual_to_noise. --pre 6
// takes the noise from the six repeats before the reaction: second
// differences in time, the default, also hold this fast chemistry and
// gave σ_I 4.54–4.72 for the true 4 (the fit then leaves 0.86–0.89 of it,
// which is that overestimate: 0.86 × 4.72/4 = 1.01).
func runReference(t *testing.T, seed uint64, reference, weights string) float64 {
	t.Helper()
	series, _ := referenceSeries(t, seed).write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Reference, st.Weights = []string{series}, "single-beam", reference, weights
	st.Bands, st.Checks, st.Pre = "off", "off", 6
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode != mcr.Reactions || r.Components != 2 {
		t.Fatalf("mode %v, %d components; want reactions, 2 (A → B → C has two independent reactions)", r.Mode, r.Components)
	}
	q, ok := residualToNoise(r)
	if !ok {
		t.Fatal("no residual_to_noise")
	}
	return q
}

// The fit of data made exactly under the model is right, so the residual
// it leaves is the noise alone: residual_to_noise must be 1 (its
// definition, √(χ²/E χ²)), here within 0.93–1.07 for every seed. Counting
// the reference beam's noise as independent in every row gave about 0.68
// with the first spectrum as reference (√(1/2) = 0.707 for equal noise in
// every beam, as the fitted extents absorb the common pattern), and
// --reference mean:5 shrinks that pattern five times in variance.
func TestResidualToNoiseWithReferenceNoise(t *testing.T) {
	for _, c := range []struct{ reference, weights string }{{"first", "noise"}, {"mean:5", "noise"}, {"first", "off"}} {
		for seed := uint64(1); seed <= 3; seed++ {
			q := runReference(t, seed, c.reference, c.weights)
			t.Logf("--reference %s --weights %s, seed %d: residual_to_noise %.4f", c.reference, c.weights, seed, q)
			if q < 0.93 || q > 1.07 {
				t.Errorf("--reference %s --weights %s, seed %d: residual_to_noise %.4f, want 1 within 0.93–1.07 (a right fit leaves the noise)", c.reference, c.weights, seed, q)
			}
		}
	}
}

// The kinetic fit of the data matrix with the true scheme is right too, so
// its residual over the noise (the figure its misfit warning reads) must be
// 1 within 0.93–1.07, measured against what noise alone leaves as
// residual_to_noise is (0.72 when the reference's noise counted in every
// row).
func TestKineticFitToNoiseWithReferenceNoise(t *testing.T) {
	series, _ := referenceSeries(t, 4).write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Pre, st.Model = []string{series}, "single-beam", 6, "A -> B -> C"
	st.Bands, st.Checks = "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Kinetics == nil {
		t.Fatal("no kinetics")
	}
	f := r.Kinetics.Fits[len(r.Kinetics.Fits)-1]
	if f.Method != "data" {
		t.Fatalf("last fit %q, want the data fit", f.Method)
	}
	q := dataFitToNoise(r, f.Fit)
	t.Logf("kinetic data fit: residual %.4f × the noise (Sigma %.4f)", q, f.Fit.Sigma)
	if q < 0.93 || q > 1.07 {
		t.Errorf("kinetic data fit leaves %.4f × the noise, want 1 within 0.93–1.07 (the true scheme fits)", q)
	}
}

// residual_to_noise in reactions mode is recomputed from the written files
// alone: ΔA from its definition −log10(I/I_ref) (IUPAC), the model from
// spectra.csv and profiles.csv, σ_ij = f_i σ_j (noise.csv,
// noise_spectra.csv) and the reference's share σ_ref,j (reference_sd, the
// rows in_reference). ν is formed densely, channel by channel, as the
// expectation of the squared norm of the projected noise, E‖M x‖² =
// tr(M Cov(x)) for a projector M (Seber & Lee, Linear Regression Analysis,
// 2nd ed. 2003, Theorem 1.5, from memory), with M from a QR factor here
// rather than the run's SVD: the covariance of row noise in channel j is
// own variances on the diagonal plus the reference's pattern,
// σ²_ref,j (1 1ᵀ − 1 s_Rᵀ − s_R 1ᵀ), s_R the rows in the reference.
func TestResidualToNoiseWithReferenceFromFiles(t *testing.T) {
	s := referenceSeries(t, 11)
	series, _ := s.write(t)
	st := NewSettings()
	st.Data, st.Kind = []string{series}, "single-beam"
	st.Out = filepath.Join(t.TempDir(), "out")
	st.Report, st.Bands, st.Checks = "off", "off", "off"
	st.Baseline = "off" // D − C Sᵀ is then the whole residual
	if _, err := Execute(st, Streams{Out: new(strings.Builder), Err: new(strings.Builder)}); err != nil {
		t.Fatal(err)
	}
	var sum struct {
		R2N float64 `json:"residual_to_noise"`
		Nu  float64 `json:"noise_degrees_of_freedom"`
	}
	b, err := os.ReadFile(filepath.Join(st.Out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	c := numbersMatrix(readNumbers(t, filepath.Join(st.Out, "profiles.csv")), 1, 0)
	sp := numbersMatrix(readNumbers(t, filepath.Join(st.Out, "spectra.csv")), 1, 0)
	noise := readNumbers(t, filepath.Join(st.Out, "noise.csv"))
	rows := readNumbers(t, filepath.Join(st.Out, "noise_spectra.csv"))
	if len(noise[0]) != 3 || len(rows[0]) != 4 {
		t.Fatalf("noise.csv has %d columns, noise_spectra.csv %d; want reference_sd and in_reference beside the model", len(noise[0]), len(rows[0]))
	}
	n, m := s.beams.Dims()
	_, k := c.Dims()
	a, bw, ref, inRef := make([]float64, n), make([]float64, m), make([]float64, m), make([]float64, n)
	for i := range a {
		a[i], inRef[i] = 1/sq(rows[i][1]), rows[i][3]
	}
	for j := range bw {
		bw[j], ref[j] = 1/sq(noise[j][1]), sq(noise[j][2])
	}
	chi := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d := -math.Log10(s.beams.At(i, j) / s.beams.At(0, j))
			e := d - mat.Dot(c.RowView(i), sp.RowView(j))
			chi += a[i] * bw[j] * e * e
		}
	}
	nu := denseNoiseDOF(c, sp, a, bw, ref, inRef)
	got := math.Sqrt(chi / nu)
	if math.Abs(got/sum.R2N-1) > 1e-3 {
		t.Errorf("residual_to_noise %.6g in summary.json, %.6g from the written files (χ² %.6g, ν %.6g of %d − %d)", sum.R2N, got, chi, nu, n*m, k*(n+m-k))
	}
	if math.Abs(nu/sum.Nu-1) > 1e-3 {
		t.Errorf("noise_degrees_of_freedom %.6g in summary.json, %.6g from the written files", sum.Nu, nu)
	}
}

// denseNoiseDOF is E χ² of the linearised bilinear residual M Ẽ N (M, N
// the projectors off the column spaces of √A C and √B S): each point's
// scaled variance taken as 1 as the weights assume, of which
// a_i b_j σ²_ref,j is the reference's common pattern rather than the point's own.
func denseNoiseDOF(c, sp *mat.Dense, a, bw, ref, inRef []float64) float64 {
	n, k := c.Dims()
	m, _ := sp.Dims()
	mc, ns := offProjector(c, a), offProjector(sp, bw)
	nu := float64(n*m - k*(n+m-k))
	cov := mat.NewDense(n, n, nil)
	for j := 0; j < m; j++ {
		for i := 0; i < n; i++ {
			for l := 0; l < n; l++ {
				// own variance (1 − ρ) on the diagonal, the common pattern
				// ρ(1 − s_i − s_l) everywhere, all in scaled units
				v := ref[j] * bw[j] * math.Sqrt(a[i]*a[l]) * (1 - inRef[i] - inRef[l])
				if i == l {
					v += 1 - a[i]*bw[j]*ref[j]
				}
				cov.Set(i, l, v)
			}
		}
		var p mat.Dense
		p.Mul(mc, cov)
		nu += ns.At(j, j)*mat.Trace(&p) - ns.At(j, j)*float64(n-k)
	}
	return nu
}

// offProjector is I − Q Qᵀ, Q the orthonormal factor of the QR
// decomposition of diag(√w) x.
func offProjector(x *mat.Dense, w []float64) *mat.Dense {
	r, k := x.Dims()
	y := mat.NewDense(r, k, nil)
	for i := 0; i < r; i++ {
		for l := 0; l < k; l++ {
			y.Set(i, l, math.Sqrt(w[i])*x.At(i, l))
		}
	}
	var qr mat.QR
	qr.Factorize(y)
	var q mat.Dense
	qr.QTo(&q)
	qk := q.Slice(0, r, 0, k)
	var p mat.Dense
	p.Mul(qk, qk.T())
	out := mat.NewDense(r, r, nil)
	for i := 0; i < r; i++ {
		for l := 0; l < r; l++ {
			v := -p.At(i, l)
			if i == l {
				v++
			}
			out.Set(i, l, v)
		}
	}
	return out
}

// numbersMatrix is the block of rows from column first on, less the last
// drop columns.
func numbersMatrix(rows [][]float64, first, drop int) *mat.Dense {
	out := mat.NewDense(len(rows), len(rows[0])-first-drop, nil)
	for i, r := range rows {
		out.SetRow(i, r[first:len(r)-drop])
	}
	return out
}
