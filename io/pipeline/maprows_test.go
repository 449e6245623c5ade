package pipeline

import (
	"math"
	"testing"

	"github.com/bandsolve/bandsolve/io/report"
	"gonum.org/v1/gonum/mat"
)

// TestMapRowsKeepsTheMapPoints: the difference matrix's values kept for the
// report are its values at the points the maps show (report.MapRows ×
// report.MapCols, the definition of maps.csv's grid), bit for bit, read
// through at and through fill (every kept point, and a few of them); a
// matrix not of the data's shape keeps none. Sizes below, at and above the
// maps' 200 times × 400 points.
func TestMapRowsKeepsTheMapPoints(t *testing.T) {
	for _, d := range [][2]int{{3, 5}, {200, 400}, {1001, 3001}} {
		n, m := d[0], d[1]
		r := &Result{Times: make([]float64, n), Axis: make([]float64, m)}
		dd := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				dd.Set(i, j, math.Sin(float64(i*m+j))*1e-3)
			}
		}
		v := mapRows(r, dd)
		rows, cols := report.MapRows(n), report.MapCols(m)
		if len(v.rows) != len(rows) {
			t.Fatalf("%d × %d: kept %d rows, want %d", n, m, len(v.rows), len(rows))
		}
		some := []int{cols[0], cols[len(cols)/2], cols[len(cols)-1]}
		for _, i := range rows {
			all := v.fill(nil, i, cols)
			few := v.fill(nil, i, some)
			if len(all) != len(cols) || len(few) != len(some) {
				t.Fatalf("%d × %d row %d: fill gave %d and %d values", n, m, i, len(all), len(few))
			}
			for k, j := range cols {
				want := math.Float64bits(dd.At(i, j))
				if math.Float64bits(v.at(i, j)) != want || math.Float64bits(all[k]) != want {
					t.Fatalf("%d × %d: (%d, %d) kept as %g and %g, want %g", n, m, i, j, v.at(i, j), all[k], dd.At(i, j))
				}
			}
			for k, j := range some {
				if few[k] != dd.At(i, j) {
					t.Fatalf("%d × %d: (%d, %d) filled as %g, want %g", n, m, i, j, few[k], dd.At(i, j))
				}
			}
		}
		if mapRows(r, mat.NewDense(n+1, m, nil)) != nil {
			t.Errorf("%d × %d: a matrix of another shape kept map values", n, m)
		}
	}
}
