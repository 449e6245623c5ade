package report

import (
	"fmt"
	"image/color"
	"math"
	"runtime"
	"strings"
	"sync"
	"sync/atomic"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
)

// Figures draws every figure the folder's files allow, in reading order.
// A figure whose file is missing is simply absent; one that cannot be drawn
// is reported in problems.
func Figures(f *Folder) (figs []Figure, problems []string) {
	d := drawFigures(figureJobs(f), false, nil, nil)
	return d.figs, d.problems
}

// figureJob builds one figure from view, the part of the folder it reads:
// build is given view alone, so that the figure is the same whenever the
// view is (Predrawn takes a figure drawn ahead on that ground).
type figureJob struct {
	id    string
	view  *Folder
	build func(v *Folder) (*Figure, error)
}

// figureJobs are the figures the folder's files allow, in reading order.
func figureJobs(f *Folder) []figureJob {
	var jobs []figureJob
	if f.Maps != nil {
		if m := f.Maps.Matrices["data"]; m != nil && f.Maps.Matrices["difference"] != nil {
			jobs = append(jobs, onMatrix(f, "fig-absorbance", m, false, func(v *Folder, m *Matrix, ax axisStyle) (*Figure, error) {
				return overlayFigure(v, m, ax, "fig-absorbance", "Absorbance spectra, coloured by time", "absorbance",
					"The absolute absorbance spectra that were resolved (species mode), as measured"+baselineWords(v.Summary)+".")
			}))
		}
		if m := f.inputDifference(); m != nil {
			jobs = append(jobs, onMatrix(f, "fig-input", m, false, func(v *Folder, m *Matrix, ax axisStyle) (*Figure, error) {
				return overlayFigure(v, m, ax, "fig-input", "Difference spectra, coloured by time", "ΔA (absorbance)",
					"Each spectrum minus the reference state: bands that grow are formed, bands that go negative are consumed.")
			}), onMatrix(f, "fig-map", m, false, func(v *Folder, m *Matrix, ax axisStyle) (*Figure, error) {
				return mapFigure(v, m, ax, "fig-map", "Difference spectra as a time × axis map", "ΔA", 1,
					"Blue: absorbance lost; white: no change; vermilion: absorbance gained. Colour limits are ± the largest |ΔA|.")
			}))
		}
	}
	var s Summary
	if f.Summary != nil {
		s = *f.Summary
	}
	tu := f.timeUnitView()
	jobs = append(jobs,
		figureJob{id: "fig-singular", build: singularFigure, view: &Folder{Singular: f.Singular,
			Summary: &Summary{RankEstimate: s.RankEstimate, NoiseEdge: s.NoiseEdge, NoiseSigma: s.NoiseSigma, NoiseWeights: s.NoiseWeights, NoiseSource: s.NoiseSource}}},
		figureJob{id: "fig-efa", build: efaFigure, view: &Folder{EFA: f.EFA, AsRun: tu}},
		figureJob{id: "fig-spectra", view: &Folder{Spectra: f.Spectra, Bands: f.Bands, Intervals: f.Intervals,
			Summary: &Summary{Axis: f.axisName(), ComponentNames: s.ComponentNames, Mode: s.Mode}},
			build: func(v *Folder) (*Figure, error) { return spectraFigure(v, spectralAxis(v.axisName())) }},
		figureJob{id: "fig-profiles", build: profilesFigure, view: &Folder{Profiles: f.Profiles, Bands: f.Bands, Intervals: f.Intervals,
			Kinetics: f.Kinetics, AsRun: tu, Summary: &Summary{ComponentNames: s.ComponentNames, Mode: s.Mode, Closure: s.Closure, Kinetics: s.Kinetics}}},
		figureJob{id: "fig-iterations", build: iterationsFigure, view: &Folder{Iterations: f.Iterations,
			Summary: &Summary{NoiseLackOfFitPercent: s.NoiseLackOfFitPercent, Converged: s.Converged, Iterations: s.Iterations, LackOfFitPercent: s.LackOfFitPercent,
				ResidualToNoise: s.ResidualToNoise, NoiseWeights: s.NoiseWeights, NoiseDegreesOfFreedom: s.NoiseDegreesOfFreedom,
				Spectra: s.Spectra, Points: s.Points, Components: s.Components, BlindPoints: s.BlindPoints}}})
	if f.Vapour != nil {
		jobs = append(jobs, figureJob{id: "fig-vapour", build: vapourFigure, view: &Folder{Vapour: f.Vapour, AsRun: tu}})
	}
	if f.Maps != nil {
		if m := f.Maps.Matrices["residual"]; m != nil {
			jobs = append(jobs, onMatrix(f, "fig-residual-map", m, false, func(v *Folder, m *Matrix, ax axisStyle) (*Figure, error) {
				return mapFigure(v, m, ax, "fig-residual-map", "Residuals D − C Sᵀ as a time × axis map", "residual", 0.995,
					"What the model leaves unexplained. Noise looks like fine speckle; structure along time or at a band means a missing component or a violated constraint. Colour limits are ± the 99.5th percentile of |residual|.")
			}), onMatrix(f, "fig-residual-spectrum", m, true, residualSpectrumFigure))
		}
	}
	return jobs
}

// onMatrix is the job of a figure of matrix m of maps.csv: its view is m
// (as the only matrix, "shown"), the map's axis, the axis name and the
// time unit, and with noise the noise σ.
func onMatrix(f *Folder, id string, m *Matrix, noise bool, draw func(v *Folder, m *Matrix, ax axisStyle) (*Figure, error)) figureJob {
	s := &Summary{Axis: f.axisName()}
	if noise && f.Summary != nil {
		s.NoiseSigma = f.Summary.NoiseSigma
	}
	v := &Folder{Summary: s, AsRun: f.timeUnitView(), Maps: &Maps{Axis: f.Maps.Axis, Matrices: map[string]*Matrix{"shown": m}}}
	return figureJob{id: id, view: v, build: func(v *Folder) (*Figure, error) {
		return draw(v, v.Maps.Matrices["shown"], spectralAxis(v.axisName()))
	}}
}

// drawnFigures is what drawFigures gives: the figures in reading order and
// the problems of those that could not be built; with the files, each
// figure's files (figures/<id>.svg and .png) and the problems of those
// that could not be drawn.
type drawnFigures struct {
	figs         []Figure
	problems     []string
	files        map[string][]byte
	fileProblems []string
}

// drawFigures builds the figures of jobs, several at once: each figure is
// built from the folder alone (read, never changed) by one goroutine, and
// they are collected in reading order, so the figures and problems do not
// depend on which finished first. With files, the same goroutines go on to
// draw each built figure's files (standalone), from its own plots, as the
// figures are done rather than after the last of them; built, when not
// nil, is called on the caller's goroutine with the figures and problems
// once every figure is built, while the files are still being drawn (the
// report's HTML needs the figures only). A figure pre holds for the same
// view (with its files, when files are drawn) is taken as it is.
func drawFigures(jobs []figureJob, files bool, built func(figs []Figure, problems []string), pre *Predrawn) drawnFigures {
	w := queueFigures(jobs, files, pre)
	w.start()
	d := w.collect()
	if built != nil {
		built(d.figs, d.problems)
	}
	w.wg.Wait()
	if files {
		d.files, d.fileProblems = w.files()
	}
	return d
}

// figureSlot is one job's place in drawFigures.
type figureSlot struct {
	fig       *Figure
	err       error
	panicked  any
	done      chan struct{} // closed when fig, err and panicked are set
	svg, pngb []byte
	fileErr   error
	ahead     bool // drawn ahead (pre): nothing to do
}

// figureWork is drawFigures' work: the jobs' slots and the tasks left,
// building figure k being task k and drawing its files task n + k.
type figureWork struct {
	jobs      []figureJob
	res       []figureSlot
	tasks     chan int
	todo      int // the figures to build
	figsBuilt sync.WaitGroup
	wg        sync.WaitGroup // the drawing goroutines
	stop      atomic.Bool    // a figure panicked: draw no more files
}

// queueFigures takes the figures pre drew for the same view and queues
// the building of the others, then (with files) their files.
func queueFigures(jobs []figureJob, files bool, pre *Predrawn) *figureWork {
	n := len(jobs)
	w := &figureWork{jobs: jobs, res: make([]figureSlot, n), tasks: make(chan int, 2*n)}
	w.figsBuilt.Add(n)
	for k := range w.res {
		r := &w.res[k]
		r.done = make(chan struct{})
		if e := pre.match(jobs[k]); e != nil {
			r.fig, r.err, r.svg, r.pngb, r.fileErr, r.ahead = e.fig, e.err, e.svg, e.pngb, e.fileErr, true
			close(r.done)
			w.figsBuilt.Done()
			continue
		}
		w.tasks <- k
		w.todo++
	}
	if files {
		for k := range n {
			if !w.res[k].ahead {
				w.tasks <- n + k
			}
		}
	}
	close(w.tasks)
	return w
}

// start begins the drawing goroutines, one per processor, no more than
// there are figures to build.
func (w *figureWork) start() {
	for range min(runtime.GOMAXPROCS(0), w.todo) {
		w.wg.Add(1)
		go w.work()
	}
}

// work runs tasks until none is left.
func (w *figureWork) work() {
	defer w.wg.Done()
	n := len(w.jobs)
	var s *fileScratch
	for t := range w.tasks {
		if t < n {
			w.build(t)
			continue
		}
		r := &w.res[t-n]
		<-r.done
		if w.stop.Load() || r.fig == nil || r.fig.drawing.draw == nil {
			continue
		}
		if s == nil {
			s = &fileScratch{pix: make([]byte, w.largestBuilt())}
		}
		r.svg, r.pngb, r.fileErr = standalone(*r.fig, s)
	}
}

// build builds figure k. A panic is raised again on the caller
// (collect), as when the figures were built one after another.
func (w *figureWork) build(k int) {
	r := &w.res[k]
	defer func() {
		r.panicked = recover()
		close(r.done)
		w.figsBuilt.Done()
	}()
	r.fig, r.err = w.jobs[k].build(w.jobs[k].view)
}

// largestBuilt is the size in bytes of the largest PNG image of the
// figures built so far (rasterCanvas's): a goroutine makes its image once,
// when it draws its first file, at that size (by then all but the figures
// other goroutines are still building are known) rather than again
// whenever a figure is taller.
func (w *figureWork) largestBuilt() int {
	size := 0
	for k := range w.res {
		select {
		case <-w.res[k].done:
			if fig := w.res[k].fig; fig != nil && fig.drawing.draw != nil && !w.res[k].ahead {
				_, legH := legendLayout(*fig)
				size = max(size, 4*figurePixels(fig.drawing.w)*figurePixels(fig.drawing.h+legH))
			}
		default:
		}
	}
	return size
}

// collect waits for every figure to be built and gives the figures and
// problems in reading order; a figure's panic is raised again here, once
// no more files are drawn.
func (w *figureWork) collect() drawnFigures {
	w.figsBuilt.Wait()
	var d drawnFigures
	for k := range w.res {
		r := &w.res[k] // its files may be being drawn: read only what the figure's building set
		if r.panicked != nil {
			w.stop.Store(true)
			w.wg.Wait()
			panic(r.panicked)
		}
		switch {
		case r.err != nil:
			d.problems = append(d.problems, r.err.Error())
		case r.fig != nil:
			d.figs = append(d.figs, *r.fig)
		}
	}
	return d
}

// files are the figures' files by their names in the folder, and the
// problems of those that could not be drawn; call it once the drawing
// goroutines are done.
func (w *figureWork) files() (files map[string][]byte, problems []string) {
	files = map[string][]byte{}
	for _, r := range w.res {
		switch {
		case r.fig == nil || r.fig.drawing.draw == nil:
		case r.fileErr != nil:
			problems = append(problems, fmt.Sprintf("%s: %v", r.fig.ID, r.fileErr))
		default:
			files["figures/"+r.fig.ID+".svg"] = r.svg
			files["figures/"+r.fig.ID+".png"] = r.pngb
		}
	}
	return files, problems
}

func (f *Folder) axisName() string {
	if f.Spectra != nil && len(f.Spectra.Header) > 0 {
		return f.Spectra.Header[0]
	}
	if f.Summary != nil {
		return f.Summary.Axis
	}
	return ""
}

// baselineWords says that the data shown keep the baseline the resolution
// fitted beside the species ("" when none was).
func baselineWords(s *Summary) string {
	if s == nil || s.Baseline == "" || s.Baseline == "off" {
		return ""
	}
	return fmt.Sprintf(": the fitted baseline (%s) is part of the model, not taken off here", s.Baseline)
}

// inputDifference is the difference matrix: its own entry in species mode,
// the resolved data itself in reactions mode.
func (f *Folder) inputDifference() *Matrix {
	if m := f.Maps.Matrices["difference"]; m != nil {
		return m
	}
	if f.Summary.Mode != "species" {
		return f.Maps.Matrices["data"]
	}
	return nil
}

// components returns the component columns of a table: the summary's names
// where the header has them, else every numeric column after the first
// that is not a bound or the experiment number.
func (f *Folder) components(t *Table, skip int) []int {
	var out []int
	if f.Summary != nil {
		for _, n := range f.Summary.ComponentNames {
			if j := t.Index(n); j >= 0 {
				out = append(out, j)
			}
		}
	}
	if len(out) > 0 {
		return out
	}
	for j := skip; j < len(t.Header); j++ {
		h := strings.ToLower(t.Header[j])
		if h == "experiment" || h == "time" || boundSuffix(h) != "" {
			continue
		}
		if t.Numeric(j) {
			out = append(out, j)
		}
	}
	return out
}

// boundSuffix recognises lower/upper bound columns written as NAME_min,
// NAME_lower, NAME_lo, NAME_low (and max/upper/hi/high), returning "lo" or "hi".
func boundSuffix(h string) string {
	h = strings.ToLower(h)
	for _, s := range []string{"_min", "_lower", "_lo", "_low", "_ci_lo", "_q025", "_minimum"} {
		if strings.HasSuffix(h, s) {
			return "lo"
		}
	}
	for _, s := range []string{"_max", "_upper", "_hi", "_high", "_ci_hi", "_q975", "_maximum"} {
		if strings.HasSuffix(h, s) {
			return "hi"
		}
	}
	return ""
}

// bounds finds NAME_lo/NAME_hi pairs for a component in t (case-insensitive),
// restricted to columns whose name also holds word when word is not "".
func bounds(t *Table, name, word string) (lo, hi int) {
	lo, hi = -1, -1
	if t == nil {
		return
	}
	n := strings.ToLower(name)
	for j, h := range t.Header {
		l := strings.ToLower(h)
		if !strings.HasPrefix(l, n+"_") || (word != "" && !strings.Contains(l, word)) {
			continue
		}
		switch boundSuffix(l) {
		case "lo":
			if lo < 0 {
				lo = j
			}
		case "hi":
			if hi < 0 {
				hi = j
			}
		}
	}
	if lo < 0 || hi < 0 {
		return -1, -1
	}
	return lo, hi
}

func timeLegend(t0, t1 float64, unit string) []LegendItem {
	var items []LegendItem
	for _, q := range []float64{0, 0.25, 0.5, 0.75, 1} {
		tv := t0 + q*(t1-t0)
		items = append(items, LegendItem{Label: "t = " + fmtTime(tv, unit), Colour: ramp(timeRamp, q)})
	}
	return items
}

// overlayFigure draws up to 24 spectra of the first experiment, evenly
// spread in time, coloured from dark (early) to light (late).
func overlayFigure(f *Folder, m *Matrix, ax axisStyle, id, title, ylabel, caption string) (*Figure, error) {
	var rows []int
	for i, e := range m.Experiment {
		if e == m.Experiment[0] {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 {
		return nil, nil
	}
	sel := pick(len(rows), 24)
	p := newPlot("", ylabel)
	ax.apply(p)
	t0, t1 := m.Times[rows[0]], m.Times[rows[len(rows)-1]]
	xlo, xhi := span(f.Maps.Axis)
	hline(p, xlo, xhi, 0, grey, nil)
	gaps := gapsOf(f.Maps.Axis)
	for _, s := range sel {
		i := rows[s]
		q := 0.0
		if t1 > t0 {
			q = (m.Times[i] - t0) / (t1 - t0)
		}
		gx, gy := splitAt(f.Maps.Axis, m.Rows[i], gaps)
		addLine(p, gx, gy, ramp(timeRamp, q), 0.9, nil)
	}
	addHeadroom(p)
	svg, dr, err := render(p, nil, figW, figH)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", id, err)
	}
	unit := f.timeUnit(t1 - t0)
	cap := fmt.Sprintf("%s %d of %d spectra shown, from t = %s (dark) to t = %s (light).", caption, len(sel), len(rows), fmtTime(t0, unit), fmtTime(t1, unit))
	return &Figure{ID: id, Title: title, Caption: cap, SVG: svg, drawing: dr, Legend: timeLegend(t0, t1, unit)}, nil
}

// mapFigure draws a matrix as a time × axis image with a signed colour scale.
func mapFigure(f *Folder, m *Matrix, ax axisStyle, id, title, unit string, q float64, caption string) (*Figure, error) {
	if len(m.Rows) < 2 || len(f.Maps.Axis) < 2 {
		return nil, nil
	}
	lim := quantileAbs(m.Rows, q)
	if !(lim > 0) {
		lim = 1e-12
	}
	y := m.Times
	ylabel := "time / s"
	multi := false
	for _, e := range m.Experiment {
		if e != m.Experiment[0] {
			multi = true
		}
	}
	if multi {
		// Experiments share times: stack them by spectrum number instead.
		y = make([]float64, len(m.Times))
		for i := range y {
			y[i] = float64(i + 1)
		}
		ylabel = "spectrum number (experiments stacked)"
	}
	img, r := mapImage(f.Maps.Axis, y, m.Rows, ax.Reversed, func(v float64) uint8 { return signedLevel(v, lim) })
	p := newPlot("", ylabel)
	ax.apply(p)
	if !multi {
		lo, hi := span(m.Times)
		f.timeAxis(&p.Y, lo, hi)
	}
	p.Add(newRaster(img, r))
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = r[0], r[1], r[2], r[3]
	svg, dr, err := render(p, colourBar(lim, unit+" (absorbance)"), figW, figH)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", id, err)
	}
	return &Figure{ID: id, Title: title, Caption: caption, SVG: svg, drawing: dr}, nil
}

// singularFigure: singular values on a log scale, the noise edge and the rank.
func singularFigure(f *Folder) (*Figure, error) {
	t := f.Singular
	if t == nil {
		return nil, nil
	}
	kj, sj := t.Index("factor"), t.Index("singular_value")
	if kj < 0 || sj < 0 {
		return nil, fmt.Errorf("singular_values.csv: no factor and singular_value columns")
	}
	ks, sv := t.Col(kj), t.Col(sj)
	n := min(len(ks), max(30, 2*f.Summary.RankEstimate+10))
	var in, out plotter.XYs
	for i := 0; i < n; i++ {
		if !(sv[i] > 0) || !finite(ks[i]) {
			continue
		}
		pt := plotter.XY{X: ks[i], Y: sv[i]}
		if int(ks[i]) <= f.Summary.RankEstimate {
			in = append(in, pt)
		} else {
			out = append(out, pt)
		}
	}
	if len(in)+len(out) == 0 {
		return nil, nil
	}
	p := newPlot("factor number", "singular value")
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = logTicks{}
	all := append(append(plotter.XYs{}, in...), out...)
	_, ymax := span(xsOf(all, false))
	ymin, _ := span(xsOf(all, false))
	edge := f.Summary.NoiseEdge
	if edge > 0 {
		ymin, ymax = math.Min(ymin, edge), math.Max(ymax, edge)
		hline(p, 0.5, float64(n)+0.5, edge, okabeVermilion, []float64{5, 3})
	}
	if r := f.Summary.RankEstimate; r > 0 {
		vline(p, float64(r)+0.5, ymin, ymax, grey, []float64{2, 2})
	}
	addPoints(p, in, okabeBlue, false)
	addPoints(p, out, grey, true)
	p.X.Min, p.X.Max = 0.5, float64(n)+0.5
	p.Y.Min, p.Y.Max = ymin/1.5, ymax*1.5
	svg, dr, err := render(p, nil, figW, figH)
	if err != nil {
		return nil, fmt.Errorf("singular values: %w", err)
	}
	// With noise weights the rank is counted on √A D √B, whose noise has σ = 1,
	// and singular_values.csv holds that matrix's values (docs/measurement.md).
	what, sigma := "the data matrix (absorbance units)", trimFloat(f.Summary.NoiseSigma, 3)
	if f.Summary.NoiseWeights == "noise" {
		what, sigma = "the noise-scaled matrix √A D √B (units of the noise)", "1"
	}
	cap := fmt.Sprintf("Singular values of %s. Filled: the %d factor(s) counted as signal; rings: the rest.", what, f.Summary.RankEstimate)
	legend := []LegendItem{{Label: "signal factor", Colour: okabeBlue, Marker: true}, {Label: "noise factor", Colour: grey, Marker: true}}
	if edge > 0 {
		cap += fmt.Sprintf(" Dashed: the noise edge σ(√n + √m) = %s for σ = %s (%s).", trimFloat(edge, 4), sigma, f.Summary.NoiseSource)
		legend = append(legend, LegendItem{Label: "noise edge", Colour: okabeVermilion, Dash: []float64{5, 3}})
	}
	if n < len(ks) {
		cap += fmt.Sprintf(" First %d of %d shown.", n, len(ks))
	}
	return &Figure{ID: "fig-singular", Title: "Singular values and the rank", Caption: cap, SVG: svg, drawing: dr, Legend: legend}, nil
}

func xsOf(xy plotter.XYs, x bool) []float64 {
	out := make([]float64, len(xy))
	for i, p := range xy {
		out[i] = p.Y
		if x {
			out[i] = p.X
		}
	}
	return out
}

// efaFigure reads efa.csv tolerantly: a time (or row) column and columns
// whose names say forward or backward. Values are taken as log10 singular
// values when a name says "log" or any value is ≤ 0, else their log10 is
// drawn.
func efaFigure(f *Folder) (*Figure, error) {
	t := f.EFA
	if t == nil || len(t.Header) < 2 {
		return nil, nil
	}
	cols, err := efaColumnsOf(t)
	if err != nil {
		return nil, err
	}
	x := t.Col(cols.x)
	val := efaValues(t, cols)
	xl := "time / s"
	if h := strings.ToLower(t.Header[cols.x]); !strings.HasPrefix(h, "time") {
		xl = "spectrum number"
	}
	p := newPlot(xl, "log₁₀ singular value")
	if xl != "spectrum number" {
		lo, hi := span(x)
		f.timeAxis(&p.X, lo, hi)
	}
	var legend []LegendItem
	for k, j := range cols.fwd {
		addLine(p, x, val(j), componentColour(k), 1.2, nil)
	}
	for k, j := range cols.bwd {
		addLine(p, x, val(j), componentColour(k), 1.2, []float64{5, 3})
	}
	for _, j := range cols.threshold {
		addLine(p, x, val(j), grey, 0.8, []float64{2, 2})
	}
	for k := 0; k < max(len(cols.fwd), len(cols.bwd)); k++ {
		legend = append(legend, LegendItem{Label: fmt.Sprintf("value %d", k+1), Colour: componentColour(k)})
	}
	legend = append(legend, LegendItem{Label: "forward (solid)", Colour: okabeBlack}, LegendItem{Label: "backward (dashed)", Colour: okabeBlack, Dash: []float64{5, 3}})
	if len(cols.threshold) > 0 {
		legend = append(legend, LegendItem{Label: "noise level", Colour: grey, Dash: []float64{2, 2}})
	}
	svg, dr, err := render(p, nil, figW, figH)
	if err != nil {
		return nil, fmt.Errorf("evolving factor analysis: %w", err)
	}
	return &Figure{ID: "fig-efa", Title: "Evolving factor analysis", SVG: svg, drawing: dr, Legend: legend,
		Caption: "Singular values of the first spectra up to each time (forward, solid) and of the last ones from each time on (backward, dashed). A component comes into view where a new forward value rises out of the noise and falls below what EFA can see where its backward value sinks into it; it may remain in the data below that level (Gampp et al. 1985; Maeder 1987)."}, nil
}

// efaColumns are the columns of efa.csv by what their names say.
type efaColumns struct {
	x                   int // time, or row number
	fwd, bwd, threshold []int
	isLog               bool // the values are log10 singular values already
}

// efaColumnsOf sorts efa.csv's columns by their names; an error when none is
// forward or backward.
func efaColumnsOf(t *Table) (efaColumns, error) {
	cols := efaColumns{x: -1}
	for _, n := range []string{"time", "time_s", "row", "spectrum", "index"} {
		if cols.x = t.Index(n); cols.x >= 0 {
			break
		}
	}
	if cols.x < 0 {
		cols.x = 0
	}
	for j, h := range t.Header {
		l := strings.ToLower(h)
		if j == cols.x || !t.Numeric(j) {
			continue
		}
		switch {
		case strings.Contains(l, "forward") || strings.HasPrefix(l, "fwd") || strings.HasPrefix(l, "f_"):
			cols.fwd = append(cols.fwd, j)
		case strings.Contains(l, "backward") || strings.HasPrefix(l, "bwd") || strings.HasPrefix(l, "b_"):
			cols.bwd = append(cols.bwd, j)
		case strings.Contains(l, "threshold") || strings.Contains(l, "noise"):
			cols.threshold = append(cols.threshold, j)
		default:
			continue
		}
		if strings.Contains(l, "log") {
			cols.isLog = true
		}
	}
	if len(cols.fwd)+len(cols.bwd) == 0 {
		return cols, fmt.Errorf("efa.csv: no forward or backward columns in its header")
	}
	if !cols.isLog {
		for _, j := range append(append([]int{}, cols.fwd...), cols.bwd...) {
			for _, v := range t.Col(j) {
				if v <= 0 {
					cols.isLog = true
				}
			}
		}
	}
	return cols, nil
}

// efaValues returns column j of efa.csv as drawn: log10 singular values, held
// at a floor when the file gives a noise threshold.
func efaValues(t *Table, cols efaColumns) func(j int) []float64 {
	val := func(j int) []float64 {
		c := t.Col(j)
		if !cols.isLog {
			for i := range c {
				c[i] = math.Log10(c[i])
			}
		}
		return c
	}
	// Windows smaller than the rank have exact zeros (log10 of rounding,
	// around −14): they would squash the curves that matter, so values
	// more than 1.5 decades below the noise threshold are drawn at that
	// floor.
	floor := math.Inf(-1)
	for _, j := range cols.threshold {
		for _, v := range val(j) {
			floor = math.Max(floor, v-1.5)
		}
	}
	if math.IsInf(floor, -1) {
		return val
	}
	return func(j int) []float64 {
		c := val(j)
		for i := range c {
			c[i] = math.Max(c[i], floor)
		}
		return c
	}
}

// spectraFigure: resolved spectra around a zero line, with uniqueness-range
// and bootstrap envelopes when the files hold them.
func spectraFigure(f *Folder, ax axisStyle) (*Figure, error) {
	t := f.Spectra
	if t == nil || len(t.Header) < 2 {
		return nil, nil
	}
	x := t.Col(0)
	comps := f.components(t, 1)
	if len(comps) == 0 {
		return nil, nil
	}
	reactions := f.Summary.Mode == "reactions"
	ylabel := "absorbance (per unit concentration)"
	if reactions {
		ylabel = "ΔA (absorbance, at extent 1)"
	}
	p := newPlot("", ylabel)
	ax.apply(p)
	var legend, shades []LegendItem
	ix := f.longIndex()
	for k, j := range comps {
		name := t.Header[j]
		c := componentColour(k)
		shades = append(shades, f.envelopes(ix, name, "spectrum", c, func(x, lo, hi []float64, c color.RGBA) { spectralBand(p, x, lo, hi, c) })...)
		if lo, hi := bounds(t, name, ""); lo >= 0 {
			spectralBand(p, x, t.Col(lo), t.Col(hi), tint(c, 0.6))
			shades = append(shades, LegendItem{Label: name + " bounds", Colour: tint(c, 0.6), Fill: true})
		}
	}
	xlo, xhi := span(x)
	hline(p, xlo, xhi, 0, okabeBlack, nil)
	gaps := gapsOf(x)
	for k, j := range comps {
		gx, gy := splitAt(x, t.Col(j), gaps)
		addLine(p, gx, gy, componentColour(k), 1.4, dashOf(k))
		legend = append(legend, LegendItem{Label: t.Header[j], Colour: componentColour(k), Dash: dashOf(k)})
	}
	addHeadroom(p)
	svg, dr, err := render(p, nil, figW, figH)
	if err != nil {
		return nil, fmt.Errorf("spectra: %w", err)
	}
	cap := "Resolved spectra of the species."
	title := "Resolved spectra"
	if reactions {
		title = "Reaction spectra"
		cap = "Each reaction's signed spectrum: positive lobes are bands of what forms, negative lobes bands of what is consumed; the black line is zero."
	}
	if len(shades) > 0 {
		cap += " Shaded: " + envelopeWords(f) + "."
		legend = append(legend, shades...)
	}
	return &Figure{ID: "fig-spectra", Title: title, Caption: cap, SVG: svg, drawing: dr, Legend: legend}, nil
}

// longRows indexes the rows of a long table by component and side, in
// their order (rows too short to hold both cells are left out): one pass
// for all of a figure's components, each of which took two passes over
// the whole table.
func longRows(t *Table) map[[2]string][]int {
	if t == nil {
		return nil
	}
	cj, sj := t.Index("component"), t.Index("side")
	if cj < 0 || sj < 0 {
		return nil
	}
	// The rows of a component and side mostly come in one run: the map is
	// looked up when the key changes.
	rows := map[[2]string][]int{}
	var cur [2]string
	var list []int
	for i, r := range t.Text {
		if len(r) <= max(cj, sj) {
			continue
		}
		if k := [2]string{r[cj], r[sj]}; list == nil || k != cur {
			if list != nil {
				rows[cur] = list
			}
			cur, list = k, rows[k]
		}
		list = append(list, i)
	}
	if list != nil {
		rows[cur] = list
	}
	return rows
}

// envelopeOf reads the long tables uniqueness.csv and intervals.csv
// (component, side, experiment, position, …, low column, high column): the
// rows of one component and side (rows, from longRows), first experiment
// only, as position and the pointwise lower and upper of the two bound
// columns. For uniqueness ranges these are the solutions at the smallest
// and largest share; the band between them is drawn.
func envelopeOf(t *Table, rows []int, loName, hiName string) (x, lo, hi []float64) {
	if t == nil {
		return nil, nil, nil
	}
	cj, sj, ej, pj := t.Index("component"), t.Index("side"), t.Index("experiment"), t.Index("position")
	lj, hj := t.Index(loName), t.Index(hiName)
	if cj < 0 || sj < 0 || pj < 0 || lj < 0 || hj < 0 {
		return nil, nil, nil
	}
	// The experiment of the first row taken; first is set once it is
	// (an empty experiment cell is an experiment too).
	first, seen := "", false
	need := max(cj, sj, pj, lj, hj)
	x, lo, hi = make([]float64, 0, len(rows)), make([]float64, 0, len(rows)), make([]float64, 0, len(rows))
	for _, i := range rows {
		r := t.Text[i]
		if len(r) <= need {
			continue
		}
		if ej >= 0 && ej < len(r) {
			if !seen {
				first, seen = r[ej], true
			}
			if r[ej] != first {
				continue
			}
		}
		l, h := cell(r, lj), cell(r, hj)
		x = append(x, cell(r, pj))
		lo = append(lo, math.Min(l, h))
		hi = append(hi, math.Max(l, h))
	}
	if len(x) < 2 {
		return nil, nil, nil
	}
	return x, lo, hi
}

// profilesFigure: concentration or extent profiles, with the kinetic fit
// (kinetics.csv) drawn as lines over the resolved points when a model ran.
func profilesFigure(f *Folder) (*Figure, error) {
	t := f.Profiles
	if t == nil {
		return nil, nil
	}
	tj := t.Index("time")
	if tj < 0 {
		return nil, fmt.Errorf("profiles.csv: no time column")
	}
	tm := t.Col(tj)
	var exp []float64
	if ej := t.Index("experiment"); ej >= 0 {
		exp = t.Col(ej)
	}
	comps := f.components(t, tj+1)
	if len(comps) == 0 {
		return nil, nil
	}
	p := newPlot("time / s", profilesLabel(f))
	fit := f.kineticCurves()
	var legend, shades []LegendItem
	xlo, xhi := span(tm)
	hline(p, xlo, xhi, 0, grey, nil)
	ix := f.longIndex()
	// Every range first, then every profile: a range drawn after another
	// component's points would hide them (it is opaque).
	for k, j := range comps {
		shades = append(shades, f.envelopes(ix, t.Header[j], "profile", componentColour(k), func(x, lo, hi []float64, c color.RGBA) { band(p, x, lo, hi, c) })...)
	}
	for k, j := range comps {
		c := componentColour(k)
		name := t.Header[j]
		col := t.Col(j)
		if len(fit) > 0 {
			var pts plotter.XYs
			for i := range tm {
				if finite(tm[i]) && finite(col[i]) {
					pts = append(pts, plotter.XY{X: tm[i], Y: col[i]})
				}
			}
			addPoints(p, pts, c, false)
			legend = append(legend, LegendItem{Label: name + " (resolved)", Colour: c, Marker: true})
			continue
		}
		bySegment(tm, exp, col, func(x, y []float64) { addLine(p, x, y, c, 1.4, dashOf(k)) })
		legend = append(legend, LegendItem{Label: name, Colour: c, Dash: dashOf(k)})
	}
	legend = append(legend, drawCurves(p, fit)...)
	f.timeAxis(&p.X, xlo, xhi)
	addHeadroom(p)
	svg, dr, err := render(p, nil, figW, figH)
	if err != nil {
		return nil, fmt.Errorf("profiles: %w", err)
	}
	title, cap := profilesCaption(f, len(shades) > 0, len(fit) > 0)
	legend = append(legend, shades...)
	return &Figure{ID: "fig-profiles", Title: title, Caption: cap, SVG: svg, drawing: dr, Legend: legend}, nil
}

// profilesLabel names the profiles' axis by what closure or the mode makes them.
func profilesLabel(f *Folder) string {
	switch {
	case f.Summary.Mode == "reactions":
		return "extent (largest = 1)"
	case f.Summary.Closure == "1":
		return "fraction of the total (closure = 1)"
	case f.Summary.Closure != "" && f.Summary.Closure != "off":
		return "concentration (closure total " + f.Summary.Closure + ")"
	}
	return "concentration (relative)"
}

// profilesCaption gives the profiles figure's title and caption.
func profilesCaption(f *Folder, shaded, fitted bool) (title, cap string) {
	title, cap = "Concentration profiles", "Resolved concentration of each species against time."
	if f.Summary.Mode == "reactions" {
		title, cap = "Extent profiles", "How far each reaction has gone, scaled so its largest extent is 1; zero at the reference and before the reaction starts."
	}
	if shaded {
		cap += " Shaded: " + envelopeWords(f) + "."
	}
	if fitted {
		cap += " Points: resolved; lines: the kinetic model fitted to them."
		if f.hasDataFitCurves() {
			cap = strings.TrimSuffix(cap, ".") + ", and fitted to the data matrix itself, whose concentrations need not pass through the points: it finds its own spectra, and where the resolution is not unique the points are one of many solutions."
		}
		if f.Summary.Kinetics != nil && f.Summary.Kinetics.Model != "" {
			cap += " Model: " + f.Summary.Kinetics.Model + "."
		}
	}
	return title, cap
}

// hasDataFitCurves says whether kinetics.csv holds a fit of the data matrix
// (columns S_data_fit, kineticCurves).
func (f *Folder) hasDataFitCurves() bool {
	if f.Kinetics == nil {
		return false
	}
	for _, h := range f.Kinetics.Header {
		if strings.HasSuffix(h, "_data_fit") {
			return true
		}
	}
	return false
}

// bySegment draws col against tm one experiment at a time (exp gives each
// row's experiment; nil: one), so that lines never join two experiments.
func bySegment(tm, exp, col []float64, draw func(x, y []float64)) {
	start := 0
	for i := 1; i <= len(tm); i++ {
		if i == len(tm) || (exp != nil && exp[i] != exp[start]) {
			draw(tm[start:i], col[start:i])
			start = i
		}
	}
}

// drawCurves draws the kinetic fit's curves in their component's colour
// (black when they match none) and returns one legend item per label.
func drawCurves(p *plot.Plot, fit []curve) []LegendItem {
	var legend []LegendItem
	seen := map[string]bool{}
	for _, cv := range fit {
		c := okabeBlack
		if cv.comp >= 0 {
			c = componentColour(cv.comp)
		}
		addLine(p, cv.x, cv.y, c, cv.width, cv.dash)
		if !seen[cv.label] {
			seen[cv.label] = true
			lc := c
			if cv.comp >= 0 {
				lc = okabeBlack
			}
			legend = append(legend, LegendItem{Label: cv.label, Colour: lc, Dash: cv.dash})
		}
	}
	return legend
}

// longIndex is the rows of uniqueness.csv and intervals.csv by component
// and side (longRows).
type longIndex struct{ bands, intervals map[[2]string][]int }

func (f *Folder) longIndex() longIndex {
	return longIndex{bands: longRows(f.Bands), intervals: longRows(f.Intervals)}
}

// envelopes draws with fill the uniqueness range and the resampling interval
// of component name on side ("spectrum" or "profile"), where the folder holds
// them, in tints of c, and returns their legend items.
func (f *Folder) envelopes(ix longIndex, name, side string, c color.RGBA, fill func(x, lo, hi []float64, c color.RGBA)) []LegendItem {
	var shades []LegendItem
	key := [2]string{name, side}
	if bx, lo, hi := envelopeOf(f.Bands, ix.bands[key], "at_min", "at_max"); bx != nil {
		fill(bx, lo, hi, tint(c, 0.72))
		shades = append(shades, LegendItem{Label: name + " uniqueness range", Colour: tint(c, 0.72), Fill: true})
	}
	if x, lo, hi := envelopeOf(f.Intervals, ix.intervals[key], "low", "high"); x != nil {
		fill(x, lo, hi, tint(c, 0.5))
		shades = append(shades, LegendItem{Label: name + " interval", Colour: tint(c, 0.5), Fill: true})
	}
	return shades
}

func envelopeWords(f *Folder) string {
	var w []string
	if f.Bands != nil {
		w = append(w, "pale, the uniqueness range — between the solutions with the smallest and largest share of the signal that still fit the data and keep every constraint (the method of Tauler 2001)")
	}
	if f.Intervals != nil {
		w = append(w, "darker, the resampling interval (intervals.csv)")
	}
	if len(w) == 0 {
		return "bounds given in the file"
	}
	return strings.Join(w, "; ")
}

type curve struct {
	x, y  []float64
	comp  int // index of the matching component, −1 none
	label string
	dash  []float64
	width float64
}

// kineticCurves reads kinetics.csv tolerantly: a time column, then per
// model species S the columns S_observed (the resolved profile, already
// drawn), S_fitted (model fitted to the profiles) and S_data_fit (model
// fitted to the data). The species is matched to its component through the
// summary's kinetics map (1-based component numbers), or by name. The fit
// the summary says it used is drawn solid, the other dashed. Columns named
// NAME_fit, fit_NAME or model_NAME after a component are taken as its fit;
// any other numeric column is drawn in black under its own name.
func (f *Folder) kineticCurves() []curve {
	t := f.Kinetics
	if t == nil {
		return nil
	}
	tj := -1
	for _, n := range []string{"time", "time_s"} {
		if tj = t.Index(n); tj >= 0 {
			break
		}
	}
	if tj < 0 {
		return nil
	}
	x := t.Col(tj)
	var names []string
	species := map[string]int{}
	primary := "_data_fit"
	if f.Summary != nil {
		names = f.Summary.ComponentNames
		if k := f.Summary.Kinetics; k != nil {
			for _, m := range k.Map {
				species[strings.ToLower(m.Name)] = m.Component - 1
			}
			if k.Method == "profiles" {
				primary = "_fitted"
			}
		}
	}
	compOf := func(base string) int {
		if c, ok := species[base]; ok {
			return c
		}
		for k, n := range names {
			if strings.EqualFold(n, base) {
				return k
			}
		}
		return -1
	}
	var out []curve
	for j, h := range t.Header {
		if j == tj || !t.Numeric(j) || strings.EqualFold(h, "experiment") {
			continue
		}
		l := strings.ToLower(h)
		var c curve
		switch {
		case strings.HasSuffix(l, "_observed"):
			continue
		case strings.HasSuffix(l, "_data_fit"), strings.HasSuffix(l, "_fitted"):
			suffix := "_fitted"
			if strings.HasSuffix(l, "_data_fit") {
				suffix = "_data_fit"
			}
			c = curve{comp: compOf(strings.TrimSuffix(l, suffix)), width: 1.3}
			c.label = "model fitted to the profiles"
			if suffix == "_data_fit" {
				c.label = "model fitted to the data"
			}
			if suffix != primary {
				c.dash, c.width = []float64{4, 3}, 0.9
			}
		default:
			c = curve{comp: -1, label: h, width: 1.2}
			for k, n := range names {
				n = strings.ToLower(n)
				if l == n+"_fit" || l == "fit_"+n || l == "model_"+n || l == n+"_model" {
					c.comp, c.label = k, "kinetic fit"
				}
			}
		}
		c.x, c.y = x, t.Col(j)
		out = append(out, c)
	}
	return out
}

// iterationsFigure: lack of fit per ALS iteration on a log scale, with the
// level noise alone would give.
func iterationsFigure(f *Folder) (*Figure, error) {
	t := f.Iterations
	if t == nil {
		return nil, nil
	}
	ij, lj := t.Index("iteration"), t.Index("lack_of_fit_percent")
	if ij < 0 || lj < 0 {
		return nil, fmt.Errorf("iterations.csv: no iteration and lack_of_fit_percent columns")
	}
	it, lof := t.Col(ij), t.Col(lj)
	var pts plotter.XYs
	for i := range it {
		if finite(it[i]) && lof[i] > 0 {
			pts = append(pts, plotter.XY{X: it[i], Y: lof[i]})
		}
	}
	if len(pts) == 0 {
		return nil, nil
	}
	p := newPlot("iteration", "lack of fit / %")
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = logTicks{}
	ylo, yhi := span(xsOf(pts, false))
	xlo, xhi := span(xsOf(pts, true))
	if xhi == xlo {
		xhi = xlo + 1
	}
	legend := []LegendItem{{Label: "lack of fit", Colour: okabeBlue}}
	nl, caption := iterationsLevel(f.Summary, pts[len(pts)-1].Y)
	if nl > 0 {
		hline(p, xlo, xhi, nl, okabeVermilion, []float64{5, 3})
		ylo, yhi = math.Min(ylo, nl), math.Max(yhi, nl)
		legend = append(legend, LegendItem{Label: "noise alone", Colour: okabeVermilion, Dash: []float64{5, 3}})
	}
	addLine(p, xsOf(pts, true), xsOf(pts, false), okabeBlue, 1.4, nil)
	p.Y.Min, p.Y.Max = ylo/1.3, yhi*1.3
	svg, dr, err := render(p, nil, figW, 7*figH/9)
	if err != nil {
		return nil, fmt.Errorf("iterations: %w", err)
	}
	conv := "converged"
	if !f.Summary.Converged {
		conv = "stopped at the iteration limit without converging"
	}
	return &Figure{ID: "fig-iterations", Title: "Lack of fit per iteration", SVG: svg, drawing: dr, Legend: legend,
		Caption: fmt.Sprintf("Alternating least squares %s after %d iterations. %s", conv, f.Summary.Iterations, caption)}, nil
}

// iterationsLevel is the level noise alone would leave in the metric of the
// iterations' curve, whose last value is last, and the caption's words for
// both. With noise weights the curve is the lack of fit the resolution
// minimises, each point weighted by 1/σ² (the fitted baseline part of the
// model), not the unweighted figure the summary quotes: its noise level is
// last / residual_to_noise, where the curve would fit to the noise (√(χ²/ν)
// = 1). Without weights the curve is the summary's own figure.
func iterationsLevel(s *Summary, last float64) (float64, string) {
	if s.NoiseWeights == "noise" && s.ResidualToNoise > 0 {
		nl := last / s.ResidualToNoise
		return nl, fmt.Sprintf("The curve is the lack of fit the resolution minimises, each point weighted by 1/σ² "+
			"of the noise model: %s %% at the end; the dashed line (%s %%) is where it would fit to the noise, "+
			"%s times lower (the residual to noise). Unweighted, the lack of fit is %s %% and noise alone would leave %s %%.%s",
			trimFloat(last, 4), trimFloat(nl, 3), trimFloat(s.ResidualToNoise, 3), trimFloat(s.LackOfFitPercent, 4), trimFloat(s.NoiseLackOfFitPercent, 3),
			referenceNoiseWords(s))
	}
	return s.NoiseLackOfFitPercent, fmt.Sprintf("It ends at %s %% lack of fit. The dashed line is what noise alone would leave.", trimFloat(last, 4))
}

// referenceNoiseWords says, when the summary has noise_degrees_of_freedom,
// that noise alone is counted after the model with the reference's noise as
// the one pattern it is; "" otherwise. The plain count is observed points −
// k(n + m − k) (common practice for a rank-k bilinear fit).
func referenceNoiseWords(s *Summary) string {
	nu := s.NoiseDegreesOfFreedom
	if !(nu > 0) {
		return ""
	}
	k := s.Components
	plain := s.Spectra*s.Points - s.BlindPoints - k*(s.Spectra+s.Points-k)
	return fmt.Sprintf(" Noise alone is what the noise model leaves after this model: every difference spectrum holds "+
		"the reference spectrum's own noise, one pattern common to all of them that the fitted profiles mostly absorb, "+
		"so it leaves a χ² of %s rather than the %d of independent noise at every point.", trimFloat(nu, 5), plain)
}

// residualSpectrumFigure: root-mean-square residual per point over the
// spectra in maps.csv, its signed mean, and the noise level.
func residualSpectrumFigure(f *Folder, m *Matrix, ax axisStyle) (*Figure, error) {
	x := f.Maps.Axis
	if len(m.Rows) == 0 || len(x) < 2 {
		return nil, nil
	}
	rms := make([]float64, len(x))
	mean := make([]float64, len(x))
	for j := range x {
		var s, s2 float64
		n := 0
		for _, r := range m.Rows {
			if finite(r[j]) {
				s += r[j]
				s2 += r[j] * r[j]
				n++
			}
		}
		if n > 0 {
			mean[j], rms[j] = s/float64(n), math.Sqrt(s2/float64(n))
		} else {
			mean[j], rms[j] = math.NaN(), math.NaN()
		}
	}
	p := newPlot("", "residual (absorbance)")
	ax.apply(p)
	xlo, xhi := span(x)
	hline(p, xlo, xhi, 0, okabeBlack, nil)
	legend := []LegendItem{{Label: "root-mean-square over time", Colour: okabeBlue}, {Label: "mean over time (signed)", Colour: okabeGreen, Dash: []float64{6, 3}}}
	if sg := f.Summary.NoiseSigma; sg > 0 {
		hline(p, xlo, xhi, sg, okabeVermilion, []float64{5, 3})
		legend = append(legend, LegendItem{Label: "noise σ", Colour: okabeVermilion, Dash: []float64{5, 3}})
	}
	gaps := gapsOf(x)
	gx, grms := splitAt(x, rms, gaps)
	addLine(p, gx, grms, okabeBlue, 1.2, nil)
	gx, gmean := splitAt(x, mean, gaps)
	addLine(p, gx, gmean, okabeGreen, 1.0, []float64{6, 3})
	addHeadroom(p)
	svg, dr, err := render(p, nil, figW, 7*figH/9)
	if err != nil {
		return nil, fmt.Errorf("residual spectrum: %w", err)
	}
	return &Figure{ID: "fig-residual-spectrum", Title: "Residual spectrum", SVG: svg, drawing: dr, Legend: legend,
		Caption: fmt.Sprintf("Residual at each point over the %d spectra kept in %s. Where the root-mean-square residual stays at the noise σ the model fits; a peak marks a band the components do not explain, and a mean away from zero a systematic misfit.", len(m.Rows), MapsFile)}, nil
}

// vapourFigure: the height of the largest water-vapour line in every
// spectrum (vapour.csv), one line per experiment, against time.
func vapourFigure(f *Folder) (*Figure, error) {
	t := f.Vapour
	tj, hj := t.Index("time"), t.Index("line_height")
	if tj < 0 || hj < 0 {
		return nil, fmt.Errorf("vapour.csv: no time and line_height columns")
	}
	tm, h := t.Col(tj), t.Col(hj)
	var exp []float64
	if ej := t.Index("experiment"); ej >= 0 {
		exp = t.Col(ej)
	}
	p := newPlot("time / s", "largest line / absorbance")
	xlo, xhi := span(tm)
	hline(p, xlo, xhi, 0, grey, nil)
	legend := []LegendItem{{Label: "largest line", Colour: okabeBlue}}
	if exp != nil {
		legend = nil
	}
	seg := 0
	bySegment(tm, exp, h, func(x, y []float64) {
		c := componentColour(seg)
		addLine(p, x, y, c, 1.4, dashOf(seg))
		if exp != nil {
			legend = append(legend, LegendItem{Label: fmt.Sprintf("experiment %d", seg+1), Colour: c, Dash: dashOf(seg)})
		}
		seg++
	})
	f.timeAxis(&p.X, xlo, xhi)
	addHeadroom(p)
	svg, dr, err := render(p, nil, figW, 7*figH/9)
	if err != nil {
		return nil, fmt.Errorf("vapour: %w", err)
	}
	return &Figure{ID: "fig-vapour", Title: "Water-vapour lines in the beam path", SVG: svg, drawing: dr,
		Legend:  legend,
		Caption: "The height of the largest water-vapour line in every spectrum (high-passed; vapour.csv), against the background (absorbance) or the reference (differences). A change means the humidity of the beam path changed during the run; the warnings say by how much and which resolved spectra hold the lines."}, nil
}
