package pipeline

import (
	"fmt"
	"math"
	"strconv"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/svd"
)

// Types of summary.json, defined in io/output so that the report reads
// the file with the same types the run writes it with.
type (
	EFAJSON  = output.EFAJSON
	EFAEntry = output.EFAEntry
)

// EFAReport is evolving factor analysis of the resolved matrix (Gampp,
// Maeder, Meyer & Zuberbühler, Talanta 1985; Maeder, Anal. Chem. 1987): where
// in time each component appears and disappears, and the local rank.
type EFAReport struct {
	Result  *svd.EFAResult
	Windows *svd.EFAWindows
	Factors int
	// NoiseUnits: the curves are of the noise-scaled matrix √A D √B, whose
	// noise has σ = 1 at every point (Wentzell et al., J. Chemometrics
	// 1997), so the thresholds are in units of the noise.
	NoiseUnits bool
	// Threshold[i] is log10 of the noise level a singular value of the
	// first (or last) i+1 rows must pass: σ(√(i+1) + √m), the random-matrix
	// edge of that block (Geman 1980).
	Threshold []float64
}

// computeEFA runs EFA with one factor more than the components, so the
// noise level shows as the first curve that stays flat.
// It runs once per analysis: the second ALS start (--init auto) and --init
// efa take their windows from it, and it works from the factors already
// computed, since on large data a decomposition costs more than the sweeps.
func computeEFA(r *Result) {
	if r.Components < 1 || r.EFA != nil {
		return
	}
	rep, err := efaReport(r)
	if err != nil {
		efaSkipped(r, err)
		return
	}
	r.EFA = rep
	r.ahead.aheadEFA(r)
}

func efaSkipped(r *Result, err error) {
	r.Warnings = append(r.Warnings, fmt.Sprintf("evolving factor analysis skipped: %v", err))
}

// efaReport is computeEFA's report; it only reads r, so that startALS may
// run it beside the first ALS start. The report begun by startEFA serves
// when it was for r.Components (the same computation on the same factors).
func efaReport(r *Result) (*EFAReport, error) {
	if v, ok := r.earlyEFA.get(); ok && v.k == r.Components {
		return v.rep, v.err
	}
	n, m := r.D.Dims()
	f := min(r.Components+1, n, m)
	e, sigma, scaled, err := evolvingFactors(r, f)
	if err != nil {
		return nil, err
	}
	return newEFAReport(e, sigma, scaled, r.Components, n, m, f), nil
}

// newEFAReport is the report of EFA e of an n × m matrix with f curves for
// k components, whose windows are judged against the noise level sigma.
func newEFAReport(e *svd.EFAResult, sigma float64, scaled bool, k, n, m, f int) *EFAReport {
	rep := &EFAReport{Result: e, Factors: f, NoiseUnits: scaled, Windows: e.Windows(k, sigma)}
	if !(sigma > 0) {
		sigma = e.Sigma
	}
	rep.Threshold = make([]float64, n)
	for i := range rep.Threshold {
		v := sigma * (math.Sqrt(float64(i+1)) + math.Sqrt(float64(m)))
		rep.Threshold[i] = math.Log10(math.Max(v, e.Floor))
	}
	return rep
}

// efaOutcome is efaReport's answer for k components.
type efaOutcome struct {
	k   int
	rep *EFAReport
	err error
}

// startEFA begins efaReport for k components on a goroutine when it is EFA
// of the noise-scaled factors (evolvingFactors with weights), which reads
// nothing the run changes later: the factors and the matrix's size. It runs
// beside the end of the factor analysis and the start of the resolution
// (the difference matrix's rank, the purest variables, the first ALS start),
// steps that keep one core busy; without it the second ALS start waited for
// EFA (0.08 s CPU at 2000 × 3001) while the first ran alone. EFA of D itself
// (no weights) reads D, which the resolution changes (spectra set aside, the
// baseline), and stays where it was.
func startEFA(r *Result, k int) {
	n, m := r.D.Dims()
	f := min(k+1, n, m)
	fac := scaledFactorsFor(r, f)
	if k < 1 || fac == nil {
		return
	}
	var draw func(*EFAReport)
	if r.ahead != nil {
		draw = r.ahead.efaDrawer(r)
	}
	r.earlyEFA = startLater(func() efaOutcome {
		e, sigma, err := scaledEFA(fac, f)
		if err != nil {
			return efaOutcome{k: k, err: err}
		}
		rep := newEFAReport(e, sigma, true, k, n, m, f)
		if draw != nil {
			draw(rep)
		}
		return efaOutcome{k: k, rep: rep}
	})
}

// scaledFactorsFor are the factors of √A D √B that evolvingFactors takes
// EFA of with f curves (with noise weights); nil when it takes EFA of D.
// startEFA begins exactly the EFA evolvingFactors would run.
func scaledFactorsFor(r *Result, f int) *svd.Factors {
	if weighted(r) && r.ScaledFactors != nil && len(r.ScaledFactors.S) >= f {
		return r.ScaledFactors
	}
	return nil
}

// scaledEFA is EFA with f curves of √A D √B from its factors fac, and the
// noise level its windows are judged against (evolvingFactors says why).
func scaledEFA(fac *svd.Factors, f int) (*svd.EFAResult, float64, error) {
	e, err := svd.EFAOfFactors(fac, f)
	return e, math.Sqrt(noiseModelSlack), err
}

// evolvingFactors runs EFA with f curves and returns the noise level its
// windows are judged against. With noise weights it is EFA of the scaled
// matrix √A D √B from the factors the rank was counted on (σ = 1 at every
// point): in D a channel under a strong solvent band can be 100× noisier
// than the rest, and its noise alone would carry a block's singular values
// above a threshold set by one typical σ, so that EFA would follow the
// noisy channels instead of the chemistry (maximum-likelihood scaling,
// Wentzell et al., J. Chemometrics 1997). The scaled noise has σ = 1 only
// as well as the noise model knows σ (a median of at least 400 differences
// per channel window: about 6 % standard error, see noiseModelSlack), and
// the pure-noise curve of EFA runs on the edge itself: the edge is taken at
// σ² = noiseModelSlack, two standard errors up, as the random starts judge
// a fit. On a test series with noise constant in counts a noise curve
// 2–3 % above σ = 1 made a species appear 35 spectra before it was added.
// Without weights, EFA of D with its noise from the rank step.
func evolvingFactors(r *Result, f int) (e *svd.EFAResult, sigma float64, scaled bool, err error) {
	if fac := scaledFactorsFor(r, f); fac != nil {
		e, sigma, err = scaledEFA(fac, f)
		return e, sigma, true, err
	}
	if !weighted(r) && r.Factors != nil && len(r.Factors.S) >= f { // with weights they are D̃'s
		e, err = svd.EFAFrom(r.D, r.Factors, f)
	} else {
		e, err = svd.EFA(r.D, f)
	}
	return e, plainSigma(r), false, err
}

func (rep *EFAReport) summary(r *Result) *EFAJSON {
	out := &EFAJSON{Factors: rep.Factors, Experiments: len(r.Experiments), Method: "exact"}
	if !rep.Result.Exact {
		out.Method = fmt.Sprintf("projection on %d leading right singular vectors", rep.Result.Columns)
	}
	w := rep.Windows
	for j, name := range r.Names {
		e := EFAEntry{Component: name}
		if j < len(w.Appear) && w.Appear[j] >= 0 {
			t := round(r.Times[w.Appear[j]])
			e.AppearS = &t
		}
		if j < len(w.Disappear) && w.Disappear[j] >= 0 {
			t := round(r.Times[w.Disappear[j]])
			e.DisappearS = &t
		}
		out.Components = append(out.Components, e)
	}
	return out
}

// writeEFA writes efa.csv: time, the log10 singular values of the forward
// and backward windows, the noise threshold and the local rank.
func writeEFA(r *Result, st *output.Stage) error {
	if r.EFA == nil {
		return nil
	}
	if b, ok := r.ahead.efaFile(r); ok {
		return st.Write("efa.csv", b) // formatted while the run computed
	}
	return st.Write("efa.csv", efaTable(r.EFA, r.Times, r.ExpOfRow, len(r.Experiments) > 1).CSV())
}

// efaTable is efa.csv of rep for spectra at times (of the experiments
// expOfRow, a column of their own with several).
func efaTable(rep *EFAReport, times []float64, expOfRow []int, multi bool) output.Table {
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	for k := 1; k <= rep.Factors; k++ {
		h = append(h, "log10_forward_"+strconv.Itoa(k))
	}
	for k := 1; k <= rep.Factors; k++ {
		h = append(h, "log10_backward_"+strconv.Itoa(k))
	}
	h = append(h, "log10_noise_threshold", "local_rank")
	t := output.Table{Header: h}
	for i, tm := range times {
		var row []string
		if multi {
			row = append(row, strconv.Itoa(expOfRow[i]+1))
		}
		row = append(row, output.Float(tm))
		for k := 0; k < rep.Factors; k++ {
			row = append(row, output.Float(rep.Result.Forward.At(i, k)))
		}
		for k := 0; k < rep.Factors; k++ {
			row = append(row, output.Float(rep.Result.Backward.At(i, k)))
		}
		lr := 0
		if i < len(rep.Windows.LocalRank) {
			lr = rep.Windows.LocalRank[i]
		}
		row = append(row, output.Float(rep.Threshold[i]), strconv.Itoa(lr))
		t.Rows = append(t.Rows, row)
	}
	return t
}
