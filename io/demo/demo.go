// Package demo makes bandsolve's built-in invented data set.
//
// The scenario (invented for the demo): a stirred attenuated-total-
// reflection cell holds a solution of a ketene acetal (A) in acetonitrile.
// A trace of water is injected at t = 60 s; A hydrolyses to a hydroxy ester
// (B), which closes to a lactone (C): A → B → C, first order in each step,
// k₁ = 4.0·10⁻³ s⁻¹ and k₂ = 1.5·10⁻³ s⁻¹. Single beams are recorded every
// 30 s from 1900 to 1000 cm⁻¹; a blank single beam of the cell with solvent
// only is recorded before. The three species' bands overlap (1770/1735/1670
// carbonyl and C=C region, 1300–1000 cm⁻¹ fingerprint), and the solvent's
// own bands sit in every single beam, so they must cancel in the ratio.
package demo

import (
	"math"
	"math/rand/v2"

	"github.com/bandsolve/bandsolve/io/output"

	"gonum.org/v1/gonum/mat"
)

// Truth is the data set with the answer it was built from.
type Truth struct {
	Axis     []float64  // cm⁻¹, descending as infrared exports usually are
	Times    []float64  // s
	Beams    *mat.Dense // n × m single beams
	Blank    []float64  // cell + solvent single beam
	Spectra  *mat.Dense // m × 3 molar absorbance spectra (absorbance at unit concentration)
	Profiles *mat.Dense // n × 3 concentrations (closure: sum 1)
	K1, K2   float64
	T0       float64
	Pre      int
	NoiseRel float64
	Species  []string
}

type band struct{ centre, width, height float64 }

func bands(axis []float64, bs []band) []float64 {
	out := make([]float64, len(axis))
	for i, x := range axis {
		for _, b := range bs {
			// Lorentz–Gauss mixture: condensed-phase infrared bands are
			// close to Lorentzian in the wings (common practice).
			d := (x - b.centre) / b.width
			out[i] += b.height * (0.6*math.Exp(-0.5*d*d) + 0.4/(1+d*d))
		}
	}
	return out
}

// Make builds the demo data deterministically from seed.
func Make(seed uint64) *Truth {
	t := &Truth{K1: 4.0e-3, K2: 1.5e-3, T0: 60, Pre: 3, NoiseRel: 2e-4,
		Species: []string{"ketene acetal (A)", "hydroxy ester (B)", "lactone (C)"}}
	for x := 1900.0; x >= 1000-1e-9; x -= 2 {
		t.Axis = append(t.Axis, x)
	}
	for tm := 0.0; tm <= 3000+1e-9; tm += 30 {
		t.Times = append(t.Times, tm)
	}
	n, m := len(t.Times), len(t.Axis)
	sA := bands(t.Axis, []band{{1672, 9, 0.55}, {1282, 12, 0.30}, {1152, 10, 0.42}, {1060, 14, 0.12}})
	sB := bands(t.Axis, []band{{1736, 10, 0.48}, {1242, 14, 0.36}, {1160, 12, 0.20}, {1058, 11, 0.30}})
	sC := bands(t.Axis, []band{{1772, 9, 0.62}, {1185, 13, 0.33}, {1128, 10, 0.18}, {1022, 12, 0.26}})
	t.Spectra = mat.NewDense(m, 3, nil)
	t.Spectra.SetCol(0, sA)
	t.Spectra.SetCol(1, sB)
	t.Spectra.SetCol(2, sC)
	t.Profiles = mat.NewDense(n, 3, nil)
	for i, tm := range t.Times {
		a, b, c := Bateman(t.K1, t.K2, math.Max(0, tm-t.T0))
		t.Profiles.SetRow(i, []float64{a, b, c})
	}
	// Source envelope: a smooth thermal-source × detector response hump,
	// falling toward 1000 cm⁻¹; solvent bands in blank and sample alike.
	solvent := bands(t.Axis, []band{{1445, 8, 0.35}, {1375, 7, 0.40}, {1038, 6, 0.30}})
	env := make([]float64, m)
	for i, x := range t.Axis {
		u := (x - 1700) / 900
		env[i] = 5.0e4 * math.Exp(-u*u) * (1 + 0.08*math.Sin(x/37))
	}
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	noisy := func(v float64) float64 { return v * (1 + t.NoiseRel*rng.NormFloat64()) }
	t.Blank = make([]float64, m)
	for j := range t.Blank {
		t.Blank[j] = noisy(env[j] * math.Pow(10, -solvent[j]))
	}
	t.Beams = mat.NewDense(n, m, nil)
	var a mat.Dense
	a.Mul(t.Profiles, t.Spectra.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			t.Beams.Set(i, j, noisy(env[j]*math.Pow(10, -(solvent[j]+a.At(i, j)))))
		}
	}
	return t
}

// Bateman returns the concentrations of A → B → C with [A]₀ = 1 at time t
// (Bateman 1910; Harcourt & Esson 1866), with the limit b = k t e^{−kt} for
// k₁ = k₂.
func Bateman(k1, k2, t float64) (a, b, c float64) {
	a = math.Exp(-k1 * t)
	if math.Abs(k1-k2) <= 1e-12*math.Max(k1, k2) {
		b = k1 * t * math.Exp(-k1*t)
	} else {
		b = k1 / (k2 - k1) * (math.Exp(-k1*t) - math.Exp(-k2*t))
	}
	c = 1 - a - b
	return a, b, c
}

// Files renders the data set as the files a user would have: the series as a
// matrix CSV of single beams, the blank as a two-column file, and the truth.
func (t *Truth) Files() map[string][]byte {
	f := map[string][]byte{}
	head := []string{"wavenumber"}
	for _, tm := range t.Times {
		head = append(head, output.Float(tm))
	}
	series := output.Table{Header: head}
	blank := output.Table{Header: []string{"wavenumber", "intensity"}}
	spec := output.Table{Header: []string{"wavenumber", "A", "B", "C"}}
	for j, x := range t.Axis {
		row := []string{output.Float(x)}
		for i := range t.Times {
			row = append(row, output.Float(t.Beams.At(i, j)))
		}
		series.Rows = append(series.Rows, row)
		blank.Rows = append(blank.Rows, []string{output.Float(x), output.Float(t.Blank[j])})
		spec.Rows = append(spec.Rows, []string{output.Float(x), output.Float(t.Spectra.At(j, 0)), output.Float(t.Spectra.At(j, 1)), output.Float(t.Spectra.At(j, 2))})
	}
	prof := output.Table{Header: []string{"time", "A", "B", "C"}}
	for i, tm := range t.Times {
		prof.Rows = append(prof.Rows, []string{output.Float(tm), output.Float(t.Profiles.At(i, 0)), output.Float(t.Profiles.At(i, 1)), output.Float(t.Profiles.At(i, 2))})
	}
	f["series.csv"] = append([]byte("# bandsolve demo (invented data): single beams, header = acquisition time in s\n"), series.CSV()...)
	f["blank.csv"] = blank.CSV()
	f["true_spectra.csv"] = spec.CSV()
	f["true_profiles.csv"] = prof.CSV()
	return f
}
