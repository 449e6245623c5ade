package pipeline

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// checkedShift resolves A → B (c_A = e^{−3u}, closure) with noise sd sigma,
// runs the constraint checks, and returns the run as judgeChecks sees it
// with one factor named a band shift: a solvent band (sd 3 points) that the
// blank cancels moves by δ(u) = shift·(c_B(u) + 6u) points, about
// −δ·solv′(x) in the data (Taylor); the named factor's time vector is the
// part of δ orthogonal to the profiles (as the decomposition makes it).
// negative puts a true negative band of that depth into B's spectrum there
// instead.
func checkedShift(t *testing.T, shift, negative, sigma float64) *Result {
	t.Helper()
	n, m := 40, 120
	solv := func(x, at float64) float64 { return 0.5 * math.Exp(-0.5*(x-at)*(x-at)/9) }
	g := func(x, at float64) float64 { return math.Exp(-0.5 * (x - at) * (x - at) / 36) }
	c0, d := mat.NewDense(n, 2, nil), mat.NewDense(n, m, nil)
	drift := make([]float64, n)
	rng := rand.New(rand.NewPCG(3, 11))
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		a := math.Exp(-3 * u)
		c0.SetRow(i, []float64{a, 1 - a})
		delta := shift * ((1 - a) + 6*u)
		drift[i] = 6 * u
		for j := 0; j < m; j++ {
			x := float64(j)
			sb := g(x, 70) - negative*solv(x, 100)/0.5
			d.Set(i, j, a*g(x, 30)+(1-a)*sb+solv(x, 100+delta)-solv(x, 100)+sigma*rng.NormFloat64())
		}
	}
	// The drift's part orthogonal to the profiles, unit length.
	var q mat.QR
	q.Factorize(c0)
	var qm mat.Dense
	q.QTo(&qm)
	u := append([]float64(nil), drift...)
	for k := 0; k < 2; k++ {
		col := mat.Col(nil, k, &qm)
		dot := 0.0
		for i := range u {
			dot += col[i] * drift[i]
		}
		for i := range u {
			u[i] -= dot * col[i]
		}
	}
	norm := 0.0
	for _, v := range u {
		norm += v * v
	}
	for i := range u {
		u[i] /= math.Sqrt(norm)
	}
	opt := mcr.Options{Mode: mcr.Species, Closure: true, Total: []float64{1}}
	fit, err := mcr.Resolve(mcr.Dense{D: d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	checks, err := mcr.CheckConstraints(mcr.Dense{D: d}, fit, opt, checkIter)
	if err != nil {
		t.Fatal(err)
	}
	return &Result{D: d, Components: 2, LackOfFit: fit.LackOfFitPercent, ALS: fit, Rank: &svd.RankReport{Sigma: sigma},
		Chemical:    &svd.ChemicalRank{Nuisance: []svd.NuisanceFactor{{Factor: 3, Kind: svd.NuisanceBandShift, Time: u}}},
		Constraints: &ConstraintReport{Options: opt, Checks: checks, checkData: mcr.Dense{D: d}}}
}

// judgeChecks with a factor named a band shift. Truth known: with the
// species' spectra non-negative and only the solvent band shifting,
// non-negativity of spectra holds for the chemistry, and its cost (the
// freer refit's negative lobe) lies along the named band shift: a note,
// not the disagreement warning. With a true negative band in B's spectrum
// instead (the constraint really violated; a Gaussian is orthogonal to the
// derivative direction about its centre), the warning stays and says what
// share the named factor takes. The allowance is judgeChecks' χ² test, 4
// noise variances per pinned value (χ²_p's 95 % point is below 4p for
// p ≥ 1, standard tables). Seeds 3–6 of the noise leave 236–608 noise
// variances of the shift's case against the allowance of 960, and about
// 2.7·10⁷ of the negative band's.
func TestCheckNoteForNamedBandShift(t *testing.T) {
	const sigma = 1e-4
	for _, tc := range []struct {
		name            string
		shift, negative float64
		note            bool
	}{
		{"solvent band shift, chemistry non-negative", 0.01, 0, true},
		{"true negative band, no shift", 0, 0.05, false},
	} {
		r := checkedShift(t, tc.shift, tc.negative, sigma)
		judgeChecks(r)
		warned, noted := "", ""
		for _, w := range r.Warnings {
			if strings.HasPrefix(w, "non-negative spectra raises") {
				warned = w
			}
		}
		for _, w := range r.Notes {
			if strings.HasPrefix(w, "non-negative spectra costs") {
				noted = w
			}
		}
		t.Logf("%s:\n  warning: %s\n  note: %s", tc.name, warned, noted)
		if (noted != "") != tc.note || (warned != "") == tc.note {
			t.Errorf("%s: note %q, warning %q; want a note: %v", tc.name, noted, warned, tc.note)
		}
		if tc.note && !strings.Contains(noted, "band shift (factor 3)") {
			t.Errorf("%s: the note does not name the band shift: %s", tc.name, noted)
		}
	}
}
