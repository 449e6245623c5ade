package report

import (
	"math"
	"strconv"
)

// Limits of maps.csv: enough rows and points for a figure at print size,
// small enough that the file stays around a megabyte.
const (
	MapTimes  = 200
	MapPoints = 400
)

// MapMatrix is one matrix given to MapsCSV, read through At.
type MapMatrix struct {
	Name string // "data", "difference", "residual"
	At   func(i, j int) float64
}

// MapsCSV renders maps.csv from full matrices of len(times) rows ×
// len(axis) points: at most MapTimes rows and MapPoints points, picked at
// evenly spaced indices (the first and last always kept). Picking rather
// than averaging keeps true values, so the residual map shows the real
// noise level and narrow bands are not smeared. Values have 6 significant
// digits: the file feeds figures only, the full values are in the other
// result files.
func MapsCSV(axis, times []float64, experiment []int, mats []MapMatrix) []byte {
	rows := pick(len(times), MapTimes)
	cols := pick(len(axis), MapPoints)
	// One buffer, numbers appended in place (no string per value): about
	// 12 bytes a value, sized once.
	b := make([]byte, 0, (len(mats)*len(rows)+1)*(len(cols)+3)*12)
	b = append(b, "matrix,experiment,time"...)
	for _, j := range cols {
		b = appendNum(append(b, ','), axis[j], 10)
	}
	b = append(b, '\n')
	for _, m := range mats {
		for _, i := range rows {
			e := 1
			if i < len(experiment) {
				e = experiment[i] + 1
			}
			b = append(append(b, m.Name...), ',')
			b = append(strconv.AppendInt(b, int64(e), 10), ',')
			b = appendNum(b, times[i], 10)
			for _, j := range cols {
				b = appendNum(append(b, ','), m.At(i, j), 6)
			}
			b = append(b, '\n')
		}
	}
	return b
}

// MapRows are the rows (of n times) that MapsCSV shows, so that a caller
// can keep those rows of a large matrix and let the rest go.
func MapRows(n int) []int { return pick(n, MapTimes) }

// pick returns at most max indices of 0..n−1, evenly spaced, first and last included.
func pick(n, max int) []int {
	if n <= max {
		out := make([]int, n)
		for i := range out {
			out[i] = i
		}
		return out
	}
	out := make([]int, max)
	for i := range out {
		// Integer arithmetic keeps the choice identical on every platform.
		out[i] = (i*(n-1) + (max-1)/2) / (max - 1)
	}
	return out
}

// appendNum appends v with digits significant digits; never NaN, Inf or
// −0 (nothing for the first two, "0" for the last).
func appendNum(b []byte, v float64, digits int) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return b
	}
	if v == 0 {
		return append(b, '0')
	}
	return strconv.AppendFloat(b, v, 'g', digits, 64)
}
