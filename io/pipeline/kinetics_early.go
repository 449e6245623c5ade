package pipeline

import (
	"slices"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// earlyDataFit is the first fit of the data matrix before hard–soft
// (dataStart's fit from the kinetics package's grid of starting constants),
// begun beside the soft resolution: it needs nothing the resolution finds,
// only the data, their noise weights and the settings. On the six-species
// chain at 2000 × 3001 it is three Levenberg–Marquardt runs and a
// randomized SVD, about a third of the phase, that otherwise ran after
// the soft resolution and its automatic map with one core often idle.
//
// The data are weighted (kinetics.ScaleData) on the caller before the
// resolution starts, so the fit reads nothing the resolution may change;
// dataStart takes the fit only when it is the fit it would make itself
// (take): the same rows, times, options and weights, and the data still
// the ones weighted, checked value by value (kinetics.ScaledFrom). Spectra
// set aside as outliers, a baseline taken out of the data or blind points
// filled in change them; the fit is then made again as before.
type earlyDataFit struct {
	job   *dataFitJob
	d     *mat.Dense // r.D when begun
	times []float64
	done  chan struct{}
	taken bool
	// failed says the fit panicked (start); written by its goroutine,
	// read after done.
	failed bool
}

// beginEarlyDataFit starts the fit dataStart will make first, or returns
// nil when dataStart will not run (startsFromDataFit), when the data fit
// would not be of r.D as it is (spectra set aside, a baseline, blind
// points), or without noise weights (FitData then reads the data matrix
// itself, which the resolution may change while it runs).
func beginEarlyDataFit(r *Result, opt mcr.Options) *earlyDataFit {
	e := newEarlyDataFit(r, opt)
	if e != nil {
		e.start(func(j *dataFitJob) {
			j.fit, j.spectra, j.err = kinetics.FitData(j.kn.Scheme, j.times, j.d, j.opt)
		})
	}
	return e
}

// newEarlyDataFit makes beginEarlyDataFit's job ready, not started. Not
// when the resolution changes the data it would read beside it: a baseline
// taken off, blind points refilled, a clipped blank's channels raised
// (absorbBlankOffset).
func newEarlyDataFit(r *Result, opt mcr.Options) *earlyDataFit {
	if !startsFromDataFit(r, opt) || len(r.SetAside) > 0 || r.BaselineOrder >= 0 || r.BaselineShapes != nil || (r.Blind != nil && r.Blind.Count > 0) || r.BlankOffset != nil {
		return nil
	}
	kn, err := kineticsSettings(r)
	if err != nil {
		return nil
	}
	o := kn.dataOptions(r, kn.options(kn.firstStart(r.Times)))
	if o.RowWeights == nil && o.ColWeights == nil {
		return nil
	}
	scaled, err := kinetics.ScaleData(r.D, o.RowWeights, o.ColWeights)
	if err != nil {
		return nil // FitData will say so, on the data as they are then
	}
	e := &earlyDataFit{d: r.D, times: slices.Clone(r.Times), done: make(chan struct{})}
	jopt := o
	jopt.NoResidual, jopt.Scaled = true, scaled
	// Everything the fit reads is its own: kn (its scheme is not the
	// run's), copies of the times, weights and common errors, and the scaled data, which
	// FitData fits in place of the data matrix.
	jopt.RowWeights, jopt.ColWeights = slices.Clone(o.RowWeights), slices.Clone(o.ColWeights)
	jopt.Common = nil
	for _, ce := range o.Common {
		jopt.Common = append(jopt.Common, kinetics.CommonError{Rows: slices.Clone(ce.Rows), Within: slices.Clone(ce.Within), Variance: slices.Clone(ce.Variance)})
	}
	e.job = &dataFitJob{kn: kn, times: e.times, d: scaled, opt: jopt}
	return e
}

// start makes the fit (fit(job)) on a goroutine of its own. A panic there
// would end the program, past the recovery a batch puts around each run on
// the run's own goroutine (cmd/bandsolve runOne); it is dropped here
// instead and the fit declined (take), so that dataStart makes it again on
// the run's goroutine, where the panic, if any, is met as it was before
// the fit began early.
func (e *earlyDataFit) start(fit func(*dataFitJob)) {
	j := e.job // not e.job on the goroutine: letGo may clear it while the fit runs
	go func() {
		defer close(e.done)
		defer func() {
			if recover() != nil {
				e.failed = true // read after done
			}
		}()
		fit(j)
	}()
}

// wait returns once the fit has ended (nil: at once).
func (e *earlyDataFit) wait() {
	if e != nil {
		<-e.done
	}
}

// take returns the early fit, ended, when it is the fit kn.fitData(r, o)
// would make now as the first of dataStart's batch: nothing kept from an
// earlier fit, the data fitted are r.D with its times (nothing set aside,
// no baseline shapes), the options are the early fit's, and the data
// weighted now are bit for bit the data it weighted, and the fit did not
// break off (start). nil otherwise.
func (e *earlyDataFit) take(r *Result, kn *Kinetics, o kinetics.FitOptions) *dataFitJob {
	if e == nil || e.taken || e.job == nil || kn.reduced != nil || kn.batch == nil || kn.batch.scaled != nil || kn.batch.d != nil {
		return nil
	}
	if len(r.SetAside) > 0 || r.BaselineShapes != nil || r.D != e.d || !slices.Equal(r.Times, e.times) {
		return nil
	}
	if o.Reduced != nil || o.Scaled != nil || !sameFitOptions(o, e.job.opt) {
		return nil
	}
	if !kinetics.ScaledFrom(e.job.opt.Scaled, r.D, o.RowWeights, o.ColWeights) {
		return nil
	}
	e.wait()
	e.taken = true
	if e.failed {
		return nil
	}
	return e.job
}

// letGo drops the fit once dataStart has asked for it (take), taken or not:
// one it declined, with its weighted copy of the data (480 MB at
// 20 000 × 3000), is then not held through hard–soft ALS and what follows
// it until the resolution returns. A fit still running keeps what it works
// on until it ends (wait still waits for it); nothing else does.
func (e *earlyDataFit) letGo() {
	if e != nil {
		e.job, e.taken = nil, true
	}
}

// sameFitOptions compares what of two data fits' options decides the fit
// (not Reduced, Scaled and NoResidual, which only save work).
func sameFitOptions(a, b kinetics.FitOptions) bool {
	return a.T0 == b.T0 && slices.Equal(a.InitialK, b.InitialK) && (a.InitialK == nil) == (b.InitialK == nil) &&
		slices.Equal(a.FixedK, b.FixedK) && (a.FixedK == nil) == (b.FixedK == nil) &&
		slices.Equal(a.C0, b.C0) && (a.C0 == nil) == (b.C0 == nil) &&
		a.FitC0 == b.FitC0 && a.FitT0 == b.FitT0 && a.T0Lo == b.T0Lo && a.T0Hi == b.T0Hi && a.Amplitudes == b.Amplitudes && a.UseExtents == b.UseExtents &&
		slices.Equal(a.RowWeights, b.RowWeights) && (a.RowWeights == nil) == (b.RowWeights == nil) &&
		slices.Equal(a.ColWeights, b.ColWeights) && (a.ColWeights == nil) == (b.ColWeights == nil) &&
		a.Sim == b.Sim && a.LM == b.LM && sameCommon(a.Common, b.Common)
}

// sameCommon compares two fits' common errors (FitOptions.Common).
func sameCommon(a, b []kinetics.CommonError) bool {
	return slices.EqualFunc(a, b, func(x, y kinetics.CommonError) bool {
		return slices.Equal(x.Rows, y.Rows) && slices.Equal(x.Within, y.Within) && slices.Equal(x.Variance, y.Variance)
	})
}
