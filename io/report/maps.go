package report

import (
	"math"
	"strconv"

	"github.com/bandsolve/bandsolve/internal/decimal"
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
	b, _ := FormatMaps(axis, times, experiment, mats)
	return b
}

// FormatMaps is MapsCSV together with the Maps that Load reads back from
// those bytes (every number the value of its text), so that the run's own
// report need not read and parse the file it has just written. The Maps
// is nil when Load would not take the file as it is (no axis points, an
// axis value or time that is not a number): Load then reads it and says why.
func FormatMaps(axis, times []float64, experiment []int, mats []MapMatrix) ([]byte, *Maps) {
	rows := pick(len(times), MapTimes)
	cols := pick(len(axis), MapPoints)
	m := &Maps{Matrices: map[string]*Matrix{}}
	// One buffer, numbers appended in place (no string per value): about
	// 12 bytes a value, sized once.
	b := make([]byte, 0, (len(mats)*len(rows)+1)*(len(cols)+3)*12)
	b = append(b, "matrix,experiment,time"...)
	var ok bool
	for _, j := range cols {
		b = append(b, ',')
		var v float64
		b, v, ok = appendValue(b, axis[j], 10)
		if !ok {
			m = nil
		}
		if m != nil {
			m.Axis = append(m.Axis, v)
		}
	}
	if len(cols) == 0 {
		m = nil
	}
	b = append(b, '\n')
	for _, mm := range mats {
		var mx *Matrix
		if m != nil {
			if mx = m.Matrices[mm.Name]; mx == nil {
				mx = &Matrix{}
				m.Matrices[mm.Name] = mx
			}
		}
		for _, i := range rows {
			e := 1
			if i < len(experiment) {
				e = experiment[i] + 1
			}
			b = append(append(b, mm.Name...), ',')
			b = append(strconv.AppendInt(b, int64(e), 10), ',')
			var tm float64
			if b, tm, ok = appendValue(b, times[i], 10); !ok {
				m, mx = nil, nil
			}
			var row []float64
			if mx != nil {
				row = make([]float64, 0, len(cols))
			}
			for _, j := range cols {
				var v float64
				b, v, _ = appendValue(append(b, ','), mm.At(i, j), 6)
				if mx != nil {
					row = append(row, v)
				}
			}
			b = append(b, '\n')
			if mx != nil {
				mx.Experiment = append(mx.Experiment, e)
				mx.Times = append(mx.Times, tm)
				mx.Rows = append(mx.Rows, row)
			}
		}
	}
	return b, m
}

// appendValue appends v as appendNum does and returns the value Load reads
// back from the text (readMaps: NaN for an empty cell, ok false then).
func appendValue(b []byte, v float64, digits int) ([]byte, float64, bool) {
	n := len(b)
	b = appendNum(b, v, digits)
	if len(b) == n {
		return b, math.NaN(), false
	}
	r, err := parseNumber(b[n:])
	if err != nil || math.IsInf(r, 0) {
		return b, math.NaN(), false
	}
	return b, r, true
}

// parseNumber is strconv.ParseFloat(string(s), 64) for the text
// strconv.AppendFloat writes, without the string where decimal.Parse
// reads it exactly (Clinger's fast path).
func parseNumber(s []byte) (float64, error) {
	if v, ok := decimal.Parse(s); ok {
		return v, nil
	}
	return strconv.ParseFloat(string(s), 64)
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
