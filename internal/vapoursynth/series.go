// Package vapoursynth makes, for tests, an invented in-situ FTIR series with
// water-vapour-like lines whose truth is known analytically: three species
// of a first-order chain A → B → C (concentrations from Bateman's solution,
// Proc. Cambridge Philos. Soc. 1910), measured as single beams
// I = I0(ν)·10^−(A_solvent + C Sᵀ + a(t) L(ν)) plus detector noise of a
// constant standard deviation in counts, on an axis 1.93 cm⁻¹ apart (4 cm⁻¹
// resolution with zero filling; common practice). I0 fades towards 4000 and
// 1000 cm⁻¹ as a source, beamsplitter and detector do, so the absorbance
// noise σ_I/(I ln 10) is twenty times larger at 3950 than at 3550 cm⁻¹.
// L is a forest of narrow lines at 3550–3950 and 1350–1950 cm⁻¹, Lorentzian,
// 2.2 cm⁻¹ wide at half height: water-vapour lines at 2–4 cm⁻¹ resolution
// are as wide as the instrument makes them, about 2–4 cm⁻¹, their own width
// in air (about 0.2 cm⁻¹) far below it (from memory). Their amount a(t)
// rises from 0.004 to 0.008 and bends over, as a humidity that drifts.
package vapoursynth

import (
	"math"
	"math/rand/v2"
)

// Series is one invented run and its truth.
type Series struct {
	Axis, Times []float64   // cm⁻¹ (descending), s
	Single      [][]float64 // single beams, one row per spectrum (counts)
	Blank       []float64   // the cell with solvent, no analyte, no lines
	Lines       []float64   // L: the line forest, largest value 1
	Amount      []float64   // a(t): the lines' absorbance per spectrum
	Spectra     [3][]float64
	Conc        [][3]float64
	Pre         int     // spectra before the reaction starts
	Sigma       float64 // detector noise, counts
}

// Rate constants (1/s), noise and the run's shape.
const (
	K1, K2 = 2.5e-3, 8.0e-4
	sigmaI = 4.0
	n, m   = 90, 1556
	dt     = 40.0
	pre    = 4
)

// Make builds the run: seed sets the lines' places and heights and the
// noise; scale multiplies the lines' amount (1: 0.004 → 0.008); corr > 0
// smooths the noise along the axis with a Gaussian of that many points
// (its per-point standard deviation kept), as apodisation and
// interpolation correlate it.
func Make(seed uint64, scale, corr float64) *Series {
	rng := rand.New(rand.NewPCG(seed, 77))
	s := &Series{Pre: pre, Sigma: sigmaI}
	s.Axis = make([]float64, m)
	for j := range s.Axis {
		s.Axis[j] = 4000 - 3000*float64(j)/float64(m-1)
	}
	s.Spectra = species(s.Axis)
	s.Lines = lineForest(s.Axis, rng)
	solvent := make([]float64, m)
	i0 := make([]float64, m)
	for j, x := range s.Axis {
		solvent[j] = gauss(x, 2935, 60, 0.25) + gauss(x, 1375, 25, 0.15) + lorentz(x, 1050, 30, 0.35)
		rise := 1 / (1 + math.Exp(-(x-1200)/40))
		fall := 1 / (1 + math.Exp((x-3700)/90))
		i0[j] = 52000*rise*fall*math.Exp(-math.Pow((x-2300)/1500, 2)) + 30
	}
	noise := noiseMaker(rng, corr)
	t0 := dt * (pre - 1)
	for i := 0; i < n; i++ {
		t := dt * float64(i)
		tau := t / (dt * (n - 1))
		s.Times = append(s.Times, t)
		s.Conc = append(s.Conc, bateman(math.Max(0, t-t0)))
		s.Amount = append(s.Amount, scale*(0.004+0.010*tau-0.006*tau*tau))
		row := make([]float64, m)
		e := noise()
		for j := range row {
			a := solvent[j] + s.Amount[i]*s.Lines[j]
			for k := 0; k < 3; k++ {
				a += s.Conc[i][k] * s.Spectra[k][j]
			}
			row[j] = i0[j]*math.Pow(10, -a) + e[j]
		}
		s.Single = append(s.Single, row)
	}
	e := noise()
	s.Blank = make([]float64, m)
	for j := range s.Blank {
		s.Blank[j] = i0[j]*math.Pow(10, -solvent[j]) + e[j]
	}
	return s
}

// Absorbance is −log10(I/I_blank) of every spectrum (rows).
func (s *Series) Absorbance() [][]float64 {
	out := make([][]float64, len(s.Single))
	for i, row := range s.Single {
		out[i] = make([]float64, len(row))
		for j, x := range row {
			out[i][j] = -math.Log10(x / s.Blank[j])
		}
	}
	return out
}

// bateman is [A], [B], [C] of A → B → C at time t after the start, [A]0 = 1.
func bateman(t float64) [3]float64 {
	a := math.Exp(-K1 * t)
	b := K1 / (K2 - K1) * (math.Exp(-K1*t) - math.Exp(-K2*t))
	return [3]float64{a, b, 1 - a - b}
}

// species are the invented absorbance spectra of A, B and C: bands 9 to
// 420 cm⁻¹ wide, several within 1350–1950 cm⁻¹ where the lines are too.
func species(axis []float64) [3][]float64 {
	var s [3][]float64
	for k := range s {
		s[k] = make([]float64, len(axis))
	}
	for j, x := range axis {
		s[0][j] = gauss(x, 2228, 14, 0.30) + lorentz(x, 1598, 10, 0.22) + lorentz(x, 1490, 9, 0.14) + lorentz(x, 1448, 10, 0.12) + gauss(x, 3065, 30, 0.05) + lorentz(x, 1180, 12, 0.06)
		s[1][j] = gauss(x, 3355, 90, 0.16) + gauss(x, 3185, 110, 0.13) + lorentz(x, 1662, 22, 0.42) + lorentz(x, 1618, 20, 0.25) + lorentz(x, 1400, 18, 0.18) + lorentz(x, 1595, 10, 0.10) + lorentz(x, 1145, 14, 0.05)
		s[2][j] = gauss(x, 2980, 420, 0.09) + lorentz(x, 1705, 20, 0.45) + lorentz(x, 1600, 10, 0.12) + lorentz(x, 1420, 16, 0.13) + lorentz(x, 1290, 22, 0.26) + lorentz(x, 940, 30, 0.1)
	}
	return s
}

// lineForest is 45 lines at 3550–3950 and 55 at 1350–1950 cm⁻¹ at random
// places, heights u² with u uniform in 0.1–1, scaled to a largest value 1.
func lineForest(axis []float64, rng *rand.Rand) []float64 {
	l := make([]float64, len(axis))
	for _, r := range []struct {
		lo, hi float64
		count  int
	}{{3550, 3950, 45}, {1350, 1950, 55}} {
		for q := 0; q < r.count; q++ {
			c := r.lo + (r.hi-r.lo)*rng.Float64()
			u := 0.1 + 0.9*rng.Float64()
			for j, x := range axis {
				l[j] += lorentz(x, c, 2.2, u*u)
			}
		}
	}
	top := 0.0
	for _, x := range l {
		top = math.Max(top, x)
	}
	for j := range l {
		l[j] /= top
	}
	return l
}

// noiseMaker returns draws of m noise values, white or smoothed over corr
// points (Gaussian weights normalised to keep σ_I per point).
func noiseMaker(rng *rand.Rand, corr float64) func() []float64 {
	var w []float64
	if corr > 0 {
		ss := 0.0
		for q := -6; q <= 6; q++ {
			x := math.Exp(-0.5 * math.Pow(float64(q)/corr, 2))
			w, ss = append(w, x), ss+x*x
		}
		for q := range w {
			w[q] /= math.Sqrt(ss)
		}
	}
	return func() []float64 {
		e := make([]float64, m)
		for j := range e {
			e[j] = sigmaI * rng.NormFloat64()
		}
		if w == nil {
			return e
		}
		out := make([]float64, m)
		h := len(w) / 2
		for j := range out {
			for q, x := range w {
				if k := j + q - h; k >= 0 && k < m {
					out[j] += x * e[k]
				}
			}
		}
		return out
	}
}

func gauss(x, c, fwhm, h float64) float64 {
	return h * math.Exp(-4*math.Ln2*math.Pow((x-c)/fwhm, 2))
}

func lorentz(x, c, fwhm, h float64) float64 {
	return h / (1 + math.Pow((x-c)/(fwhm/2), 2))
}
