package pipeline

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// checkVapour looks for water-vapour lines that change during the run
// (svd.CheckVapour) in the matrix as assembled (less the --vapour spectra),
// before anything is resolved: a change of the beam path's humidity is
// not chemistry, and the user should hear of it whatever is counted.
func checkVapour(r *Result) {
	v := svd.CheckVapour(r.D, r.Axis, experimentBlocks(r))
	r.Vapour = &v
	for q, f := range r.Settings.Vapour {
		lo, hi := amountRange(r, q)
		r.Notes = append(r.Notes, fmt.Sprintf("--vapour %s subtracted from every spectrum, its amount fitted on its narrow lines: %.3g to %.3g times the file's spectrum (vapour_subtracted.csv)", f, lo, hi))
	}
}

// amountRange is the smallest and largest amount of --vapour spectrum q.
func amountRange(r *Result, q int) (lo, hi float64) {
	col := mat.Col(nil, q, r.LineAmounts)
	return slices.Min(col), slices.Max(col)
}

// vapourWarning says, once the spectra are resolved, that the vapour
// changed, by how much, and which resolved spectra carry its lines.
func vapourWarning(r *Result) {
	v := r.Vapour
	if v == nil || !v.Detected {
		return
	}
	var b strings.Builder
	after := ""
	if len(r.LineSpectra) > 0 {
		after = " (after the --vapour spectra were subtracted)"
	}
	fmt.Fprintf(&b, "water vapour%s: %d narrow lines at %g–%g cm⁻¹ change together during the run (%.3g× what noise gives), the water-vapour lines of the beam path; the largest, at %.5g cm⁻¹, changes by %s",
		after, v.Lines, v.Lo, v.Hi, v.Ratio, v.LargestAt, vapourChanges(r))
	b.WriteString(": the humidity of the air or purge in the beam changed. The same gas has lines at about 1300–2000 cm⁻¹, over the bands there")
	if carriers := vapourCarriers(r); carriers != "" {
		b.WriteString("; " + carriers)
	}
	if len(r.Experiments) > 1 {
		b.WriteString("; a change that differs between experiments is one more independent change in their stack and can be counted as a component that no experiment shows alone")
	}
	b.WriteString(". Purge the spectrometer longer before starting, or give a water-vapour spectrum recorded at the same resolution to --vapour FILE, which subtracts it from every spectrum; vapour.csv gives the lines' height in every spectrum")
	r.Warnings = append(r.Warnings, b.String())
}

// vapourChanges is the change of the largest line, per experiment when
// there are several.
func vapourChanges(r *Result) string {
	v := r.Vapour
	if len(v.Change) == 1 {
		return fmt.Sprintf("%.2g absorbance", v.Change[0])
	}
	parts := make([]string, len(v.Change))
	for e, c := range v.Change {
		parts[e] = fmt.Sprintf("%.2g in experiment %d", c, e+1)
	}
	return strings.Join(parts, ", ") + " (absorbance)"
}

// vapourCarriers names the resolved spectra that hold the lines beyond
// their noise, with the height of the largest line in each against the
// spectrum's largest value.
func vapourCarriers(r *Result) string {
	if r.ALS == nil || r.ALS.S == nil {
		return ""
	}
	var names, sizes []string
	none := true
	for k, name := range r.Names {
		h, z, big := vapourIn(r, k)
		if z < svd.VapourSignificant {
			continue
		}
		none = false
		names = append(names, name)
		sizes = append(sizes, fmt.Sprintf("%.2g (%.2g %% of its largest value)", math.Abs(h), 100*math.Abs(h)/big))
	}
	if none {
		return "no resolved spectrum holds them beyond its noise"
	}
	return fmt.Sprintf("the resolved %s %s them, their largest line %s", joinNames(names), holds(len(names)), strings.Join(sizes, ", "))
}

// vapourIn measures the lines in resolved spectrum k: their height, its z
// and the spectrum's largest absolute value.
func vapourIn(r *Result, k int) (h, z, big float64) {
	m, _ := r.ALS.S.Dims()
	s := make([]float64, m)
	for j := range s {
		s[j] = r.ALS.S.At(j, k)
		big = math.Max(big, math.Abs(s[j]))
	}
	h, z = r.Vapour.LinesIn(s)
	return h, z, big
}

func joinNames(names []string) string {
	switch len(names) {
	case 1:
		return "spectrum " + names[0]
	case 2:
		return "spectra " + names[0] + " and " + names[1]
	}
	return "spectra " + strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

func holds(n int) string {
	if n == 1 {
		return "holds"
	}
	return "hold"
}

// vapourSummary is summary.json's water_vapour (nil when the axis was not
// checked).
func vapourSummary(r *Result) *output.VapourJSON {
	v := r.Vapour
	if v == nil {
		return nil
	}
	j := &output.VapourJSON{Checked: v.Checked, Why: v.Why, Range: []float64{v.Lo, v.Hi}}
	for q, f := range r.Settings.Vapour {
		lo, hi := amountRange(r, q)
		j.Subtracted = append(j.Subtracted, output.VapourSubtractedJSON{File: f, AmountMin: round(lo), AmountMax: round(hi)})
	}
	if !v.Checked {
		return j
	}
	ratio, lines := round(v.Ratio), v.Lines
	j.Detected, j.Ratio, j.Lines = v.Detected, &ratio, &lines
	if !v.Detected {
		return j
	}
	j.LargestAt = round(v.LargestAt)
	for _, c := range v.Change {
		j.Change = append(j.Change, round(c))
	}
	if r.ALS != nil && r.ALS.S != nil {
		for k, name := range r.Names {
			h, z, _ := vapourIn(r, k)
			if z >= svd.VapourSignificant {
				j.Carriers = append(j.Carriers, output.VapourCarrierJSON{Component: name, LineHeight: round(h)})
			}
		}
	}
	return j
}

// writeVapour writes vapour.csv when the lines changed: per spectrum, the
// height of the largest line (high-passed, absorbance).
func writeVapour(r *Result, st *output.Stage) error {
	v := r.Vapour
	if v == nil || !v.Detected {
		return nil
	}
	multi := len(r.Experiments) > 1
	h := []string{"time", "line_height"}
	if multi {
		h = []string{"experiment", "time", "line_height"}
	}
	var w output.CSV
	w.Row(h)
	for i, tm := range r.Times {
		if multi {
			w.Int(r.ExpOfRow[i] + 1)
		}
		w.Float(tm)
		w.Float(v.Height[i])
		w.End()
	}
	return st.Write("vapour.csv", w.Bytes())
}

// readLineSpectra reads the --vapour spectra onto the common channels (on
// the same axis, or interpolated with --resample, as a blank is).
func readLineSpectra(r *Result, first *spectra.Series, axis []float64, chans []int) error {
	s := r.Settings
	for _, f := range s.Vapour {
		sp, err := spectra.ReadSpectrum(s.Path(f))
		if err != nil {
			return err
		}
		v, err := axisValues(sp, first, axis, chans, s.Resample)
		if err != nil {
			return err
		}
		r.LineSpectra = append(r.LineSpectra, v)
	}
	return nil
}

// subtractLineSpectra takes the --vapour spectra out of one experiment's
// assembled matrices, each row by the amounts fitted on its own lines
// (svd.LineAmounts). The fit is linear in the row, so the differences
// stay the absolute rows less the reference's, both compensated. The
// amounts of the rows D is made of are kept for vapour_subtracted.csv.
func subtractLineSpectra(r *Result, as *spectra.Assembled, source string, axis []float64) error {
	if len(r.LineSpectra) == 0 {
		return nil
	}
	kept := as.Difference
	if as.Absolute != nil {
		kept = as.Absolute
	}
	for _, d := range []*mat.Dense{as.Absolute, as.Difference} {
		if d == nil {
			continue
		}
		a, err := svd.LineAmounts(d, axis, r.LineSpectra)
		if err != nil {
			return fmt.Errorf("--vapour: %s: %w", source, err)
		}
		svd.SubtractLines(d, r.LineSpectra, a)
		if d == kept && r.LineAmounts == nil {
			r.LineAmounts = a
		} else if d == kept {
			r.LineAmounts = stack([]*mat.Dense{r.LineAmounts, a})
		}
	}
	return nil
}

// writeLineAmounts writes vapour_subtracted.csv with --vapour: per
// spectrum, the amount of each spectrum subtracted (1: as much as in its
// file), in the order given.
func writeLineAmounts(r *Result, st *output.Stage) error {
	if r.LineAmounts == nil {
		return nil
	}
	multi := len(r.Experiments) > 1
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	for q := range r.LineSpectra {
		h = append(h, fmt.Sprintf("amount_%d", q+1))
	}
	var w output.CSV
	w.Row(h)
	for i, tm := range r.Times {
		if multi {
			w.Int(r.ExpOfRow[i] + 1)
		}
		w.Float(tm)
		for q := range r.LineSpectra {
			w.Float(r.LineAmounts.At(i, q))
		}
		w.End()
	}
	return st.Write("vapour_subtracted.csv", w.Bytes())
}
