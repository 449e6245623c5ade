package mcr

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The iterations a resolution reports are every alternating least-squares
// update made, the first resolution's and each refill's (the definition of
// the count a user reads as "iterations N"), and its lack-of-fit curve
// runs on under rising numbers to that count. A run with blind points
// used to report only the last refill's few ("2 iterations" after 42).
func TestRefillKeepsTheWholeIterationCount(t *testing.T) {
	d, c, _ := noisyTwoComponent(1e-3, 5)
	n, _ := d.Dims()
	// Blind points: a block of channels in a third of the spectra, set to
	// a wrong placeholder that the refill must move.
	missing := make([][]int, n)
	for i := 10; i < 30; i++ {
		for j := 20; j < 26; j++ {
			missing[i] = append(missing[i], j)
			d.Set(i, j, 0)
		}
	}
	opt := Options{Mode: Species}
	c0 := mat.DenseCopyOf(c)
	c0.Apply(func(_, _ int, v float64) float64 { return v + 0.05 }, c0)
	first, err := Resolve(Dense{D: d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	firstIt := first.Iterations
	first.History = append([]float64(nil), first.History...)
	res, passes, err := RefineMissing(d, nil, nil, missing, first, opt, 0.1, 30)
	if err != nil {
		t.Fatal(err)
	}
	if passes < 2 {
		t.Fatalf("%d refill pass(es): the case is not made", passes)
	}
	firstCurve := append([]float64(nil), first.History...)
	if len(res.History) <= len(firstCurve) || !slices.Equal(res.History[:len(firstCurve)], firstCurve) {
		t.Errorf("the curve (%d points) does not begin with the first resolution's %d", len(res.History), len(firstCurve))
	}
	if res.Iterations <= firstIt {
		t.Errorf("iterations %d after the refill, the first resolution alone made %d", res.Iterations, firstIt)
	}
	if len(res.History) != len(res.HistoryAt) || res.HistoryAt[len(res.HistoryAt)-1] != res.Iterations {
		t.Fatalf("curve of %d points (%d numbers) ends at %v, count %d", len(res.History), len(res.HistoryAt), res.HistoryAt[len(res.HistoryAt)-1], res.Iterations)
	}
	for i := 1; i < len(res.HistoryAt); i++ {
		if res.HistoryAt[i] <= res.HistoryAt[i-1] {
			t.Fatalf("iteration numbers fall at %d: %d then %d", i, res.HistoryAt[i-1], res.HistoryAt[i])
		}
	}
	for _, v := range res.History {
		if math.IsNaN(v) {
			t.Fatal("NaN in the curve")
		}
	}
}
