package campaign

import (
	"sync"
)

// Job is one analysis of a batch. Key names what it writes (its output
// folder): jobs with the same key run one after the other in batch order.
// Do runs it; Emit is called with its index once it and every job before
// it have finished, so what the jobs print comes out in batch order.
type Job struct {
	Key string
	Do  func()
}

// Run runs jobs on at most workers goroutines and calls emit(i) for each
// job in batch order as soon as jobs 0…i are done. workers < 1 means one.
func Run(jobs []Job, workers int, emit func(i int)) {
	if workers < 1 {
		workers = 1
	}
	// Chains: the jobs of one key, in batch order, run by one worker.
	var chains [][]int
	at := map[string]int{}
	for i, j := range jobs {
		c, ok := at[j.Key]
		if !ok || j.Key == "" {
			c = len(chains)
			chains = append(chains, nil)
			if j.Key != "" {
				at[j.Key] = c
			}
		}
		chains[c] = append(chains[c], i)
	}
	done := make([]chan struct{}, len(jobs))
	for i := range done {
		done[i] = make(chan struct{})
	}
	next := make(chan []int)
	var wg sync.WaitGroup
	for w := 0; w < min(workers, len(chains)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for chain := range next {
				for _, i := range chain {
					jobs[i].Do()
					close(done[i])
				}
			}
		}()
	}
	go func() {
		// Chains are handed out in the order of their first job, so the
		// batch is worked through roughly from the top.
		for _, c := range chains {
			next <- c
		}
		close(next)
	}()
	for i := range jobs {
		<-done[i]
		emit(i)
	}
	wg.Wait()
}
