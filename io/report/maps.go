package report

import (
	"math"
	"runtime"
	"strconv"
	"sync"

	"github.com/bandsolve/bandsolve/internal/decimal"
	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/io/output"
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
// The matrices' At are called from several goroutines at once.
func FormatMaps(axis, times []float64, experiment []int, mats []MapMatrix) ([]byte, *Maps) {
	return JoinMaps(FormatMapsPart(axis, times, experiment, mats, 0))
}

// MapsPart is maps.csv for some of its matrices, to be joined with the
// parts of the others (JoinMaps): a run formats each part as soon as its
// matrices are final.
type MapsPart struct {
	head   []byte   // the header line
	blocks [][]byte // the matrices' lines, in order
	maps   *Maps    // what Load reads back from them; nil as for FormatMaps
}

// JoinMaps is maps.csv of the parts' matrices in the order given, the
// header of the first part (every part of one file has the same), with
// the Maps read back from it: FormatMaps of all their matrices at once.
func JoinMaps(parts ...MapsPart) ([]byte, *Maps) {
	if len(parts) == 0 {
		return nil, nil
	}
	n := len(parts[0].head)
	for _, p := range parts {
		for _, blk := range p.blocks {
			n += len(blk)
		}
	}
	b := make([]byte, 0, n)
	b = append(b, parts[0].head...)
	m := &Maps{Matrices: map[string]*Matrix{}}
	if parts[0].maps != nil {
		m.Axis = parts[0].maps.Axis
	}
	for _, p := range parts {
		for _, blk := range p.blocks {
			b = append(b, blk...)
		}
		if p.maps == nil {
			m = nil
		}
		if m != nil {
			for name, mx := range p.maps.Matrices {
				m.Matrices[name] = mx
			}
		}
	}
	return b, m
}

// Maps is what Load reads back from the part's lines (nil as for FormatMaps).
func (p MapsPart) Maps() *Maps { return p.maps }

// FormatMapsPart is the part of maps.csv that holds mats (JoinMaps),
// formatted by as many goroutines as workers (GOMAXPROCS when ≤ 0).
func FormatMapsPart(axis, times []float64, experiment []int, mats []MapMatrix, workers int) MapsPart {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	rows := pick(len(times), MapTimes)
	cols := pick(len(axis), MapPoints)
	m := &Maps{Matrices: map[string]*Matrix{}}
	b := []byte("matrix,experiment,time")
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
	// The lines, one per matrix and kept row, are formatted several at
	// once, each block of lines by one goroutine into its own buffer, and
	// joined in order: the bytes do not depend on which finished first.
	lines := make([]mapLine, len(mats)*len(rows))
	blocks := make([][]byte, min(len(lines), 8*runtime.GOMAXPROCS(0)))
	per := (len(lines) + len(blocks) - 1) / max(len(blocks), 1)
	next := make(chan int, len(blocks))
	for k := range blocks {
		next <- k
	}
	close(next)
	var wg sync.WaitGroup
	var fault fanout.Fault // a block's panic (an At's), raised again below
	for range min(workers, len(blocks)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			k := 0
			defer fault.Catch(&k)
			for k = range next {
				// About 12 bytes a value, sized once.
				out := make([]byte, 0, per*(len(cols)+3)*12)
				for l := k * per; l < min(len(lines), (k+1)*per); l++ {
					mm, i := mats[l/len(rows)], rows[l%len(rows)]
					out = lines[l].format(out, mm, i, times, experiment, cols, m != nil)
				}
				blocks[k] = out
			}
		}()
	}
	wg.Wait()
	fault.Raise()
	for l, ln := range lines {
		if m == nil {
			break
		}
		if !ln.ok {
			m = nil
			break
		}
		name := mats[l/len(rows)].Name
		mx := m.Matrices[name]
		if mx == nil {
			mx = &Matrix{}
			m.Matrices[name] = mx
		}
		mx.Experiment = append(mx.Experiment, ln.experiment)
		mx.Times = append(mx.Times, ln.time)
		mx.Rows = append(mx.Rows, ln.row)
	}
	return MapsPart{head: b, blocks: blocks, maps: m}
}

// mapLine is one line of maps.csv as Load reads it back: the experiment,
// the time and the row's values (ok false when the time is not a number).
type mapLine struct {
	experiment int
	time       float64
	row        []float64
	ok         bool
}

// format appends the line of matrix mm's row i to b, and with values
// keeps what Load reads back from it in l.
func (l *mapLine) format(b []byte, mm MapMatrix, i int, times []float64, experiment []int, cols []int, values bool) []byte {
	l.experiment = 1
	if i < len(experiment) {
		l.experiment = experiment[i] + 1
	}
	b = append(append(b, mm.Name...), ',')
	b = append(strconv.AppendInt(b, int64(l.experiment), 10), ',')
	b, l.time, l.ok = appendValue(b, times[i], 10)
	if values {
		l.row = make([]float64, 0, len(cols))
	}
	for _, j := range cols {
		var v float64
		b, v, _ = appendValue(append(b, ','), mm.At(i, j), 6)
		if values {
			l.row = append(l.row, v)
		}
	}
	return append(b, '\n')
}

// appendValue appends v as output.AppendDigits does and returns the value Load reads
// back from the text (readMaps: NaN for an empty cell, ok false then): as
// output.AppendDigitsValue forms it from the digits, or read from the text
// where it does not (the same float64 either way: both are the correctly
// rounded value of the text).
func appendValue(b []byte, v float64, digits int) ([]byte, float64, bool) {
	n := len(b)
	b, r, exact := output.AppendDigitsValue(b, v, digits)
	if len(b) == n {
		return b, math.NaN(), false
	}
	if exact {
		return b, r, true
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

// MapCols are the points (of m) that MapsCSV shows.
func MapCols(m int) []int { return pick(m, MapPoints) }

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
