package pipeline

import (
	"math"
	"runtime"
	"testing"
	"weak"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// The first fit of the data matrix before hard–soft, begun beside the soft
// resolution (earlyDataFit), is taken only when it is the fit dataStart
// would make itself, and then it is that fit bit for bit: the same rate
// constants, standard errors, residual and spectra as kinetics.FitData
// (variable projection, Golub & Pereyra 1973) run again here on the run's
// data. Data changed in one value, or a spectrum set aside, make dataStart
// fit afresh. A later batch of fits takes the last batch's weighted data
// only while the data are the same. The rate constants against the truth
// are TestChainHardModel's.
func TestEarlyDataFitIsDataStartsFit(t *testing.T) {
	_, r := runSmallChain(t)
	first := func(kn *Kinetics) kinetics.FitOptions {
		return kn.dataOptions(r, kn.options(kn.firstStart(r.Times)))
	}
	begin := func() *earlyDataFit {
		e := beginEarlyDataFit(r, mcr.Options{})
		if e == nil {
			t.Fatal("no early data fit on the chain's weighted data")
		}
		e.wait()
		return e
	}
	settings := func() *Kinetics {
		kn, err := kineticsSettings(r)
		if err != nil {
			t.Fatal(err)
		}
		return kn
	}

	kn := settings()
	end := kn.startBatch()
	job := begin().take(r, kn, first(kn))
	if job == nil {
		t.Fatal("the early fit was not taken on the data it fitted")
	}
	got, gotSpectra, err := kn.keep(job)
	end()
	if err != nil {
		t.Fatal(err)
	}
	ref := settings()
	endRef := ref.startBatch()
	want, wantSpectra, err := ref.fitData(r, first(ref))
	endRef()
	if err != nil {
		t.Fatal(err)
	}
	for j := range want.K {
		if got.K[j] != want.K[j] || got.KStdErr[j] != want.KStdErr[j] {
			t.Errorf("%s: k = %v ± %v begun early, %v ± %v fitted afresh", kn.Scheme.Steps[j].Text, got.K[j], got.KStdErr[j], want.K[j], want.KStdErr[j])
		}
	}
	if got.SSR != want.SSR || got.Sigma != want.Sigma || !mat.Equal(gotSpectra, wantSpectra) {
		t.Errorf("residual sum of squares %v, σ̂ %v and spectra begun early; %v, %v fitted afresh", got.SSR, got.Sigma, want.SSR, want.Sigma)
	}

	// The weighted data carried to the next batch while the data stay.
	end = kn.startBatch()
	if j := kn.dataFitJob(r, first(kn)); j.opt.Scaled == nil || j.opt.Scaled != kn.lastScaled {
		t.Error("a batch on the same data does not take the last batch's weighted data")
	}
	end()

	// One value changed after the early fit began: not taken, not carried.
	e := begin()
	v := r.D.At(5, 7)
	r.D.Set(5, 7, v+math.Abs(v)*1e-9+1e-12)
	kn2 := settings()
	end = kn2.startBatch()
	if e.take(r, kn2, first(kn2)) != nil {
		t.Error("the early fit was taken on data changed since")
	}
	end()
	end = kn.startBatch()
	if j := kn.dataFitJob(r, first(kn)); j.opt.Scaled != nil {
		t.Error("a batch on changed data takes the last batch's weighted data")
	}
	end()
	r.D.Set(5, 7, v)

	// A spectrum set aside: the data fitted are other rows.
	r.SetAside = []SetAside{{Row: 3, Reason: "test"}}
	end = kn2.startBatch()
	if e.take(r, kn2, first(kn2)) != nil {
		t.Error("the early fit was taken with a spectrum set aside")
	}
	end()
	r.SetAside = nil

	// Other initial concentrations on the same data (newKinetics takes
	// those the resolved profiles show before t0, tryC0): c(t) starts from
	// c0 (the definition of the initial-value problem), so the model and
	// its fit are others. Only the options tell (sameFitOptions).
	kn3 := settings()
	kn3.C0 = append([]float64(nil), kn3.C0...)
	kn3.C0[0], kn3.C0[1] = 0.9*kn3.C0[0], 0.1*kn3.C0[0]
	end = kn3.startBatch()
	if e.take(r, kn3, first(kn3)) != nil {
		t.Errorf("the early fit was taken for the initial concentrations %v", kn3.C0)
	}
	end()

	end = kn2.startBatch()
	if e.take(r, kn2, first(kn2)) == nil {
		t.Error("the early fit was not taken once the data were as it found them")
	}
	end()
}

// An early data fit dataStart declines is let go there, with its weighted
// copy of the data, instead of being held through hard–soft ALS and what
// follows it until the resolution returns: one data-sized matrix (480 MB at
// 20 000 × 3000) a run with a spectrum set aside as an outlier does not
// need. Checked with a weak pointer (package weak: Value is nil once its
// object is unreachable and a collection has run; Go documentation) on
// the weighted data, after dataStart has run on the chain with a spectrum
// set aside, which the early fit did not leave out.
func TestDeclinedEarlyDataFitIsLetGo(t *testing.T) {
	_, r := runSmallChain(t)
	e := beginEarlyDataFit(r, mcr.Options{})
	if e == nil {
		t.Fatal("no early data fit on the chain's weighted data")
	}
	e.wait()
	scaled := weak.Make(e.job.opt.Scaled)
	r.earlyFit = e
	r.SetAside = []SetAside{{Row: 3, Reason: "test"}}
	defer func() { r.SetAside, r.earlyFit = nil, nil }()
	kn, err := newKinetics(r, r.ALS.C)
	if err != nil {
		t.Fatal(err)
	}
	soft, _, err := kn.fitProfiles(r.Times, r.ALS.C, kn.starts(r.Times))
	if err != nil {
		t.Fatal(err)
	}
	if kn.dataStart(r, soft, mcr.Options{}) == nil {
		t.Fatal("no data fit before hard–soft")
	}
	runtime.GC()
	if scaled.Value() != nil {
		t.Error("the weighted data of an early fit dataStart declined are still held after it")
	}
	runtime.KeepAlive(e)
}

// A fault (a panic) in the early data fit, on its own goroutine, would end
// the program: a panic not recovered on the goroutine it happens on ends
// it (The Go Programming Language Specification, Handling panics), past
// the recovery a batch puts around each run on the run's goroutine
// (cmd/bandsolve runOne), where the fit ran before it began early. It must
// instead leave the early fit declined, so that dataStart fits afresh on
// the run's goroutine.
func TestEarlyDataFitFaultIsDeclined(t *testing.T) {
	_, r := runSmallChain(t)
	e := newEarlyDataFit(r, mcr.Options{})
	if e == nil {
		t.Fatal("no early data fit on the chain's weighted data")
	}
	e.start(func(*dataFitJob) { panic("a fault in the early fit") })
	e.wait()
	kn, err := kineticsSettings(r)
	if err != nil {
		t.Fatal(err)
	}
	end := kn.startBatch()
	defer end()
	if e.take(r, kn, kn.dataOptions(r, kn.options(kn.firstStart(r.Times)))) != nil {
		t.Error("an early fit that broke off was taken")
	}
}
