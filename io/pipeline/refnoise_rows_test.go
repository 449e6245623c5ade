package pipeline

import (
	"slices"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
)

// TestReferenceErrorsFollowTheFitRows: by definition of a difference
// spectrum, ΔA_i = A_i − A_ref, every row of an experiment holds its own
// reference's error, and the rows averaged into the reference hold it with
// their own (docs/measurement.md §2). Two stacked experiments, the first
// referenced to the mean of its first two rows, the second to a file (no
// rows inside), with row 2 set aside: the data fit's rows skip it, so the
// patterns' rows are renumbered past it. Species mode has none (a blank's
// pattern lies in closed profiles' span).
func TestReferenceErrorsFollowTheFitRows(t *testing.T) {
	v1, v2 := []float64{1e-6, 2e-6}, []float64{3e-6, 4e-6}
	r := &Result{
		Mode:  mcr.Reactions,
		Times: []float64{0, 10, 20, 30, 0, 10, 20},
		Experiments: []*Experiment{
			{FirstRow: 0, Rows: 4, RefRows: []int{0, 1}, Assembled: &spectra.Assembled{ReferenceVariance: v1}},
			{FirstRow: 4, Rows: 3, Assembled: &spectra.Assembled{ReferenceVariance: v2}},
		},
		SetAside: []SetAside{{Row: 2}},
	}
	got := referenceErrors(r)
	if len(got) != 2 {
		t.Fatalf("%d common errors, want one per experiment", len(got))
	}
	for e, want := range []struct {
		rows, within []int
		v            []float64
	}{{[]int{0, 1, 2}, []int{0, 1}, v1}, {[]int{3, 4, 5}, nil, v2}} {
		if !slices.Equal(got[e].Rows, want.rows) || !slices.Equal(got[e].Within, want.within) || !slices.Equal(got[e].Variance, want.v) {
			t.Errorf("experiment %d: rows %v within %v variance %v; want %v, %v, %v", e+1, got[e].Rows, got[e].Within, got[e].Variance, want.rows, want.within, want.v)
		}
	}
	r.Mode = mcr.Species
	if got := referenceErrors(r); got != nil {
		t.Errorf("species mode: %d common errors, want none", len(got))
	}
}
