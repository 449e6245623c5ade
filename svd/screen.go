package svd

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Screen is what one pass over a matrix tells the steps that check it before they
// work from its factors: the error of its first non-finite entry, row by row (nil:
// all finite), its rows of exact zeros, and when summed its squared Frobenius norm
// summed as Decompose sums it (row by row, in index order: the same bits). A pass
// that writes the matrix a row at a time screens each row as it leaves it, while it
// is in cache (ScaleIntoScreened; Row for a caller's own pass), and
// DecomposeOptions.Screen and RankOptions.Screen then stand for the passes
// Decompose and EstimateRank would make over the matrix to learn the same. A screen
// holds only while the matrix is as it was screened.
type Screen struct {
	Rows, Cols int
	next       int // rows screened so far, in order; −1 after a row out of order
	err        error
	zero       []int
	sum        bool
	frob       float64
}

// NewScreen starts the screen of a rows × cols matrix, with its sum of squares
// when sum is set; Row adds its rows in order.
func NewScreen(rows, cols int, sum bool) *Screen {
	return &Screen{Rows: rows, Cols: cols, sum: sum}
}

// Row screens row i (its cols entries); rows come in order from 0, and a row out
// of order leaves the screen unusable (every step then reads the matrix itself).
func (s *Screen) Row(i int, row []float64) {
	if s.next != i || len(row) != s.Cols {
		s.next = -1
		return
	}
	if s.err == nil {
		s.err = rowError(row, i)
	}
	if allZero(row) {
		s.zero = append(s.zero, i)
	}
	if s.sum {
		s.frob = sumSquares(s.frob, row)
	}
	s.next++
}

// Sum is the sum of squares of the rows screened so far, where the next row's
// squares are to be added (0 without the sum): a pass that writes a row can add
// them while it writes it, x·x for each entry x in index order, and hand the
// total to Written.
func (s *Screen) Sum() float64 { return s.frob }

// Written screens row i (its cols entries), which the caller has just written:
// sum is Sum() with the squares of the row's entries added in index order, the
// additions Row would make (ignored without the sum), and finite says whether
// the row's Σ (x − x) is +0, which it is exactly when every entry is finite
// (finiteRow). The same screen as Row, without reading the row again for its
// sum and its check (the row is read for its rows-of-zeros test, which stops
// at its first entry that is not zero, and for the error's place when it is
// not finite).
func (s *Screen) Written(i int, row []float64, sum float64, finite bool) {
	if s.next != i || len(row) != s.Cols {
		s.next = -1
		return
	}
	if s.err == nil && !finite {
		s.err = rowError(row, i)
	}
	if allZero(row) {
		s.zero = append(s.zero, i)
	}
	if s.sum {
		s.frob = sum
	}
	s.next++
}

// ScreenRows screens the rows × cols matrix whose row i row(i, buf) writes into
// buf (len cols), row after row, without its sum of squares.
func ScreenRows(rows, cols int, row func(i int, buf []float64)) *Screen {
	s := NewScreen(rows, cols, false)
	buf := make([]float64, cols)
	for i := 0; i < rows; i++ {
		row(i, buf)
		s.Row(i, buf)
	}
	return s
}

// ScreenFinite is the screen of a rows × cols matrix that the caller knows to be
// finite everywhere (Bound tells one way), whose row i is all zeros exactly when
// zero(i) says so: the same screen as Row row after row, with no error and
// without the sum of squares. A check for a row of zeros can stop at its first
// entry that is not zero, so zero need form only the leading entries of a row
// that is not zero instead of the whole row.
func ScreenFinite(rows, cols int, zero func(i int) bool) *Screen {
	s := NewScreen(rows, cols, false)
	for i := 0; i < rows; i++ {
		if zero(i) {
			s.zero = append(s.zero, i)
		}
	}
	s.next = rows
	return s
}

// Bound is a bound on the magnitude of every entry of the rows × cols matrix s
// screens: √(Σ d_ij²) when s is a complete screen of that size with its sum of
// squares and every entry finite, else +Inf (nothing known). Every |d_ij| is at
// most the square root of the sum of the squares, rounding aside (the sum of
// n squares errs by at most n ε of itself, far less than the margin a caller
// keeps from overflow).
func (s *Screen) Bound(rows, cols int) float64 {
	if !s.complete() || s.Rows != rows || s.Cols != cols || s.err != nil || !s.sum {
		return math.Inf(1)
	}
	return math.Sqrt(s.frob)
}

// ScaleIntoScreened is ScaleInto, screening each row of the scaled matrix as it
// is written, with its sum of squares.
func ScaleIntoScreened(out, d *mat.Dense, row, col []float64) (*mat.Dense, *Screen) {
	n, m := d.Dims()
	s := NewScreen(n, m, true)
	scaleRows(out, d, row, col, s)
	return out, s
}

// complete says whether every row was screened in order (false for nil).
func (s *Screen) complete() bool { return s != nil && s.next == s.Rows }

// of is s when it is a complete screen of a matrix of d's dimensions, else nil
// (for a nil or empty d too, which checkMatrix refuses).
func (s *Screen) of(d *mat.Dense) *Screen {
	if d == nil || d.IsEmpty() || !s.complete() {
		return nil
	}
	if n, m := d.Dims(); s.Rows != n || s.Cols != m {
		return nil
	}
	return s
}

// check is checkMatrix for the matrix s screens (s nil: d's own, read).
func (s *Screen) check(d *mat.Dense) error {
	if s != nil {
		return s.err
	}
	return checkMatrix(d)
}

// allZero says whether every entry of x is zero (of either sign).
func allZero(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}
