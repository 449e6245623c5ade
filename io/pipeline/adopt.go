package pipeline

import (
	"fmt"
	"io"

	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// maxAdoptions bounds how many times finishResolution replaces the
// resolution by a better fit the constraint checks found. Each replacement
// lowers the residual by more than noise allows, so a second one is rare;
// the bound keeps the run's time finite whatever the data.
const maxAdoptions = 3

// adoption records what finishResolution replaced, for its note.
type adoption struct {
	first  float64 // the first resolution's lack of fit (the headline's)
	from   string  // the check whose restart was adopted last
	ratio  float64 // its drop of the residual over what noise allows
	rounds int
}

// finishResolution gives the fit's figures, names and warnings, then the
// constraint checks and the uniqueness ranges. Each check restarts the fit
// under every constraint from the fit without its constraint; when such a
// restart fits better than the resolution by more than noise can explain
// (adoptable), the resolution stopped in a local minimum and the restart is
// the better answer to the question asked: it is resolved on to
// convergence with the resolution's own options and settled as the
// resolution was (adoptRestart), everything said of the first fit is taken
// back, and figures, warnings, checks and ranges are made again on it, so
// that the kinetics, the files and the report all describe the fit
// reported. A note names both lacks of fit. Then the bootstrap, on the
// final fit. mark is what the run had said before the first fit was
// settled.
func finishResolution(r *Result, data mcr.Data, opt mcr.Options, mark resolutionMark, log io.Writer) error {
	if r.Constraints == nil {
		r.Constraints = &ConstraintReport{}
	}
	var ad adoption
	for round := 0; ; round++ {
		// Lack of fit on the full data (at the observed points), streamed:
		// the residual matrix itself would be one more data-sized matrix
		// (480 MB at 20 000 × 3000).
		fitFigures(r, r.ALS)
		if round > 0 {
			r.Notes = append(r.Notes, adoptedNote(r, ad))
		}
		nameAndWarn(r, r.ALS)
		r.Constraints.adoptions = round
		checkResolution(r, data, opt, log)
		c := bestRestart(r)
		if c == nil {
			break
		}
		if round == 0 {
			ad.first = r.LackOfFit
		}
		drop, allow := restartDrop(r, *c)
		ad.from, ad.ratio, ad.rounds = c.Name, drop/allow, round+1
		chosen := *c
		mark.restore(r)
		res, d, err := adoptRestart(r, data, opt, chosen, log)
		if err != nil {
			return err
		}
		r.ALS, data = res, d
	}
	return bootstrap(r, opt, log)
}

// adoptedNote says that the resolution reported is a restart the
// constraint checks found, with both lacks of fit in the headline's terms.
func adoptedNote(r *Result, ad adoption) string {
	times := ""
	if ad.rounds > 1 {
		times = fmt.Sprintf(" (the last of %d such replacements)", ad.rounds)
	}
	return fmt.Sprintf("the resolution reported is a better fit under every constraint that the constraint checks found, restarted from the fit without %s%s: lack of fit %.4g %% against %.4g %% of the resolution first reached, which stopped in a local minimum; its residual sum of squares is lower by %.3g times what two fits of the same model differ by from noise alone (the F confidence region at --alpha %g, Beale 1960), so it was adopted and every figure, range and file describes it",
		ad.from, times, r.LackOfFit, ad.first, ad.ratio, checkAlpha(r))
}

// checkAlpha is the level of the adoption test: --alpha, 0.05 unset.
func checkAlpha(r *Result) float64 {
	if r.Settings != nil && r.Settings.Alpha > 0 {
		return r.Settings.Alpha
	}
	return 0.05
}

// restartDrop is what check c's restart under every constraint took off
// the resolution's residual sum of squares (in the checks' metric), and
// the drop noise alone allows between two fits of the same k-component
// model: RSS·p/(N−p)·F_{1−α}(p, N−p) of the restart's RSS, the F
// confidence region of a least-squares fit (Beale, J. R. Stat. Soc. B
// 1960; Draper & Smith, Applied Regression Analysis, 1998), the allowance
// the uniqueness ranges use. A resolution inside that region of the restart
// cannot be told from it by the data; one outside it is a worse fit.
func restartDrop(r *Result, c mcr.ConstraintCheck) (drop, allow float64) {
	if r.D == nil || r.ALS == nil {
		return 0, 0
	}
	n, m := r.D.Dims()
	return r.ALS.ResidualSS - c.ResidualSSWith, mcr.SameModelAllowance(c.ResidualSSWith, n, m, r.Components, checkAlpha(r))
}

// adoptable says whether check c's restart under every constraint replaces
// the resolution: a restart that fit better by more than noise allows
// (restartDrop), while replacements are left (maxAdoptions). Not with
// --hard-model: the checks' refits leave out the kinetic model, so their
// restart is no fit under every constraint asked for (judgeChecks says what
// it shows instead).
func adoptable(r *Result, c mcr.ConstraintCheck) bool {
	if !c.Restarted || c.Constrained == nil || r.SoftALS != nil || r.Constraints.adoptions >= maxAdoptions || r.ALS == nil {
		return false
	}
	drop, allow := restartDrop(r, c)
	return allow > 0 && drop > allow // no degrees of freedom: nothing to judge by
}

// bestRestart is the adoptable check whose restart fit best, the first of
// equals; nil when none is.
func bestRestart(r *Result) *mcr.ConstraintCheck {
	var best *mcr.ConstraintCheck
	for i, c := range r.Constraints.Checks {
		if adoptable(r, c) && (best == nil || c.ResidualSSWith < best.ResidualSSWith) {
			best = &r.Constraints.Checks[i]
		}
	}
	return best
}

// adoptRestart makes check c's restart the resolution: ALS goes on from it
// with the resolution's own options (the checks' restarts stop after
// checkIter iterations), the spectra set aside are filled again from it
// (refillSetAside), and it is settled and ordered as the first resolution
// was (settleFit, componentOrder). The fitted baseline stays the one
// fitted with the first resolution: the restart fitted the data less it.
func adoptRestart(r *Result, data mcr.Data, opt mcr.Options, c mcr.ConstraintCheck, log io.Writer) (*mcr.Result, mcr.Data, error) {
	fmt.Fprintf(log, "the constraint checks found a better fit under every constraint (from the fit without %s): resolving from it\n", c.Name)
	res, err := mcr.Resolve(data, mat.DenseCopyOf(c.Constrained.C), opt)
	if err != nil {
		return nil, nil, explainResolveError(r, err)
	}
	if res, data, err = refillSetAside(r, data, res, nil, opt, log); err != nil {
		return nil, nil, err
	}
	if res, err = settleFit(r, data, res, opt, log); err != nil {
		return nil, nil, err
	}
	componentOrder(r, res)
	return res, data, nil
}

// resolutionMark is what the run had said before the resolution was
// settled (settleResolution, whose minor-species step adds a note) and
// given its figures, names and warnings: finishResolution takes back
// everything said of a fit it replaces.
type resolutionMark struct{ warnings, notes, names int }

func markOf(r *Result) resolutionMark {
	return resolutionMark{len(r.Warnings), len(r.Notes), len(r.Names)}
}

// restore takes back what was said of the resolution since the mark: its
// warnings, notes and names, the misfit test, the checks and the ranges
// (whose row blocks formatted ahead are waited for first, so that none
// outlives the fit they were formatted from).
func (mk resolutionMark) restore(r *Result) {
	r.ahead.bandBlocks().wait()
	r.Warnings, r.Notes, r.Names = r.Warnings[:mk.warnings], r.Notes[:mk.notes], r.Names[:mk.names]
	r.misfit, r.misfitSpectrum = misfitCheck{}, nil
	rep := r.Constraints
	rep.Checks, rep.checkData, rep.Bands, rep.Lifted, rep.BandsNote = nil, nil, nil, nil, ""
}
