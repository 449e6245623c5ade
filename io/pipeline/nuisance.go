package pipeline

import (
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/internal/pvalue"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Wiring of the nuisances (docs/measurement.md): the baseline model (svd.PolyBasis,
// svd.ChooseBaselineOrder, mcr.Options.Baseline), the chemical count (svd.ClassifyFactors)
// and the spectra set aside (mcr.FindOutliers, --drop).

// autoBaselineOrder is the highest order --baseline auto tries: an offset, a slope and
// two curvatures cover the drift of ATR crystals, cells and lamps (common practice); a
// higher order starts to model broad bands.
const autoBaselineOrder = 3

// parseBaseline reads --baseline: the highest order to consider and whether the
// order is chosen by the F-test.
func parseBaseline(v string) (order int, auto bool, err error) {
	switch v {
	case "off":
		return -1, false, nil
	case "offset":
		return 0, false, nil
	case "linear":
		return 1, false, nil
	case "auto", "":
		return autoBaselineOrder, true, nil
	}
	if rest, ok := strings.CutPrefix(v, "poly:"); ok {
		n, err := strconv.Atoi(rest)
		if err == nil && n >= 0 && n <= 8 {
			return n, false, nil
		}
	}
	return 0, false, fmt.Errorf("%q: use off, offset, linear, poly:N (N from 0 to 8) or auto", v)
}

// baselineName is the model's name for an order.
func baselineName(order int) string {
	switch order {
	case -1:
		return "off"
	case 0:
		return "offset"
	case 1:
		return "linear"
	}
	return fmt.Sprintf("poly:%d", order)
}

// rankInputs are the rank options of the resolved matrix (see Run).
type rankInputs struct {
	d     *mat.Dense // the matrix the rank is counted on: D, or √A D √B with weights
	opt   svd.RankOptions
	maxF  int
	noise float64 // trusted noise level for the classification, 0 = let svd decide
	// row, col are the noise weights when the matrix is the scaled √A D √B (nil: D
	// itself): the baseline is then removed by weighted least squares and the shape
	// tests look at the unscaled vectors (docs/measurement.md §2).
	row, col []float64
	// reuse says d is the caller's own copy, which the projection of the
	// baseline may overwrite in place (D Q⊥ needs no data-sized matrix of
	// its own: 1.2 GB at 50 000 × 3000); rebuild, when set, writes d again
	// afterwards, the same values bit for bit (svd.ScaleInto from D).
	reuse   bool
	rebuild func(*mat.Dense)
	// start (m × p, may be nil) holds directions d's leading row space lies
	// close to, where its randomized SVD starts (svd.DecomposeOptions.Start).
	start *mat.Dense
	// screen (may be nil) is d's, made as d was written (svd.Screen): the
	// decomposition and the rank of d itself take it instead of passes over d.
	screen *svd.Screen
	// basis and dq (may be nil) are the baseline basis of the highest order
	// chooseBaseline tries and d times it: the basis of each lower order is
	// its leading columns (svd.PolyBasis is nested), and so is that order's
	// product, which is then taken from dq instead of a pass over d.
	basis, dq *mat.Dense
	// work (may be nil) is scratch memory the randomized SVDs of the
	// factor analysis hand on, one after the other (svd.Workspace).
	work *svd.Workspace
	// missing (may be nil) are the blind points of d, row by row, which
	// the baseline's F-test leaves out (svd.ChooseBaselineOrderObserved).
	missing [][]int
}

// baselineProduct is d q for q = svd.PolyBasis(axis, order, in.col): the
// leading columns of in.dq when q is, bit for bit, the leading columns of
// in.basis (each entry of a product is its own sum over the row of d), else
// formed here.
func (in rankInputs) baselineProduct(d, q *mat.Dense) *mat.Dense {
	if in.dq != nil && in.basis != nil && leadingColumns(q, in.basis) {
		n, _ := in.dq.Dims()
		_, c := q.Dims()
		return in.dq.Slice(0, n, 0, c).(*mat.Dense)
	}
	return product.Mul(d, q) // mat.Dense.Mul's bits, without its per-entry kernel calls at 1–9 columns
}

// polyBasis is svd.PolyBasis(axis, order, in.col): in.basis itself when it
// is that order's (the same call, made once).
func (in rankInputs) polyBasis(axis []float64, order int) *mat.Dense {
	if in.basis != nil {
		if _, c := in.basis.Dims(); c == order+1 {
			return in.basis
		}
	}
	return svd.PolyBasis(axis, order, in.col)
}

// leadingColumns says whether q's columns are the first columns of b, bit for bit.
func leadingColumns(q, b *mat.Dense) bool {
	m, c := q.Dims()
	bm, bc := b.Dims()
	if bm != m || bc < c {
		return false
	}
	for j := 0; j < m; j++ {
		for l := 0; l < c; l++ {
			if math.Float64bits(q.At(j, l)) != math.Float64bits(b.At(j, l)) {
				return false
			}
		}
	}
	return true
}

// weightedSigma says what σ = 1 is on the noise-weighted matrix, beside the noise σ
// the terminal shows in the data's own units.
const weightedSigma = "the unit of the noise-weighted matrix, each point divided by its own noise σ from the noise model"

// pooledWords says what a σ pooled before the rank step is (pooledSigma).
const pooledWords = "pooled from the pre-reaction spectra of every experiment"

// weightedRankInputs are the rank inputs of a matrix scaled by the weights w: the noise
// level is known, σ = 1, and a reference pattern's time shape in the scaled rows is √a_i.
func weightedRankInputs(r *Result, scaled *mat.Dense, row, col []float64, refRow, maxF int) rankInputs {
	return rankInputs{
		d:     scaled,
		opt:   svd.RankOptions{Sigma: 1, SigmaFrom: weightedSigma, Alpha: r.Settings.Alpha, ReferenceRow: refRow, PatternTime: sqrts(row)},
		maxF:  maxF,
		noise: 1,
		row:   row,
		col:   col,
	}
}

// chemicalRank estimates the rank of d with a polynomial baseline of the given order
// projected out (by weighted least squares when in carries weights), then classifies
// the factors above the noise; Estimate becomes the chemical count. f holds factors of
// d (nil: d is decomposed here). It returns the report and the classification.
func chemicalRank(r *Result, d *mat.Dense, f *svd.Factors, order int, in rankInputs, meanLevel bool) (*svd.RankReport, *svd.ChemicalRank, error) {
	dc, screen := d, in.screen
	if order >= 0 {
		_, m := d.Dims()
		if order+1 >= m {
			return nil, nil, fmt.Errorf("baseline of order %d needs more than %d points", order, m)
		}
		// D Q⊥ = D − (D Q) Qᵀ; with truncated factors of D (large data) those of
		// D Q⊥ follow from them (svd.ProjectFactors) instead of a new decomposition.
		q := in.polyBasis(r.Axis, order)
		dq := in.baselineProduct(d, q)
		if f != nil && !f.Full() && in.opt.Sigma > 0 && in.noise > 0 {
			return screenedRank(r, d, f, q, dq, in, meanLevel)
		}
		if in.reuse {
			dc = d // the same values as below
			if in.rebuild != nil {
				defer in.rebuild(d)
			}
		} else {
			dc = mat.NewDense(d.RawMatrix().Rows, m, nil)
		}
		// D − (D Q) Qᵀ as Mul and Sub form it, each row screened as it is
		// written.
		screen = svd.NewScreen(d.RawMatrix().Rows, m, true)
		_, nb := q.Dims()
		for i := range d.RawMatrix().Rows {
			row := dc.RawRowView(i)[:m]
			lessBaselineRow(row, d.RawRowView(i)[:m], dq.RawRowView(i)[:nb], q)
			screen.Row(i, row)
		}
		if f != nil && !f.Full() {
			var err error
			if f, err = svd.ProjectFactors(f, q, dq); err != nil {
				return nil, nil, fmt.Errorf("factor analysis without the baseline: %w", err)
			}
		} else {
			f = nil
		}
		if in.start != nil {
			// D Q⊥'s rows lie in the start's span projected the same way.
			// The difference is written over the projection: no copy
			// of the start (the caller's stays as it was).
			var sq, proj mat.Dense
			sq.Mul(q.T(), in.start)
			proj.Mul(q, &sq)
			proj.Sub(in.start, &proj)
			in.start = &proj
		}
	}
	if f == nil {
		var err error
		if f, err = svd.Decompose(dc, svd.DecomposeOptions{MaxFactors: in.maxF, Seed: r.Settings.Seed, Start: in.start, Screen: screen, Work: in.work}); err != nil {
			return nil, nil, fmt.Errorf("factor analysis without the baseline: %w", err)
		}
	}
	opt := in.opt
	opt.Screen = screen
	rep, err := svd.EstimateRank(dc, f, opt)
	if err != nil {
		return nil, nil, err
	}
	cr := svd.ClassifyFactors(dc, f, rep, svd.NuisanceOptions{Axis: r.Axis, AxisName: r.AxisName, Wavenumbers: convertedAxis(r), Noise: in.noise, MeanLevel: meanLevel, Row: in.row, Col: in.col, Basis: in.basis, Blocks: experimentBlocks(r), NoBaselineModel: r.noBaselineModel != "" && order < 0})
	svd.ApplyChemical(rep, cr)
	return rep, cr, nil
}

// screenedRank is chemicalRank of D Q⊥ = D − (D Q) Qᵀ when its factors follow
// from f (svd.ProjectFactors) and the noise level is known: the rank and the
// classification then read of D Q⊥ only that it is finite and its rows of
// zeros, which a screen of its rows formed one at a time tells
// (svd.ScreenRows), so that D Q⊥ is neither stored nor written over d (and d
// rebuilt afterwards).
func screenedRank(r *Result, d *mat.Dense, f *svd.Factors, q, dq *mat.Dense, in rankInputs, meanLevel bool) (*svd.RankReport, *svd.ChemicalRank, error) {
	pf, err := svd.ProjectFactors(f, q, dq)
	if err != nil {
		return nil, nil, fmt.Errorf("factor analysis without the baseline: %w", err)
	}
	opt := in.opt
	opt.Screen = projectedScreen(d, dq, q, in.screen)
	rep, err := svd.EstimateRank(nil, pf, opt)
	if err != nil {
		return nil, nil, err
	}
	cr := svd.ClassifyFactors(nil, pf, rep, svd.NuisanceOptions{Axis: r.Axis, AxisName: r.AxisName, Wavenumbers: convertedAxis(r), Noise: in.noise, MeanLevel: meanLevel, Row: in.row, Col: in.col, Basis: in.basis, Blocks: experimentBlocks(r)})
	svd.ApplyChemical(rep, cr)
	return rep, cr, nil
}

// projectedScreen is the screen of D Q⊥ = D − (D Q) Qᵀ, whose row i
// lessBaselineRow forms. When the screen ds of D bounds its entries
// (svd.Screen.Bound) and |d_ij| + Σ_c |(D Q)_ic| |q_jc| stays far from overflow,
// every entry of D Q⊥ is finite, and the screen has only its rows of zeros to
// find: a row is formed eight entries at a time until one is not zero, whole
// only while all are zero (svd.ScreenFinite), the same entries as a whole row
// (each entry is its own sum). At 2000 × 3001 that check reads eight entries of
// most rows instead of forming all 6 million (11 ms). Otherwise every row is
// formed and screened (svd.ScreenRows).
func projectedScreen(d, dq, q *mat.Dense, ds *svd.Screen) *svd.Screen {
	n, m := d.Dims()
	_, nb := q.Dims()
	if ds.Bound(n, m)+baselineBound(dq, q) < 0x1p1000 {
		buf := make([]float64, m)
		lead := min(m, 8)
		return svd.ScreenFinite(n, m, func(i int) bool {
			src, bi := d.RawRowView(i)[:m], dq.RawRowView(i)[:nb]
			lessBaselineRow(buf[:lead], src[:lead], bi, q)
			if !zeroRow(buf[:lead]) {
				return false
			}
			lessBaselineRow(buf, src, bi, q)
			return zeroRow(buf)
		})
	}
	return svd.ScreenRows(n, m, func(i int, buf []float64) {
		lessBaselineRow(buf, d.RawRowView(i)[:m], dq.RawRowView(i)[:nb], q)
	})
}

// baselineBound is Σ_c max_i |(D Q)_ic| · max_j |q_jc|, a bound on the size of
// every entry of (D Q) Qᵀ as lessBaselineRow forms it (a few roundings aside),
// or +Inf when an entry of dq or q is not finite.
func baselineBound(dq, q *mat.Dense) float64 {
	_, nb := q.Dims()
	bound := 0.0
	for c := 0; c < nb; c++ {
		a, b := colMaxAbs(dq, c), colMaxAbs(q, c)
		if math.IsInf(a, 1) || math.IsInf(b, 1) {
			return math.Inf(1)
		}
		bound += a * b
	}
	return bound
}

// colMaxAbs is the largest |x_ic| of column c of x, +Inf when one is not finite.
func colMaxAbs(x *mat.Dense, c int) float64 {
	n, _ := x.Dims()
	top := 0.0
	for i := 0; i < n; i++ {
		a := math.Abs(x.At(i, c))
		if !(a <= math.MaxFloat64) {
			return math.Inf(1)
		}
		top = max(top, a)
	}
	return top
}

// zeroRow says whether every entry of x is zero (of either sign).
func zeroRow(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}

// baselineBesides are the basis chooseBaseline takes D Q of and room for
// that product (n × order+1), when it will form one: --baseline auto with
// enough points; nil, nil otherwise. d is the matrix the rank is counted on,
// col its column weights (nil: none).
func baselineBesides(r *Result, d *mat.Dense, col []float64) (basis, dq *mat.Dense) {
	maxOrder, auto, err := parseBaseline(r.Settings.Baseline)
	n, m := d.Dims()
	if err != nil || !auto || maxOrder < 0 || maxOrder+3 >= m {
		return nil, nil
	}
	basis = svd.PolyBasis(r.Axis, maxOrder, col)
	if basis == nil {
		return nil, nil
	}
	return basis, mat.NewDense(n, maxOrder+1, nil)
}

// chooseBaseline settles the baseline order and the chemical rank of in.d (r.D, or
// the scaled √A D √B when weighted); f holds its factors.
func chooseBaseline(r *Result, f *svd.Factors, in rankInputs) error {
	maxOrder, auto, err := parseBaseline(r.Settings.Baseline)
	if err != nil {
		return usage("--baseline %v", err)
	}
	d := in.d
	_, m := d.Dims()
	if autoBaselineOrder+3 >= m {
		// A cubic has four coefficients: on so few points every spectrum
		// vector is mostly one, and the shape cannot tell a band from a
		// drift that no model would take.
		r.noBaselineModel = fmt.Sprintf("%d points are too few for a baseline model", m)
	}
	if maxOrder+3 >= m {
		maxOrder = -1
		r.Notes = append(r.Notes, fmt.Sprintf("no baseline model: %d points are too few", m))
	}
	if auto && maxOrder >= 0 && maxOrder+1 < m && in.dq == nil {
		// One product D Q for every order the choice looks at (formed
		// beside the decomposition when baselineBesides gave it).
		in.basis = svd.PolyBasis(r.Axis, maxOrder, in.col)
		in.dq = product.Mul(d, in.basis)
	}
	first := in
	if !auto || maxOrder < 0 {
		first.rebuild = nil // d's last use
	}
	rep, cr, err := chemicalRank(r, d, f, maxOrder, first, r.Mode == mcr.Species)
	if err != nil {
		return fmt.Errorf("rank: %w", err)
	}
	order := maxOrder
	if auto && maxOrder >= 0 {
		// Every factor of the model but the baseline and the noise is fitted in the
		// F-test's rank-k fits: a nuisance left in the residual (the reference
		// pattern, present in every row) would otherwise pass for a baseline.
		kf := rep.Estimate
		r.orderOutliers = nil
		for _, nf := range cr.Nuisance {
			if nf.Kind != svd.NuisanceBaseline {
				kf++
			}
			if nf.Kind == svd.NuisanceOutlier {
				r.orderOutliers = append(r.orderOutliers, nf.Spectra)
			}
		}
		r.orderFactors = kf
		// The search tests up to maxOrder+1 orders, each a chance of a false alarm:
		// each is tested at alpha/(maxOrder+1), so the chance that data without a
		// baseline get one stays below alpha (Bonferroni's inequality, common
		// practice for a family of tests). At alpha per order, two closed subsystems
		// with no baseline got a linear one (p = 0.04, TestBaselineAutoChoosesNone…).
		level := r.Settings.Alpha / float64(maxOrder+1)
		ch, err := svd.ChooseBaselineOrderObserved(d, in.dq, in.basis, f, r.Axis, in.col, in.missing, kf, maxOrder, level)
		if err != nil {
			return fmt.Errorf("baseline: %w", err)
		}
		order = ch.Order
		r.orderNoise = ch.Noise
		steps := baselineStepsText(ch)
		metric := ""
		if in.col != nil {
			metric = ", each baseline fitted by least squares weighted with the noise"
		}
		r.BaselineReason = fmt.Sprintf("chosen by the extra-sum-of-squares F-test of each order against the one below (one that is not significant alone tested again together with the next) at level %.3g (Draper & Smith 1998; --alpha %g shared by the %d orders tried, Bonferroni), with %d factor(s) besides the baseline%s%s: %s", level, r.Settings.Alpha, maxOrder+1, kf, metric, axisNoiseText(ch.Noise), strings.Join(steps, ", "))
		if order != maxOrder {
			in.rebuild = nil // d's last use
			if rep, cr, err = chemicalRank(r, d, f, order, in, r.Mode == mcr.Species); err != nil {
				return fmt.Errorf("rank: %w", err)
			}
			if order < 0 && hasBaselineFactor(cr) {
				// The F-test found no baseline needed beside the factors
				// above the noise with the cubic taken out: they carry the
				// smooth shapes (the polynomials added nothing beside
				// them). Calling some of them a baseline now would leave
				// them to no model, their change unfitted however far
				// above the noise.
				r.noBaselineModel = fmt.Sprintf("the F-test found none needed beside the %d factor(s) above the noise", kf)
				if rep, cr, err = chemicalRank(r, d, f, order, in, r.Mode == mcr.Species); err != nil {
					return fmt.Errorf("rank: %w", err)
				}
			}
		}
	} else if maxOrder >= 0 {
		r.BaselineReason = "as asked (--baseline " + r.Settings.Baseline + ")"
	}
	r.BaselineOrder = order
	if order >= 0 {
		labelProjectedCount(rep, order)
	}
	r.Rank, r.Chemical = rep, cr
	return nil
}

// hasBaselineFactor says whether the classification set a factor aside as
// a baseline.
func hasBaselineFactor(cr *svd.ChemicalRank) bool {
	return slices.ContainsFunc(cr.Nuisance, func(nf svd.NuisanceFactor) bool { return nf.Kind == svd.NuisanceBaseline })
}

// smoothCountedNote says which counted factors are as smooth as a
// baseline across the axis (svd.NuisanceOptions.NoBaselineModel), why no
// baseline model takes them, and what would tell them apart; "" when none.
func smoothCountedNote(r *Result) string {
	cr, what := r.Chemical, "factor"
	if cr == nil || len(cr.Smooth) == 0 {
		cr, what = r.DiffChemical, "factor of the differences"
	}
	if cr == nil || len(cr.Smooth) == 0 || len(r.Axis) == 0 {
		return ""
	}
	var each []string
	for _, sf := range cr.Smooth {
		e := fmt.Sprintf("%s %d (%.3g %% of the signal, %.0f %% a polynomial of order ≤ 3", what, sf.Factor, sf.SharePercent, 100*sf.PolyShare)
		if sf.EdgeTimes > 0 {
			e += fmt.Sprintf(", %.3g times the noise edge", sf.EdgeTimes)
		}
		each = append(each, e+")")
	}
	lo, hi := slices.Min(r.Axis), slices.Max(r.Axis)
	span := fmt.Sprintf("%.6g–%.6g", lo, hi)
	if r.AxisName == "wavenumber" {
		span += " cm⁻¹"
	} else if r.AxisName != "" {
		span += " on the " + r.AxisName + " axis"
	}
	them, they := "them", "they are"
	if len(each) == 1 {
		them, they = "it", "it is"
	}
	return fmt.Sprintf("the change stands above the noise but is as smooth as a baseline across the axis: %s; on %d points over %s a band about as wide as the window cannot be told from a baseline drift by its shape, and no baseline model takes %s (%s), so %s counted and resolved as a component, which may be drift rather than chemistry; widen --region to take in the bands' wings and the baseline on either side to tell them apart",
		strings.Join(each, "; "), len(r.Axis), span, them, r.noBaselineModel, they)
}

// baselineStepsText gives each test of the order's choice with its p-value:
// "offset p = 0.053", and a joint test "offset and linear together p = …".
func baselineStepsText(ch *svd.BaselineChoice) []string {
	var steps []string
	for _, st := range ch.Steps[1:] {
		name := baselineName(st.Order)
		if st.Orders == 2 {
			name = baselineName(st.Order-1) + " and " + name + " together"
		}
		steps = append(steps, fmt.Sprintf("%s %s", name, pvalue.Text(st.Significance)))
	}
	return steps
}

// labelProjectedCount says in the noise floor's evidence that it counted the
// singular values of the data with the baseline taken out, which
// singular_values.csv lists in columns of their own beside those of the data
// as given: the two counts differ by up to order + 1 (Cauchy's interlacing
// theorem; catalyst-1.00: 28 and 29), and a reader comparing them would
// otherwise see a contradiction.
func labelProjectedCount(rep *svd.RankReport, order int) {
	for i, c := range rep.Criteria {
		if c.Name == svd.CriterionNoiseFloor {
			rep.Criteria[i].Detail += fmt.Sprintf("; counted with the baseline (%s) taken out: singular_values.csv's columns singular_value_without_baseline and above_noise_edge_without_baseline, while its above_noise_edge counts the data as given", baselineName(order))
		}
	}
}

// axisNoiseText says how the baseline test counted noise correlated along the
// axis; empty for white noise, whose test is the plain one.
func axisNoiseText(a svd.AxisNoise) string {
	if !(a.Inflation > 1) {
		return ""
	}
	return fmt.Sprintf("; the residual is correlated along the axis (lag-1 autocorrelation %.2f: neighbouring points share noise, so a sum over many of them varies %.3g times as much as over independent points, the long-run variance), so its %d points count as %.0f independent ones (Bayley & Hammersley 1946; the sum by Geyer 1992)", a.Lag1, a.Inflation, a.Points, a.Effective)
}

// nuisanceAdvice says what the factors that are not chemistry look like.
func nuisanceAdvice(r *Result) {
	cr := r.Chemical
	if cr == nil {
		return
	}
	said := map[string]bool{}
	for _, nf := range cr.Nuisance {
		if nf.Kind == svd.NuisancePattern {
			continue // has its own advice
		}
		r.Advice = append(r.Advice, sharedMinorAdvice(r, nf.Factor, said)...)
		r.Advice = append(r.Advice, fmt.Sprintf("factor %d (%.2g %% of the signal) is not counted as a species: %s%s%s", nf.Factor, nf.SharePercent, nf.Looks, spectraTimes(r, nf.Spectra), minorAdvice(r, nf.Factor)))
	}
	counted := "a species"
	if r.Mode == mcr.Reactions {
		counted = "a reaction"
	}
	for _, nf := range r.MinorSpecies {
		r.Advice = append(r.Advice, sharedMinorAdvice(r, nf.Factor, said)...)
		r.Advice = append(r.Advice, fmt.Sprintf("factor %d (%.2g %% of the signal) is counted as %s although its size alone would not count it%s", nf.Factor, nf.SharePercent, counted, minorAdvice(r, nf.Factor)))
	}
	if k := cr.NoiseLike - cr.NoiseWhite; k > 0 {
		r.Notes = append(r.Notes, fmt.Sprintf("%d factor(s) above the white-noise level have a time vector as white as noise and a spectrum correlated along the axis: noise correlated along the axis (instrument smoothing or interpolation), not counted", k))
	}
	if cr.NoiseWhite > 0 {
		r.Notes = append(r.Notes, fmt.Sprintf("%d factor(s) just above the white-noise level are white both in time and along the axis: noise, not counted; the noise level the edge is set from reads a little low", cr.NoiseWhite))
	}
	if cr.Unexamined > 0 && cr.UnexaminedMinor {
		r.Notes = append(r.Notes, fmt.Sprintf("%d more factor(s) lie above the noise threshold beyond the %d examined (%d in all): they were not classified, but the largest of them carries %.2g %% of the signal of the smallest counted component, below the %.0f %% under which a smooth factor is minor, so the count does not depend on them; so many factors above the white-noise level come from noise correlated along the axis or from a noise level set too low", cr.Unexamined, cr.Examined, cr.Unexamined+cr.Examined, 100*cr.UnexaminedShare, 100*svd.MinorEnergy))
	}
}

// spectraTimes names the spectra (rows) an outlier factor lives in by their times,
// " (at t = 92, 131 s)"; in a stack by experiment, since each experiment's times start
// again at 0: " (at t = 0, 22 s in experiment 1; 0, 292 s in experiment 2)". "" for none.
func spectraTimes(r *Result, rows []int) string {
	if len(rows) == 0 {
		return ""
	}
	stack := len(r.Experiments) > 1 && len(r.ExpOfRow) == len(r.Times)
	var parts, ts []string
	for k, i := range rows {
		ts = append(ts, output.Float(r.Times[i]))
		if !stack {
			continue
		}
		// rows ascend, so an experiment's rows are together.
		if e := r.ExpOfRow[i]; k+1 == len(rows) || r.ExpOfRow[rows[k+1]] != e {
			parts = append(parts, fmt.Sprintf("%s s in experiment %d", strings.Join(ts, ", "), e+1))
			ts = nil
		}
	}
	if !stack {
		return " (at t = " + strings.Join(ts, ", ") + " s)"
	}
	return " (at t = " + strings.Join(parts, "; ") + ")"
}

// SetAside is one spectrum set aside (weight zero): an outlier or a --drop.
type SetAside struct {
	Row    int
	Reason string
}

// parseDrops finds the rows --drop names: a time in seconds (nearest spectrum within
// 1e-6 relative) or a file name (base name, as listed in the folder).
func parseDrops(r *Result) ([]SetAside, error) {
	var out []SetAside
	seen := map[int]bool{}
	for _, v := range r.Settings.Drops {
		row := -1
		if t, err := strconv.ParseFloat(strings.TrimSpace(v), 64); err == nil {
			for i, ti := range r.Times {
				if math.Abs(ti-t) <= 1e-6*math.Max(1, math.Abs(t)) {
					row = i
					break
				}
			}
		}
		if row < 0 {
			for _, e := range r.Experiments {
				for i, name := range e.Series.Names {
					if name == v || filepath.Base(name) == filepath.Base(v) {
						row = e.FirstRow + i
					}
				}
			}
		}
		if row < 0 && leftOut(r, v) {
			continue // no spectrum of the series: left out of its folder, with a note
		}
		if row < 0 {
			return nil, usage("--drop %s: no spectrum has that time (s) or file name; give a time from the times table or a file name", v)
		}
		if !seen[row] {
			seen[row] = true
			out = append(out, SetAside{Row: row, Reason: "dropped by hand (--drop " + v + ")"})
		}
	}
	return out, nil
}

// leftOut says a folder left out the file --drop v names before reading
// its times (spectra.FolderOptions.Drop).
func leftOut(r *Result, v string) bool {
	for _, e := range r.Experiments {
		if slices.Contains(e.Series.Left, filepath.Base(v)) {
			return true
		}
	}
	return false
}

// imputeRows replaces the rows set aside by the model C Sᵀ (+ B Pᵀ): a row equal to its
// fit has zero residual and so no weight in the next fit, the expectation step for
// missing rows (Dempster, Laird & Rubin, J. R. Stat. Soc. B 1977; for PCA with missing
// values Walczak & Massart, Chemom. Intell. Lab. Syst. 2001). Without a model yet
// (model nil), a row takes the mean of its kept neighbours in the same experiment.
func imputeRows(r *Result, rows []SetAside, res *mcr.Result, shapes *mat.Dense) {
	_, m := r.D.Dims()
	for _, sa := range rows {
		i := sa.Row
		vals := make([]float64, m)
		if res != nil {
			for j := 0; j < m; j++ {
				v := 0.0
				for a := 0; a < r.Components; a++ {
					v += res.C.At(i, a) * res.S.At(j, a)
				}
				if res.Baseline != nil && shapes != nil {
					_, nb := shapes.Dims()
					for q := 0; q < nb; q++ {
						v += res.Baseline.At(i, q) * shapes.At(j, q)
					}
				}
				vals[j] = v
			}
		} else {
			e := r.Experiments[r.ExpOfRow[i]]
			var nb []int
			for _, di := range []int{-1, 1} {
				for k := i + di; k >= e.FirstRow && k < e.FirstRow+e.Rows; k += di {
					if !setAside(rows, k) && !setAside(r.SetAside, k) {
						nb = append(nb, k)
						break
					}
				}
			}
			for _, k := range nb {
				for j, v := range r.D.RawRowView(k)[:m] {
					vals[j] += v / float64(len(nb))
				}
			}
		}
		r.D.SetRow(i, vals)
	}
}

func setAside(rows []SetAside, i int) bool {
	for _, sa := range rows {
		if sa.Row == i {
			return true
		}
	}
	return false
}

// resolveNuisance runs ALS with the baseline terms, sets outlier spectra aside and
// refits, and tests the minor factors (recording in st the rows it fills). It returns the
// result with its baseline, the data it was fitted to and the baseline shapes (nil
// without a baseline), which withoutBaseline takes out.
func resolveNuisance(r *Result, data mcr.Data, c0 *mat.Dense, opt mcr.Options, st *minorState, log io.Writer) (*mcr.Result, mcr.Data, *mat.Dense, error) {
	var shapes *mat.Dense
	if r.BaselineOrder >= 0 {
		shapes = svd.Legendre(r.Axis, r.BaselineOrder)
		opt.Baseline = shapes
		opt.BaselineAnchors = baselineAnchors(r)
	}
	res, err := startALS(r, data, c0, opt)
	if err != nil {
		return nil, nil, nil, explainResolveError(r, err)
	}
	if len(r.SetAside) > 0 || !r.Settings.KeepOutliers {
		if res, data, shapes, err = setAsideOutliers(r, data, c0, res, shapes, opt, st, log); err != nil {
			return nil, nil, nil, err
		}
		// The screen may have chosen the baseline's order again on the
		// spectra kept (screenRound): the fits below take its shapes.
		opt.Baseline, opt.BaselineAnchors = shapes, nil
		if shapes != nil {
			opt.BaselineAnchors = baselineAnchors(r)
		}
	}
	opt.AsideRows = asideList(r)
	if keptNoise(r, log) {
		if res, data, err = refitKeptNoise(r, data, res, shapes, opt, log); err != nil {
			return nil, nil, nil, err
		}
	}
	chosen := r.BaselineOrder
	if res, data, shapes, err = raiseBaselineHeld(r, data, res, shapes, opt, log); err != nil {
		return nil, nil, nil, err
	}
	if r.BaselineOrder != chosen {
		opt.BaselineAnchors = baselineAnchors(r) // raised: free in every spectrum
	}
	opt.Baseline = shapes
	testMinor(r, data, res, opt, log)
	return res, data, shapes, nil
}

// baselineAnchors marks the first spectrum of each experiment, where the
// fitted baseline is zero: it is the drift since the reference state
// (mcr.Options.BaselineAnchors).
func baselineAnchors(r *Result) []bool {
	if r.BaselineHeld {
		return nil // a background from the first spectrum on (raiseBaselineHeld)
	}
	out := make([]bool, len(r.Times))
	for _, e := range r.Experiments {
		if e.Rows > 0 {
			out[e.FirstRow] = true
		}
	}
	return out
}

// screenRounds bounds the outlier screen's rounds (setAsideOutliers): each
// round after the first tests the fit made without the spectra set aside so
// far. Gas lines in two spectra stood 4.3 and 6.2 times the typical residual
// once a bubble (10.2 times) was set aside, and were not found beside it.
const screenRounds = 3

// setAsideOutliers sets aside the spectra the outlier test finds (and those
// --drop named) and resolves again without them, then tests the new fit
// again, up to screenRounds times: one large outlier pulls the fit and hides
// smaller ones (masking; Rousseeuw & Leroy, Robust Regression and Outlier
// Detection, 1987, ch. 6), which the fit made without it shows.
func setAsideOutliers(r *Result, data mcr.Data, c0 *mat.Dense, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, st *minorState, log io.Writer) (*mcr.Result, mcr.Data, *mat.Dense, error) {
	if r.Settings.KeepOutliers {
		if len(r.SetAside) == 0 {
			return res, data, shapes, nil
		}
		return screenRound(r, data, c0, res, shapes, opt, st, nil, log)
	}
	for round := 0; round < screenRounds; round++ {
		found := findOutliers(r, data, res, shapes)
		if len(found) == 0 && (round > 0 || len(r.SetAside) == 0) {
			break
		}
		var err error
		if res, data, shapes, err = screenRound(r, data, c0, res, shapes, opt, st, found, log); err != nil {
			return nil, nil, nil, err
		}
	}
	return res, data, shapes, nil
}

// screenRound sets aside the spectra found (besides those already in
// r.SetAside) and resolves again without them; with --baseline auto the
// order is chosen again on the spectra kept (rechooseBaseline). A spectrum is
// kept aside only if it stays far from the fit made without it: a fit pulled
// by a bubble leaves the spectra unlike the bubble's (the first, before the
// reaction, with --baseline offset) far as well, and those come back.
func screenRound(r *Result, data mcr.Data, c0 *mat.Dense, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, st *minorState, found []SetAside, log io.Writer) (*mcr.Result, mcr.Data, *mat.Dense, error) {
	r.SetAside = append(r.SetAside, found...)
	rememberAside(r)
	opt.AsideRows = asideList(r)
	before := r.BaselineOrder
	if len(found) > 0 {
		shapes = rechooseBaseline(r, data, res, shapes, log)
		opt.Baseline = shapes
		opt.BaselineAnchors = baselineAnchors(r)
	}
	rechosen := r.BaselineOrder != before
	fmt.Fprintf(log, "setting %d spectrum(s) aside and resolving again\n", len(r.SetAside))
	st.keep(r.D, r.SetAside)
	orig := rowsOf(r.D, found)
	if rechosen {
		// The fit that found them has a baseline of the other order: its
		// rows are no model of these (imputed from it, three bubble spectra
		// left a weighted lack of fit of 22 % against 0.9 % imputed from
		// their neighbours).
		imputeRows(r, r.SetAside, nil, nil)
	} else {
		imputeRows(r, r.SetAside, res, shapes)
		// A row without data keeps, through every refilling, the
		// concentrations it was first filled with (the expectation step
		// has nothing to move them), and the fit that found it had bent
		// them to fit it: a bubble's stayed at 0.70 of the isocyanate
		// between neighbours at 0.10, in profiles.csv. Its neighbours
		// in time are the start a spectrum dropped by hand gets.
		imputeRows(r, found, nil, nil)
	}
	var err error
	if data, err = refreshData(r, data); err != nil {
		return nil, nil, nil, err
	}
	// One warm start from the fit that found them: the rows set aside now
	// equal that fit, so they pull on nothing. With a baseline of another
	// order that fit is no start: the resolution starts again as at first.
	if rechosen {
		res, err = startALS(r, data, c0, opt)
	} else {
		res, err = mcr.Resolve(data, res.C, opt)
	}
	if err != nil {
		return nil, nil, nil, explainResolveError(r, err)
	}
	if res, data, err = refillSetAside(r, data, res, shapes, opt, log); err != nil {
		return nil, nil, nil, err
	}
	aside := len(r.SetAside)
	if !bringBack(r, data, res, shapes, found, orig, opt) {
		return res, data, shapes, nil
	}
	if rechosen {
		broughtBackAfterChoice(r, aside, aside-len(r.SetAside))
	}
	fmt.Fprintf(log, "%d spectrum(s) set aside are near the fit without them: resolving again with them\n", len(found)-countFound(r, found))
	opt.AsideRows = asideList(r)
	if data, err = refreshData(r, data); err != nil {
		return nil, nil, nil, err
	}
	if res, err = mcr.Resolve(data, res.C, opt); err != nil {
		return nil, nil, nil, explainResolveError(r, err)
	}
	if res, data, err = refillSetAside(r, data, res, shapes, opt, log); err != nil {
		return nil, nil, nil, err
	}
	return res, data, shapes, nil
}

// refillSetAside fills the rows set aside from the fit res and resolves
// again, warm, until no filled value moves by more than imputeTol of its
// noise or after refinePasses resolutions: expectation–maximisation for
// missing rows (Dempster, Laird & Rubin, J. R. Stat. Soc. B 1977), as
// mcr.RefineMissing does for blind points. Filled once, from the fit that
// found them, the rows kept that fit's spectra: a fit pulled by a CO₂ puff
// and two bubbles stayed pulled, and the five spectra before the reaction,
// which it fitted worst, stayed aside as outliers (12.8 times the typical
// residual, against the fit made "without" them).
func refillSetAside(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, log io.Writer) (*mcr.Result, mcr.Data, error) {
	if len(r.SetAside) == 0 {
		return res, data, nil
	}
	opt.AsideRows = asideList(r)
	row, col := weightsOfData(data)
	sd := plainSigma(r)
	// Short resolutions between fillings: a full one each time crept for
	// its 1000 iterations along the flat valley an offset baseline leaves
	// (30 passes took 32 s on 90 × 1556); filling more often reaches the
	// same fixed point.
	final := opt.MaxIter
	opt.MaxIter = refillIter
	for p := 1; p <= refillPasses; p++ {
		before := rowsOf(r.D, r.SetAside)
		imputeRows(r, r.SetAside, res, shapes)
		moved := 0.0
		for k, sa := range r.SetAside {
			for j, v := range r.D.RawRowView(sa.Row)[:len(before[k])] {
				if row != nil {
					sd = 1 / math.Sqrt(row[sa.Row]*col[j])
				}
				if sd > 0 {
					moved = math.Max(moved, math.Abs(v-before[k][j])/sd)
				}
			}
		}
		if moved <= imputeTol {
			fmt.Fprintf(log, "spectra set aside refilled from the fit without them (%d passes)\n", p)
			break
		}
		var err error
		if data, err = refreshData(r, data); err != nil {
			return nil, nil, err
		}
		if res, err = mcr.Resolve(data, res.C, opt); err != nil {
			return nil, nil, explainResolveError(r, err)
		}
	}
	opt.MaxIter = final
	res, err := mcr.Resolve(data, res.C, opt)
	if err != nil {
		return nil, nil, explainResolveError(r, err)
	}
	return res, data, nil
}

// refillPasses and refillIter bound refillSetAside: fillings, and the
// iterations of the resolution after each.
const (
	refillPasses = 60
	refillIter   = 20
)

// findOutliers runs the outlier test on the fit res, the spectra already set
// aside skipped.
func findOutliers(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense) []SetAside {
	skip := make([]bool, len(r.Times))
	for _, sa := range r.SetAside {
		skip[sa.Row] = true
	}
	var found []SetAside
	for _, o := range mcr.FindOutliersIn(r.D, res.C, res.S, res.Baseline, shapes, outlierInput(r, data, skip)) {
		found = append(found, SetAside{Row: o.Row, Reason: o.Reason})
	}
	return found
}

// bringBack tests the spectra found (their rows orig) again, against the
// spectra of the fit res made without them, each spectrum's own
// concentrations fitted to it under the fit's own constraints (refitRows): a deletion residual, as in Cook &
// Weisberg, Residuals and Influence in Regression, 1982. Those still far stay aside,
// with the reason this test gives; the others are written back into r.D and
// leave r.SetAside. It reports whether any came back.
func bringBack(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, found []SetAside, orig [][]float64, opt mcr.Options) bool {
	if len(found) == 0 {
		return false
	}
	imputed := rowsOf(r.D, found)
	for k, sa := range found {
		r.D.SetRow(sa.Row, orig[k])
	}
	var others []SetAside
	for _, sa := range r.SetAside {
		if !setAside(found, sa.Row) {
			others = append(others, sa)
		}
	}
	saved := r.SetAside
	r.SetAside = others
	still := findOutliers(r, data, refitRows(r, data, res, shapes, found, opt), shapes)
	r.SetAside = saved
	back := false
	for k, sa := range found {
		reason, stays := "", false
		for _, o := range still {
			if o.Row == sa.Row {
				reason, stays = o.Reason, true
			}
		}
		if !stays {
			back = true
			continue
		}
		r.D.SetRow(sa.Row, imputed[k])
		for i := range r.SetAside {
			if r.SetAside[i].Row == sa.Row {
				r.SetAside[i].Reason = reason
			}
		}
	}
	if back {
		kept := r.SetAside[:0:0]
		for _, sa := range r.SetAside {
			if !setAside(found, sa.Row) || setAside(still, sa.Row) {
				kept = append(kept, sa)
			}
		}
		r.SetAside = kept
	}
	return back
}

// refitRows is res with the concentrations and baseline coefficients of the
// rows found fitted to those rows of r.D on the spectra and baseline shapes
// of res held (weighted by the column weights of data), under the
// constraints opt puts on the profiles (mcr.FitRows): in the fit res those
// rows were imputed from an earlier fit, which would hold them where that
// fit put them. Fitted free of the closure and of non-negativity, a bubble
// (every band a fifth lower, a scatter slope the baseline followed) came
// back as near the fit, and stayed in it 69 times the noise.
func refitRows(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, found []SetAside, opt mcr.Options) *mcr.Result {
	var p *mat.Dense
	if shapes != nil && res.Baseline != nil {
		p = shapes
	}
	rows := make([]int, len(found))
	for k, sa := range found {
		rows[k] = sa.Row
	}
	_, col := weightsOfData(data)
	c, b, err := mcr.FitRows(r.D, rows, res.S, p, col, opt)
	if err != nil {
		return res // the fit's own rows: the test then reads them as they were
	}
	out := *res
	out.C = mat.DenseCopyOf(res.C)
	if p != nil {
		out.Baseline = mat.DenseCopyOf(res.Baseline)
	}
	for k, i := range rows {
		out.C.SetRow(i, c.RawRowView(k))
		if p != nil {
			out.Baseline.SetRow(i, b.RawRowView(k))
		}
	}
	return &out
}

// countFound is how many of found are still set aside.
func countFound(r *Result, found []SetAside) int {
	c := 0
	for _, sa := range found {
		if setAside(r.SetAside, sa.Row) {
			c++
		}
	}
	return c
}

// rowsOf copies the rows of d the spectra name.
func rowsOf(d *mat.Dense, rows []SetAside) [][]float64 {
	_, m := d.Dims()
	out := make([][]float64, len(rows))
	for k, sa := range rows {
		out[k] = append([]float64(nil), d.RawRowView(sa.Row)[:m]...)
	}
	return out
}

// rechooseBaseline chooses the baseline order again (--baseline auto) on the
// spectra kept, once the outlier test has set some aside: the order was first
// chosen on every spectrum, and a spectrum lifted or scattered as a whole (a
// bubble: ν⁴ scatter in a few spectra) passes the F-test for every order as a
// baseline the others do not have. When the order changes, the fit's baseline
// coefficients are cut to (or padded with zeros to) the new order, which the
// nested Legendre shapes allow, and the new shapes are returned; the fit is
// then resolved again with them by the caller.
func rechooseBaseline(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, log io.Writer) *mat.Dense {
	maxOrder, auto, err := parseBaseline(r.Settings.Baseline)
	if err != nil || !auto || maxOrder < 0 || r.BaselineOrder > maxOrder {
		return shapes
	}
	kept, rows := keptScaledRows(r, data)
	_, m := r.D.Dims()
	_, col := weightsOfData(data)
	// The factors the first choice fitted besides the baseline, less the
	// outlier spectra's now set aside: the same model, so that the two
	// choices differ by the spectra kept and by nothing else.
	kf := r.orderFactors - outliersSetAside(r)
	if rows < 5 || maxOrder+kf+3 >= m {
		return shapes
	}
	level := r.Settings.Alpha / float64(maxOrder+1)
	ch, err := svd.ChooseBaselineOrderObserved(kept, nil, nil, nil, r.Axis, col, keptBlind(r, data), kf, maxOrder, level)
	if err != nil || ch.Order == r.BaselineOrder {
		return shapes
	}
	steps := baselineStepsText(ch)
	metric := ""
	if col != nil {
		metric = ", each baseline fitted by least squares weighted with the noise"
	}
	fmt.Fprintf(log, "baseline chosen again without the spectra set aside: %s (was %s)\n", baselineName(ch.Order), baselineName(r.BaselineOrder))
	r.BaselineReason = fmt.Sprintf("%s (first %s, with them; spectra set aside lifted or curved as a whole pass for a baseline the others lack), by the extra-sum-of-squares F-test of each order against the one below (one that is not significant alone tested again together with the next) at level %.3g (Draper & Smith 1998; --alpha %g shared by the %d orders tried, Bonferroni) on the %d spectra kept, with %d factor(s) besides the baseline%s%s: %s", rechosenWords(len(r.SetAside)), baselineName(r.BaselineOrder), level, r.Settings.Alpha, maxOrder+1, rows, kf, metric, axisNoiseText(ch.Noise), strings.Join(steps, ", "))
	r.BaselineOrder = ch.Order
	r.orderNoise = ch.Noise
	res.Baseline = resizedColumns(res.Baseline, ch.Order+1)
	return svd.Legendre(r.Axis, ch.Order)
}

// outliersSetAside counts the outlier factors of the first baseline choice
// whose spectra are all set aside now: those factors left the data with them.
// One whose spectra are still in (gas lines on two spectra, when a bubble was
// the only one set aside) is still a factor of the data, and leaving it out
// of the model put its lines into the residual that judges the baseline: with
// a bubble set aside and two spectra of gas lines kept, the real urethane
// series' cubic baseline went linear (poly:2 at p = 0.14), and a smooth factor
// the cubic fits became a species.
func outliersSetAside(r *Result) int {
	k := 0
	for _, rows := range r.orderOutliers {
		if len(rows) > 0 && !slices.ContainsFunc(rows, func(i int) bool { return !setAside(r.SetAside, i) }) {
			k++
		}
	}
	return k
}

// rechosenWords begin the reason of a baseline order chosen again once
// aside spectra were set aside (rechooseBaseline).
func rechosenWords(aside int) string {
	return fmt.Sprintf("chosen again once %d spectrum(s) were set aside", aside)
}

// broughtBackAfterChoice says in r.BaselineReason that back of the aside
// spectra the order was chosen without came back since (bringBack), so
// that its count and the list of spectra set aside agree.
func broughtBackAfterChoice(r *Result, aside, back int) {
	if back <= 0 {
		return
	}
	was := rechosenWords(aside)
	r.BaselineReason = strings.Replace(r.BaselineReason, was, fmt.Sprintf("%s, %d of them since brought back as near the fit without them (%d set aside now)", was, back, aside-back), 1)
}

// keptScaledRows is r.D without the rows set aside, scaled by the noise weights of
// data when it has them (√a_i d_ij √b_j), and the number of its rows.
func keptScaledRows(r *Result, data mcr.Data) (*mat.Dense, int) {
	n, m := r.D.Dims()
	row, col := weightsOfData(data)
	var keep []int
	for i := 0; i < n; i++ {
		if !setAside(r.SetAside, i) {
			keep = append(keep, i)
		}
	}
	out := mat.NewDense(max(len(keep), 1), m, nil)
	for k, i := range keep {
		dst, src := out.RawRowView(k), r.D.RawRowView(i)[:m]
		for j, v := range src {
			if row != nil && col != nil {
				v *= math.Sqrt(row[i]) * math.Sqrt(col[j])
			}
			dst[j] = v
		}
	}
	return out, len(keep)
}

// blindRowsKept lists the blind channels of each spectrum not set aside, in
// row order; nil when nothing is blind.
func blindRowsKept(r *Result) [][]int {
	if r.Blind == nil || r.Blind.Count == 0 {
		return nil
	}
	var rows [][]int
	for i, cols := range r.Blind.Rows {
		if !setAside(r.SetAside, i) {
			rows = append(rows, cols)
		}
	}
	return rows
}

// keptBlind is what the baseline's test leaves out of keptScaledRows's
// matrix, row by row: every blind point when the noise weights' low-rank
// model filled them (its rank-k fits leave them as they are), else only the
// channels blind in every spectrum, whose placeholders are not data.
func keptBlind(r *Result, data mcr.Data) [][]int {
	rows := blindRowsKept(r)
	if rows == nil {
		return nil
	}
	if row, col := weightsOfData(data); row == nil || col == nil {
		return everywhereBlind(rows)
	}
	return rows
}

// everywhereBlind keeps of the blind points rows those of the channels blind
// in every row (nil when there are none).
func everywhereBlind(rows [][]int) [][]int {
	if len(rows) == 0 {
		return nil
	}
	var all []int
	for _, j := range rows[0] {
		every := true
		for _, cols := range rows[1:] {
			if k := sort.SearchInts(cols, j); k == len(cols) || cols[k] != j {
				every = false
				break
			}
		}
		if every {
			all = append(all, j)
		}
	}
	if all == nil {
		return nil
	}
	out := make([][]int, len(rows))
	for i := range out {
		out[i] = all
	}
	return out
}

// resizedColumns is x with its first c columns, padded with zeros (nil for
// c ≤ 0 or x nil).
func resizedColumns(x *mat.Dense, c int) *mat.Dense {
	if x == nil || c <= 0 {
		return nil
	}
	n, k := x.Dims()
	out := mat.NewDense(n, c, nil)
	for i := 0; i < n; i++ {
		copy(out.RawRowView(i), x.RawRowView(i)[:min(k, c)])
	}
	return out
}

// outlierInput is what the outlier test needs besides the fit: with noise
// weights the residual is read in units of its noise (σ = 1), without them
// against the rank step's σ.
func outlierInput(r *Result, data mcr.Data, skip []bool) mcr.OutlierInput {
	in := mcr.OutlierInput{Axis: r.Axis, Wavenumbers: spectra.Wavenumbers(r.AxisName, r.Axis), Sigma: plainSigma(r), Skip: skip}
	if row, col := weightsOfData(data); row != nil && col != nil {
		in.Row, in.Col, in.Sigma = row, col, 1
	}
	return in
}

// withoutBaseline leaves r.D without the baseline of res and returns the species-only
// result and the data the later steps (checks, bands, kinetics) work on.
func withoutBaseline(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense) (*mcr.Result, mcr.Data) {
	if shapes != nil && res.Baseline != nil {
		r.BaselineProfiles = res.Baseline
		r.BaselineShapes = shapes
		// The figures count the spectra kept (fitFigures), and so does the
		// checks' scale, as their lack of fit does (refreshFit).
		r.DataSS = observedSquares(r.D, unobserved(r))
		given := r.DataSS
		if row, col := weightsOfData(data); row != nil {
			given = data.FrobeniusSq()
			if rows := asideList(r); rows != nil {
				_, tot := rowSums(r.D, res, rows, row, col)
				given -= tot
			}
		}
		subtractBaselineInPlace(r.D, res.Baseline, shapes)
		switch in := data.(type) {
		case mcr.Dense:
			data = mcr.Dense{D: r.D}
		case mcr.WeightedDense:
			data = mcr.WeightedDense{D: r.D, Row: in.Row, Col: in.Col}
		default:
			data = mcr.LessBaseline{Data: data, B: res.Baseline, P: shapes}
		}
		// The fit's figures are now those of the data without the baseline,
		// in the metric ALS works in (weighted with the noise weights), which
		// the checks and their refits compare with.
		total := refreshFit(data, r, res)
		if total > 0 && given > 0 {
			r.checkScale = math.Sqrt(total / given)
		}
	}
	return res, data
}

// observedSquares is Σ d²_ij over the points of d that missing does not
// name (every point when it is nil).
func observedSquares(d *mat.Dense, missing func(i, j int) bool) float64 {
	n, m := d.Dims()
	ss := 0.0
	for i := range n {
		for j, v := range d.RawRowView(i)[:m] {
			if missing == nil || !missing(i, j) {
				ss += v * v
			}
		}
	}
	return ss
}

// refreshData rebuilds the ALS data after rows of r.D changed.
// Weighted data stay weighted with the same weights.
func refreshData(r *Result, data mcr.Data) (mcr.Data, error) {
	row, col := weightsOfData(data)
	switch data.(type) {
	case mcr.Compressed, mcr.WeightedCompressed:
	default:
		if row != nil {
			return mcr.WeightedDense{D: r.D, Row: row, Col: col}, nil
		}
		return mcr.Dense{D: r.D}, nil
	}
	k := r.Components
	src := r.D
	if row != nil {
		src = svd.Scale(r.D, row, col) // the compressed weighted form factors √A D √B
	}
	f, err := svd.Decompose(src, svd.DecomposeOptions{MaxFactors: largeFactors, Seed: r.Settings.Seed})
	if err != nil {
		return nil, fmt.Errorf("factor analysis after setting spectra aside: %w", err)
	}
	rr := min(len(f.S), k+8+max(r.BaselineOrder+1, 0))
	if row != nil {
		return mcr.WeightedCompressed{U: sliceCols(f.U, rr), Sigma: f.S[:rr], V: sliceCols(f.V, rr), FrobSq: f.FrobeniusSq, Row: row, Col: col}, nil
	}
	return mcr.Compressed{U: sliceCols(f.U, rr), Sigma: f.S[:rr], V: sliceCols(f.V, rr), FrobSq: f.FrobeniusSq}, nil
}

// setAsideSummary lists the spectra set aside for summary.json, the terminal and the
// report.
func setAsideSummary(r *Result) []output.OutlierJSON {
	out := []output.OutlierJSON{}
	for _, sa := range r.SetAside {
		e := r.Experiments[r.ExpOfRow[sa.Row]]
		src := ""
		if i := sa.Row - e.FirstRow; i >= 0 && i < len(e.Series.Names) {
			src = filepath.Base(e.Series.Names[i])
		}
		out = append(out, output.OutlierJSON{Time: round(r.Times[sa.Row]), Experiment: e.Source, Source: src, Reason: sa.Reason})
	}
	return out
}

// nuisanceSummary lists the nuisance factors for summary.json.
func nuisanceSummary(r *Result) []output.NuisanceJSON {
	out := []output.NuisanceJSON{}
	if r.Chemical == nil {
		return out
	}
	for _, nf := range r.Chemical.Nuisance {
		j := output.NuisanceJSON{Factor: nf.Factor, Kind: nf.Kind, Looks: nf.Looks, SharePercent: round(nf.SharePercent), Refit: minorRefitJSON(r, nf.Factor)}
		for _, i := range nf.Spectra {
			if i < len(r.Times) {
				j.TimesS = append(j.TimesS, round(r.Times[i]))
			}
		}
		out = append(out, j)
	}
	return out
}

// writeBaseline writes baseline.csv: each spectrum's baseline coefficients on the
// Legendre polynomials of the axis scaled to [−1, 1] (column P0 is the offset, P1 the
// slope from one end of the axis to the middle, …).
func writeBaseline(r *Result, st *output.Stage) error {
	if r.BaselineProfiles == nil {
		return nil
	}
	_, nb := r.BaselineProfiles.Dims()
	multi := len(r.Experiments) > 1
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	for q := 0; q < nb; q++ {
		h = append(h, fmt.Sprintf("P%d", q))
	}
	t := output.Table{Header: h}
	for i, tm := range r.Times {
		var row []string
		if multi {
			row = append(row, strconv.Itoa(r.ExpOfRow[i]+1))
		}
		row = append(row, output.Float(tm))
		for q := 0; q < nb; q++ {
			row = append(row, output.Float(r.BaselineProfiles.At(i, q)))
		}
		t.Rows = append(t.Rows, row)
	}
	return st.Write("baseline.csv", t.CSV())
}

// weightsOfData returns the noise weights ALS uses on data (nil, nil unweighted).
func weightsOfData(data mcr.Data) (row, col []float64) {
	if w, ok := data.(mcr.Weighted); ok {
		return w.Weights()
	}
	return nil, nil
}

// plainSigma is the per-point noise level of D in its own units, as the outlier test
// compares a spectrum's root-mean-square residual with it and EFA of D its singular
// values: the rank step's σ without weights; with them (the rank's σ is then 1, in units
// of the noise) the root-mean-square noise the noise model gives a typical spectrum,
// √(median_i(1/a_i) · mean_j(1/b_j)) (the expected root-mean-square residual of a
// spectrum fitted to its noise, which is what the outlier test compares).
func plainSigma(r *Result) float64 {
	if !weighted(r) {
		return r.Rank.Sigma
	}
	inv := func(v []float64) []float64 {
		out := make([]float64, 0, len(v))
		for _, x := range v {
			if x > 0 {
				out = append(out, 1/x)
			}
		}
		return out
	}
	cb := inv(r.Weights.Col)
	if len(cb) == 0 {
		return 0
	}
	mean := 0.0
	for _, x := range cb {
		mean += x / float64(len(cb))
	}
	return math.Sqrt(medianOf(inv(r.Weights.Row)) * mean)
}

// experimentBlocks is the first row of each experiment in the stacked
// matrices (D and the differences alike), nil for a single experiment.
func experimentBlocks(r *Result) []int {
	if len(r.Experiments) < 2 {
		return nil
	}
	out := make([]int, len(r.Experiments))
	for i, e := range r.Experiments {
		out[i] = e.FirstRow
	}
	return out
}
