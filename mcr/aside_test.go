package mcr

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A row filled with the model's own values (a spectrum set aside) is
// fitted as before, but the lack of fit reported, the curve's every value
// and the final one, is the data's over the rows kept:
// 100 √(Σ a_i b_j e²_ij / Σ a_i b_j d²_ij) with i over those rows (the lack of
// fit of multivariate curve resolution, common practice; weighted by the
// noise weights w_ij = a_i b_j, Wentzell et al., J. Chemometrics 1997),
// recomputed here from C, S (and the baseline) the resolution returns.
// Unweighted, weighted and with a fitted baseline; the fit itself keeps
// every bit.
func TestLackOfFitLeavesRowsAsideOut(t *testing.T) {
	rng := rand.New(rand.NewPCG(22, 7))
	d, _, _ := windowData(rng, 40, 60, 0.002)
	n, m := d.Dims()
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	for j := range col {
		col[j] = 0.5 + rng.Float64()
	}
	shapes := mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		shapes.Set(j, 0, 1)
		shapes.Set(j, 1, 2*float64(j)/float64(m-1)-1)
	}
	aside := []int{9, 27}
	c0 := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < 3; j++ {
			c0.Set(i, j, 0.2+rng.Float64())
		}
	}
	for _, tc := range []struct {
		name     string
		weighted bool
		baseline *mat.Dense
	}{{"unweighted", false, nil}, {"weighted", true, nil}, {"weighted, baseline", true, shapes}} {
		dd := mat.DenseCopyOf(d)
		var data Data = Dense{D: dd}
		a, b := ones(n), ones(m)
		if tc.weighted {
			data, a, b = WeightedDense{D: dd, Row: row, Col: col}, row, col
		}
		opt := Options{MaxIter: 200, Baseline: tc.baseline}
		first, err := Resolve(data, c0, opt)
		if err != nil {
			t.Fatal(err)
		}
		// The rows aside get the model's values, as the caller fills them.
		model := fullModel(first, tc.baseline)
		for _, i := range aside {
			dd.SetRow(i, model.RawRowView(i))
		}
		plain, err := Resolve(data, first.C, opt)
		if err != nil {
			t.Fatal(err)
		}
		opt.AsideRows = aside
		got, err := Resolve(data, first.C, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !mat.Equal(got.C, plain.C) || !mat.Equal(got.S, plain.S) || got.ResidualSS != plain.ResidualSS || got.Iterations != plain.Iterations {
			t.Fatalf("%s: the rows aside changed the fit itself (%d against %d iterations)", tc.name, got.Iterations, plain.Iterations)
		}
		fit := fullModel(got, tc.baseline)
		res, tot := 0.0, 0.0
		for i := 0; i < n; i++ {
			if slices.Contains(aside, i) {
				continue
			}
			for j := 0; j < m; j++ {
				e := dd.At(i, j) - fit.At(i, j)
				res += a[i] * b[j] * e * e
				tot += a[i] * b[j] * dd.At(i, j) * dd.At(i, j)
			}
		}
		want := 100 * math.Sqrt(res/tot)
		last := got.History[len(got.History)-1]
		for _, c := range []struct {
			what string
			v    float64
		}{{"lack of fit", got.LackOfFitPercent}, {"last value of the curve", last}} {
			if math.Abs(c.v-want) > 1e-9*want {
				t.Errorf("%s: %s %.12g %%; over the %d rows kept it is %.12g %% (over all %d, %.12g %%)", tc.name, c.what, c.v, n-len(aside), want, n, plain.LackOfFitPercent)
			}
		}
		if math.Abs(got.ExplainedPercent-100*(1-res/tot)) > 1e-9 {
			t.Errorf("%s: explained %.12g %%; over the rows kept %.12g %%", tc.name, got.ExplainedPercent, 100*(1-res/tot))
		}
	}
}

// fullModel is C Sᵀ (+ B Pᵀ with a baseline).
func fullModel(res *Result, shapes *mat.Dense) *mat.Dense {
	var out mat.Dense
	out.Mul(res.C, res.S.T())
	if shapes != nil {
		var bp mat.Dense
		bp.Mul(res.Baseline, shapes.T())
		out.Add(&out, &bp)
	}
	return &out
}
