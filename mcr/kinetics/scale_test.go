package kinetics

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// ScaleData is the weighting FitData applies, entry by entry
// √b_j (√a_i d_ij) (the maximum-likelihood weighting of Wentzell et al.,
// J. Chemometrics 1997, as FitOptions documents it), on one processor and
// on several; a fit handed those data as FitOptions.Scaled is the fit of
// the data themselves bit for bit, and ScaledFrom tells the data the
// weighted matrix came from from data changed in one value.
func TestScaleDataIsFitDatasWeighting(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.3, 0.06}
	times := linspace(0, 50, 150) // more rows than one block of weightData
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const m = 70
	spec := mat.NewDense(m, 3, nil)
	for j := 0; j < m; j++ {
		for c, x0 := range []float64{15, 35, 55} {
			spec.Set(j, c, math.Exp(-0.5*math.Pow((float64(j)-x0)/6, 2)))
		}
	}
	var d mat.Dense
	d.Mul(sim.C, spec.T())
	rng := rand.New(rand.NewPCG(4, 21))
	n, _ := d.Dims()
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	row[7] = 0 // a spectrum left out
	for j := range col {
		col[j] = 0.2 + 3*rng.Float64()
	}
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			// Noise of variance 1/(a_i b_j), as the weights say.
			d.Set(i, j, d.At(i, j)+0.01*rng.NormFloat64()/math.Sqrt(math.Max(row[i], 1e-3)*col[j]))
		}
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		sc, err := ScaleData(&d, row, col)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				want := math.Sqrt(col[j]) * (math.Sqrt(row[i]) * d.At(i, j))
				if got := sc.At(i, j); math.Float64bits(got) != math.Float64bits(want) {
					t.Fatalf("GOMAXPROCS %d: scaled[%d][%d] = %v, √b_j(√a_i d_ij) = %v", procs, i, j, got, want)
				}
			}
		}
		opt := FitOptions{InitialK: []float64{0.2, 0.1}, RowWeights: row, ColWeights: col}
		ref, refSpectra, err := FitData(s, times, &d, opt)
		if err != nil {
			t.Fatal(err)
		}
		within3SE(t, "weighted data", ref, k)
		opt.Scaled = sc
		got, gotSpectra, err := FitData(s, times, &d, opt)
		if err != nil {
			t.Fatal(err)
		}
		for a := range k {
			if got.K[a] != ref.K[a] || got.KStdErr[a] != ref.KStdErr[a] {
				t.Errorf("GOMAXPROCS %d: k%d = %v ± %v from the scaled data, %v ± %v from the data", procs, a+1, got.K[a], got.KStdErr[a], ref.K[a], ref.KStdErr[a])
			}
		}
		if got.SSR != ref.SSR || !mat.Equal(gotSpectra, refSpectra) {
			t.Errorf("GOMAXPROCS %d: residual sum of squares %v and spectra from the scaled data, %v from the data", procs, got.SSR, ref.SSR)
		}
		if !ScaledFrom(sc, &d, row, col) {
			t.Errorf("GOMAXPROCS %d: ScaledFrom does not recognise the data it was formed from", procs)
		}
		changed := mat.DenseCopyOf(&d)
		changed.Set(n-1, m-1, changed.At(n-1, m-1)*(1+1e-15))
		if ScaledFrom(sc, changed, row, col) {
			t.Errorf("GOMAXPROCS %d: ScaledFrom takes data changed in their last value", procs)
		}
		if ScaledFrom(sc, &d, row, nil) || ScaledFrom(sc, &d, row[:n-1], col) {
			t.Errorf("GOMAXPROCS %d: ScaledFrom takes other weights", procs)
		}
	}
	d.Set(3, 4, math.NaN())
	if _, err := ScaleData(&d, row, col); err == nil {
		t.Error("ScaleData took data holding NaN")
	}
}
