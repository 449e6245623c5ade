package pipeline

import (
	"fmt"
	"slices"
	"sort"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"gonum.org/v1/gonum/mat"
)

// writeMaps stages maps.csv, the report's first step (see
// writersAfterResults), from the maps formed ahead when there are some.
func writeMaps(r *Result, stage *output.Stage) error {
	if !wantMaps(r) {
		return nil
	}
	f, ok := r.early.maps.get()
	if !ok {
		f = formatMaps(r)
	}
	if err := stage.Write(report.MapsFile, f.csv); err != nil {
		return err
	}
	r.reportMaps = f.maps
	return nil
}

func wantMaps(r *Result) bool { return r.Settings.Report != "off" && r.D != nil }

// formatMaps makes maps.csv; it only reads r (see earlyFiles).
func formatMaps(r *Result) mapsFile {
	b, m := report.FormatMaps(r.Axis, r.Times, r.ExpOfRow, mapMatrices(r))
	return mapsFile{csv: b, maps: m}
}

// mapMatrices are the matrices maps.csv shows: the data, the difference
// spectra and, after a resolution, the residuals.
func mapMatrices(r *Result) []report.MapMatrix {
	var mats []report.MapMatrix
	at := func(m *mat.Dense) func(i, j int) float64 { return m.At }
	mats = append(mats, report.MapMatrix{Name: "data", At: measuredAt(r)})
	if r.diffMapRows != nil {
		mats = append(mats, report.MapMatrix{Name: "difference", At: r.diffMapRows.at})
	} else if diff := differenceMatrix(r); diff != nil {
		mats = append(mats, report.MapMatrix{Name: "difference", At: at(diff)})
	}
	if r.ALS != nil {
		mats = append(mats, residualMatrix(r))
	}
	return mats
}

// measuredAt reads the data as measured: r.D, and with a fitted baseline
// r.D plus it, since r.D has the baseline taken off in place
// (withoutBaseline) and maps.csv's "data" rows and the report's map of
// the data say the data. A difference of up to 0.018 absorbance on the
// real catalyst-0.01 series was shown as the data before.
func measuredAt(r *Result) func(i, j int) float64 {
	b, p := r.BaselineProfiles, r.BaselineShapes
	if b == nil || p == nil {
		return r.D.At
	}
	_, nb := b.Dims()
	return func(i, j int) float64 {
		return r.D.At(i, j) + baselineDot(b.RawRowView(i)[:nb], p.RawRowView(j)[:nb])
	}
}

// residualMatrix is D − C Sᵀ, computed on demand at the points maps.csv
// keeps rather than stored for the whole matrix.
func residualMatrix(r *Result) report.MapMatrix {
	d, c, s := r.D, r.ALS.C, r.ALS.S
	return report.MapMatrix{Name: "residual", At: func(i, j int) float64 {
		return residualAt(d.RawRowView(i), c.RawRowView(i), s.RawRowView(j), j)
	}}
}

// residualAt is the residual at point j of the row of D drow whose row of
// C is crow, with srow the row of S at j: d − Σ_q c_q s_q, subtracted in
// the order of q (residualSource reads the same values a row at a time).
func residualAt(drow, crow, srow []float64, j int) float64 {
	v := drow[j]
	for q, cq := range crow {
		v -= cq * srow[q]
	}
	return v
}

// differenceMatrix stacks the experiments' difference spectra when the
// resolved matrix is absolute absorbance (species mode); in reactions mode
// the resolved matrix is already the difference one.
func differenceMatrix(r *Result) *mat.Dense {
	if r.Mode.String() != "species" {
		return nil
	}
	var parts []*mat.Dense
	for _, e := range r.Experiments {
		if e.Assembled == nil || e.Assembled.Difference == nil {
			return nil
		}
		parts = append(parts, e.Assembled.Difference)
	}
	if len(parts) == 0 {
		return nil
	}
	d := stack(parts)
	if n, m := d.Dims(); n != len(r.Times) || m != len(r.Axis) {
		return nil
	}
	return d
}

// mapRows copies the values of d (the stacked difference matrix, n × m) that
// the report's maps show, at report.MapRows × report.MapCols, so that d
// itself need not be kept until the results are written; nil when d is not
// of the data's shape, as differenceMatrix would give none. Only the points
// shown: at 2000 × 3001 the 200 rows' 400 points are 0.64 MB where the
// whole rows were 4.8 MB of memory new to a run.
func mapRows(r *Result, d *mat.Dense) *mapValues {
	if d == nil {
		return nil
	}
	n, m := d.Dims()
	if n != len(r.Times) || m != len(r.Axis) {
		return nil
	}
	v := &mapValues{rows: map[int][]float64{}, cols: report.MapCols(m), pos: make([]int32, m)}
	for j := range v.pos {
		v.pos[j] = -1
	}
	for k, j := range v.cols {
		v.pos[j] = int32(k)
	}
	rows := report.MapRows(n)
	vals := make([]float64, len(rows)*len(v.cols))
	for _, i := range rows {
		row, kept := d.RawRowView(i), vals[:len(v.cols):len(v.cols)]
		vals = vals[len(v.cols):]
		for k, j := range v.cols {
			kept[k] = row[j]
		}
		v.rows[i] = kept
	}
	return v
}

// mapValues are a matrix's values at the report's map points: for each row
// report.MapRows keeps, its values at cols (report.MapCols), in that order.
type mapValues struct {
	rows map[int][]float64
	cols []int
	pos  []int32 // pos[j]: j's place in cols, −1 for a point not kept
}

// at is the value at row i and point j, both among the kept ones.
func (v *mapValues) at(i, j int) float64 { return v.rows[i][v.pos[j]] }

// fill appends row i's values at the points cols (all kept ones) to dst.
func (v *mapValues) fill(dst []float64, i int, cols []int) []float64 {
	row := v.rows[i]
	if slices.Equal(cols, v.cols) {
		return append(dst, row...)
	}
	for _, j := range cols {
		dst = append(dst, row[v.pos[j]])
	}
	return dst
}

func writeReport(r *Result, stage *output.Stage) error {
	if r.Settings.Report == "off" {
		return nil
	}
	// maps.csv as writeMaps formed it rather than read back: the same Maps;
	// the other files as they were written, not read back either, and the
	// tables parsed ahead from the same bytes not parsed again.
	f, err := report.LoadParsed(stage.Dir, r.reportMaps, stage.Written, r.ahead.parsed())
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	// The figures as files too (SVG and PNG, legend included), for papers
	// and slides; sorted so the files are written in a fixed order.
	b, files, err := report.BuildWithPredrawn(f, r.ahead.predrawn())
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if len(files) > 0 {
		if err := stage.Mkdir("figures"); err != nil {
			return fmt.Errorf("report: %w", err)
		}
		names := make([]string, 0, len(files))
		for name := range files {
			names = append(names, name)
		}
		sort.Strings(names)
		for _, name := range names {
			if err := stage.Write(name, files[name]); err != nil {
				return err
			}
		}
	}
	return stage.Write("report.html", b)
}
