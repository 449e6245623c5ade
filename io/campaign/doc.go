// Package campaign runs a series of analyses as one batch and tabulates
// their results: command files in parallel (Run), a fixed share of a batch
// for one task of a job array (Shard), and one CSV table of the key
// results of many output folders (Collect).
//
// Parallel runs give the bytes each run gives alone: every analysis is
// already deterministic whatever GOMAXPROCS (fixed chunks, fixed summation
// order), runs share no mutable state, and two runs that write the same
// output folder are run one after the other in batch order, as a
// sequential batch would. What a run prints is held back and printed in
// batch order, so the log reads the same for any number of workers.
//
// Sharding is round robin over the batch in the order given: file k
// (counted from 0) belongs to shard k mod N. The shares are disjoint,
// together make the whole batch, differ in size by at most one, and do not
// depend on which machine or task computes them, which is what a job array
// of a batch scheduler needs (each task sees only its index).
package campaign
