package spectra

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/interp"
	"gonum.org/v1/gonum/mat"
)

// Resample interpolates y(x) linearly onto the points of target. Points of
// target outside x's range are an error: extrapolating a spectrum invents
// data. Callers first cut target to the common range (CommonRange).
func Resample(x, y, target []float64) ([]float64, error) {
	xs, ys := ascending(x, y)
	var pl interp.PiecewiseLinear
	if err := pl.Fit(xs, ys); err != nil {
		return nil, fmt.Errorf("resample: %w", err)
	}
	lo, hi := xs[0], xs[len(xs)-1]
	out := make([]float64, len(target))
	for i, t := range target {
		if t < lo-1e-9*math.Abs(lo) || t > hi+1e-9*math.Abs(hi) {
			return nil, fmt.Errorf("axis value %g lies outside this file's range %g–%g", t, lo, hi)
		}
		out[i] = pl.Predict(math.Min(math.Max(t, lo), hi))
	}
	return out, nil
}

func ascending(x, y []float64) ([]float64, []float64) {
	if len(x) < 2 || x[1] > x[0] {
		return x, y
	}
	xs := make([]float64, len(x))
	ys := make([]float64, len(y))
	for i := range x {
		xs[len(x)-1-i], ys[len(y)-1-i] = x[i], y[i]
	}
	return xs, ys
}

// Range is a closed axis interval LO:HI (either order).
type Range struct{ Lo, Hi float64 }

func (r Range) contains(v float64) bool {
	lo, hi := math.Min(r.Lo, r.Hi), math.Max(r.Lo, r.Hi)
	return v >= lo && v <= hi
}

// SelectChannels returns the axis indices kept by the regions (all when
// none) less those in any excluded range.
func SelectChannels(axis []float64, keep, exclude []Range) ([]int, error) {
	var idx []int
	for i, v := range axis {
		ok := len(keep) == 0
		for _, r := range keep {
			if r.contains(v) {
				ok = true
				break
			}
		}
		for _, r := range exclude {
			if r.contains(v) {
				ok = false
				break
			}
		}
		if ok {
			idx = append(idx, i)
		}
	}
	if len(idx) == 0 {
		lo, hi := math.Min(axis[0], axis[len(axis)-1]), math.Max(axis[0], axis[len(axis)-1])
		return nil, fmt.Errorf("the regions select no axis point; the data spans %g–%g", lo, hi)
	}
	if len(idx) < 2 {
		return nil, errors.New("the regions select a single axis point; widen them")
	}
	return idx, nil
}

// Keep returns the series restricted to the given channel indices.
func (s *Series) Keep(idx []int) *Series {
	n, m := s.Values.Dims()
	if len(idx) == m && isIdentity(idx) {
		// Every channel in order: share the values rather than copy a
		// matrix that may be gigabytes (nothing downstream writes to it).
		out := *s
		return &out
	}
	v := mat.NewDense(n, len(idx), nil)
	axis := make([]float64, len(idx))
	for j, c := range idx {
		axis[j] = s.Axis[c]
	}
	for i := 0; i < n; i++ {
		row := s.Values.RawRowView(i)
		dst := v.RawRowView(i)
		for j, c := range idx {
			dst[j] = row[c]
		}
	}
	out := *s
	out.Axis, out.Values = axis, v
	return &out
}

func isIdentity(idx []int) bool {
	for j, c := range idx {
		if c != j {
			return false
		}
	}
	return true
}

// KeepValues restricts a spectrum to channel indices.
func KeepValues(vals []float64, idx []int) []float64 {
	out := make([]float64, len(idx))
	for j, c := range idx {
		out[j] = vals[c]
	}
	return out
}

// OnAxis returns sp's values on axis: the same points, or (with resample)
// linear interpolation; otherwise an error describing the mismatch.
func OnAxis(sp *Spectrum, axis []float64, axisSource string, resample bool) ([]float64, error) {
	if sameAxis(sp.Axis, axis) {
		return sp.Values, nil
	}
	if !resample {
		return nil, inputErr(sp.Source, 0, "use --resample, or export it on the data's axis", "%s", describeAxisMismatch(sp.Axis, axis, axisSource))
	}
	v, err := Resample(sp.Axis, sp.Values, axis)
	if err != nil {
		return nil, inputErr(sp.Source, 0, "it must cover the data's axis range", "cannot resample: %v", err)
	}
	return v, nil
}

// CommonRange returns the indices of axis lying inside every other axis.
func CommonRange(axis []float64, others ...[]float64) []int {
	var idx []int
	for i, v := range axis {
		ok := true
		for _, o := range others {
			lo, hi := math.Min(o[0], o[len(o)-1]), math.Max(o[0], o[len(o)-1])
			if v < lo || v > hi {
				ok = false
				break
			}
		}
		if ok {
			idx = append(idx, i)
		}
	}
	sort.Ints(idx)
	return idx
}
