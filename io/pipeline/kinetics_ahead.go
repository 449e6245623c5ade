package pipeline

import (
	"math"
	"runtime"
	"sync"

	"github.com/bandsolve/bandsolve/mcr/kinetics"
)

// inOrder runs units 0, 1, … on up to GOMAXPROCS goroutines for a caller
// that takes their results in the same order (wait), none started more
// than lead units past the one the caller waits for. Work the caller will
// not take after all (swapCheck starts over once the order it checks
// changes) is then at most lead units, where running everything at once
// made all of it; the processors stay busy as long as the units ahead
// keep them so. Each unit must write only its own results: which
// goroutine runs it changes nothing. A unit's panic on a worker is raised
// again on the caller when it waits for that unit: on the worker's
// goroutine it would end the program, past the caller's recovery.
type inOrder struct {
	mu      sync.Mutex
	cond    *sync.Cond
	units   []func()
	started []bool
	done    []bool
	fault   []any // a unit's panic on a worker, for wait
	next    int   // the first unit no worker has looked at
	waited  int   // the unit the caller waits for, or last waited for
	lead    int
	stopped bool
	wg      sync.WaitGroup
}

// startInOrder starts the workers; stop must be called once the caller is
// done with the units.
func startInOrder(units []func()) *inOrder {
	w := min(runtime.GOMAXPROCS(0), len(units))
	o := &inOrder{units: units, started: make([]bool, len(units)), done: make([]bool, len(units)), fault: make([]any, len(units)), lead: max(w, 1)}
	o.cond = sync.NewCond(&o.mu)
	for g := 0; g < w; g++ {
		o.wg.Add(1)
		go o.work()
	}
	return o
}

func (o *inOrder) work() {
	defer o.wg.Done()
	for {
		o.mu.Lock()
		for !o.stopped && o.next < len(o.units) && o.next >= o.waited+o.lead {
			o.cond.Wait()
		}
		if o.stopped || o.next >= len(o.units) {
			o.mu.Unlock()
			return
		}
		u := o.next
		o.next++
		if o.started[u] {
			o.mu.Unlock()
			continue
		}
		o.started[u] = true
		o.mu.Unlock()
		p := runUnit(o.units[u])
		o.mu.Lock()
		o.done[u], o.fault[u] = true, p
		o.cond.Broadcast()
		o.mu.Unlock()
	}
}

// runUnit runs f and returns its panic, nil when it returned.
func runUnit(f func()) (p any) {
	defer func() { p = recover() }()
	f()
	return nil
}

// wait returns once unit u has run, or panics with its panic; a unit no
// worker will start (after stop) is run on the caller.
func (o *inOrder) wait(u int) {
	o.mu.Lock()
	if u > o.waited {
		o.waited = u
		o.cond.Broadcast()
	}
	for !o.done[u] && !(o.stopped && !o.started[u]) {
		o.cond.Wait()
	}
	inline := !o.done[u]
	o.started[u] = true
	p := o.fault[u]
	o.mu.Unlock()
	if p != nil {
		panic(p)
	}
	if inline {
		o.units[u]()
		o.mu.Lock()
		o.done[u] = true
		o.mu.Unlock()
	}
}

// stop starts no more units and returns once the running ones have ended.
func (o *inOrder) stop() {
	o.mu.Lock()
	o.stopped = true
	o.cond.Broadcast()
	o.mu.Unlock()
	o.wg.Wait()
}

// checkAhead makes swapCheck's refits from the exchanged starts alts, and
// the non-negative costs its loop will ask for while best stays the
// reported fit, ahead of the loop and in its order (inOrder): unit i makes
// alternative i's refit (its job; none where refit will recall a kept one)
// and then, when that fit ties with best with free spectra (within 4
// noise variances, other rate constants) and has no cost kept yet, its
// non-negative cost, and best's own the first time one is needed. The
// figures are those of the fits' rate constants, the same whatever
// computes them and when, so the loop reaches every figure and choice it
// reached making them one at a time, whatever the number of processors.
// The units read only what is fixed when they are made: a snapshot of
// best, the jobs' own options and the data.
type checkAhead struct {
	jobs   []*dataFitJob
	memo   []*kinetics.FitResult // the kept refit whose cost unit i makes
	costs  []costValue
	costed []bool
	best   onceCost // best's cost, made by a unit or the caller
	run    *inOrder
}

// newCheckAhead makes the jobs (kn.dataFitJob, on the caller) and starts
// the units; needBest says whether the loop may still ask for best's cost
// (it has not made it yet); cost(k, c0) is the non-negative cost of rate
// constants k with initial concentrations c0 (best's, taken now).
func (kn *Kinetics) newCheckAhead(r *Result, best *kinetics.FitResult, opt kinetics.FitOptions, alts [][]float64, needBest bool, cost func(k, c0 []float64) (kinetics.NonNegCost, bool)) *checkAhead {
	ca := &checkAhead{jobs: make([]*dataFitJob, len(alts)), memo: make([]*kinetics.FitResult, len(alts)), costs: make([]costValue, len(alts)), costed: make([]bool, len(alts))}
	for i, a := range alts {
		o := opt
		o.InitialK = a
		m := kn.recalled(r, best, o)
		if !kn.FitC0 && !kn.FitT0 && m != nil {
			if !m.done {
				ca.memo[i] = m.fit
			}
			continue
		}
		if !kn.FitC0 && !kn.FitT0 && nearEarlier(ca.jobs[:i], a, best.KStdErr) {
			continue
		}
		ca.jobs[i] = kn.dataFitJob(r, o)
	}
	bestK, bestSSR, bestC0 := best.K, best.SSR, best.C0
	s2 := best.Sigma * best.Sigma
	costs := best.Sigma > 0 // the loop compares nothing otherwise
	units := make([]func(), len(alts))
	for i := range alts {
		units[i] = func() {
			fit := ca.memo[i]
			if j := ca.jobs[i]; j != nil {
				j.run()
				if j.err == nil {
					fit = j.fit
				}
			}
			if !costs || fit == nil || sameK(fit.K, bestK) || math.Abs(fit.SSR-bestSSR)/s2 > 4 {
				return
			}
			if needBest {
				ca.best.make(func() (v costValue) { v.v, v.ok = cost(bestK, bestC0); return v })
			}
			ca.costs[i].v, ca.costs[i].ok = cost(fit.K, bestC0)
			ca.costed[i] = true
		}
	}
	ca.run = startInOrder(units)
	return ca
}

// job waits for unit i and returns its job (nil where refit recalls).
func (ca *checkAhead) job(i int) *dataFitJob {
	ca.run.wait(i)
	return ca.jobs[i]
}

// cost returns the cost unit i made of fit, if it made it for that fit.
// Only after job(i).
func (ca *checkAhead) cost(i int, fit *kinetics.FitResult) (costValue, bool) {
	if !ca.costed[i] {
		return costValue{}, false
	}
	if j := ca.jobs[i]; (j != nil && j.err == nil && j.fit == fit) || (j == nil && ca.memo[i] == fit) {
		return ca.costs[i], true
	}
	return costValue{}, false
}

// bestCost returns best's cost, made by a unit or now.
func (ca *checkAhead) bestCost(compute func() costValue) costValue {
	return ca.best.get(compute)
}

// stop ends the units (the running ones run to their end).
func (ca *checkAhead) stop() { ca.run.stop() }

// onceCost is a cost made once, by whichever of the units and the caller
// asks first. A unit that panicked while making it left it unmade: the
// caller makes it then (get), where a panic is the caller's own; sync.Once
// alone would count the call that panicked as done and leave a zero cost,
// "not made", for the caller to take when it does not wait for that unit.
type onceCost struct {
	once sync.Once
	v    costValue
	made bool // written under once, read after it
}

// make makes the cost with f unless it was made or is being made.
func (c *onceCost) make(f func() costValue) {
	c.once.Do(func() { c.v = f(); c.made = true })
}

// get returns the cost, made now with compute if nothing made it before.
// Only on the caller's goroutine.
func (c *onceCost) get(compute func() costValue) costValue {
	c.make(compute)
	if !c.made {
		c.v, c.made = compute(), true
	}
	return c.v
}
