package spectra

import (
	"fmt"
	"math"
	"sort"
)

// axisSlack is how far, as a fraction of the local point spacing, the axis
// of a file of a series may lie from the first file's and still be taken
// as the same axis, its values as they are. Exports round the axis to a
// few decimals (common practice: 4000.004 for 4000 at a 1.93 cm⁻¹
// spacing is 0.2 % of it). Taking values at an offset δ of a spacing h
// moves each by at most δ·h·|y′| ≤ δ × the step between neighbouring
// points: at 1 % below what linear interpolation itself costs, h²|y″|/8
// (Burden & Faires, Numerical Analysis, §3.1: the error of linear
// interpolation), on any band sampled with fewer than about 25 points per
// width, and interpolation would besides average the noise of two points.
const axisSlack = 0.01

// axisOffset is the largest |a_i − ref_i|, in axis units and as a fraction
// of ref's spacing there; ok is false when the lengths differ.
func axisOffset(a, ref []float64) (abs, frac float64, ok bool) {
	if len(a) != len(ref) || len(ref) < 2 {
		return 0, 0, false
	}
	for i := range a {
		k := min(i, len(ref)-2)
		h := math.Abs(ref[k+1] - ref[k])
		d := math.Abs(a[i] - ref[i])
		if !(h > 0) {
			return 0, 0, false
		}
		abs, frac = math.Max(abs, d), math.Max(frac, d/h)
	}
	return abs, frac, true
}

// interpolationNoise is the noise of values linearly interpolated from
// points at x onto target, relative to the noise of one point, as the root
// mean over target of (1−f)² + f² (f the fraction of the spacing from the
// point below): a value interpolated at f is (1−f)·y_k + f·y_{k+1}, whose
// variance for independent y of variance σ² is ((1−f)² + f²)·σ² —
// σ²/2 halfway, √0.5 ≈ 0.71 in noise (propagation of variance for a
// linear combination; any statistics text).
func interpolationNoise(x, target []float64) float64 {
	xs := append([]float64(nil), x...)
	sort.Float64s(xs)
	sum := 0.0
	for _, t := range target {
		k := sort.SearchFloat64s(xs, t)
		if k == 0 || k >= len(xs) || xs[k] == t {
			sum++ // on a point, or at an end: the value itself
			continue
		}
		f := (t - xs[k-1]) / (xs[k] - xs[k-1])
		sum += (1-f)*(1-f) + f*f
	}
	if len(target) == 0 {
		return 1
	}
	return math.Sqrt(sum / float64(len(target)))
}

// axisTally counts how the spectra of a series were put on its axis, for
// the notes that say so.
type axisTally struct {
	ref      string // the spectrum whose axis the series takes, as notes name it
	axisName string
	rows     int

	near                 int // taken as they are, within axisSlack
	nearFirst            string
	nearAbs, nearFrac    float64
	interp               int // interpolated (--resample)
	interpFirst          string
	interpFirstTime      float64
	noiseSum, noiseLeast float64
}

// place gives the values of sp (named name in notes, at time t) on the series'
// axis: as they are on the reference axis ref or within axisSlack of it
// (keep selects the channels of ref the series keeps; nil = all), else
// interpolated onto target when resample allows it (ok false when not).
func (a *axisTally) place(sp *Spectrum, name string, t float64, ref, target []float64, keep []int, resample bool) (vals []float64, ok bool, err error) {
	a.rows++
	if sameAxis(sp.Axis, ref) {
		return keepAll(sp.Values, keep), true, nil
	}
	if abs, frac, same := axisOffset(sp.Axis, ref); same && frac <= axisSlack {
		if a.near == 0 {
			a.nearFirst = name
		}
		a.near++
		a.nearAbs, a.nearFrac = math.Max(a.nearAbs, abs), math.Max(a.nearFrac, frac)
		return keepAll(sp.Values, keep), true, nil
	}
	if !resample {
		return nil, false, nil
	}
	if vals, err = Resample(sp.Axis, sp.Values, target); err != nil {
		return nil, false, err
	}
	g := interpolationNoise(sp.Axis, target)
	if a.interp == 0 {
		a.interpFirst, a.interpFirstTime, a.noiseLeast = name, t, g
	}
	a.interp++
	a.noiseSum += g
	a.noiseLeast = math.Min(a.noiseLeast, g)
	return vals, true, nil
}

// notes says, one line each, how many spectra were taken at a rounded
// axis and how many were interpolated, from which one on, and what that
// does to their noise.
func (a *axisTally) notes() []string {
	var out []string
	if a.near > 0 {
		out = append(out, fmt.Sprintf("%d of %d spectra (the first %s) lie on axes up to %.3g %s (%.2g %% of a point spacing) off that of %s, as exports that round the axis give: taken as that axis, values as they are (an offset under %g %% of a spacing moves a value less than interpolating would)",
			a.near, a.rows, a.nearFirst, a.nearAbs, orAxis(a.axisName), 100*a.nearFrac, a.ref, 100*axisSlack))
	}
	if a.interp > 0 {
		mean := a.noiseSum / float64(a.interp)
		level := fmt.Sprintf("%.2f×", mean)
		if mean-a.noiseLeast > 0.005 {
			level += fmt.Sprintf(" on average, down to %.2f×", a.noiseLeast)
		}
		out = append(out, fmt.Sprintf("--resample: %d of %d spectra were interpolated (linearly) onto the axis of %s, the first %s at %g s; interpolation averages neighbouring points, so their noise is lower, %s (√((1−f)²+f²) at a fraction f of a spacing, 0.71× halfway), and correlated between neighbours; the noise model does not account for this and weights them as the others",
			a.interp, a.rows, a.ref, a.interpFirst, a.interpFirstTime, level))
	}
	return out
}

func orAxis(name string) string {
	switch name {
	case "wavenumber":
		return "cm⁻¹"
	case "wavelength":
		return "nm"
	}
	return "axis units"
}

// keepAll is KeepValues with nil standing for every channel (the values
// themselves, not a copy).
func keepAll(vals []float64, keep []int) []float64 {
	if keep == nil {
		return vals
	}
	return KeepValues(vals, keep)
}
