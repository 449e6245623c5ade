package pipeline

import (
	"encoding/json"
	"slices"
	"sync"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/mcr"
)

// ahead draws the report's figures while the run still computes: each as
// soon as its inputs are known (the data maps when the factor analysis
// begins, the singular values when it ends, the EFA curves beside the
// resolution, the residuals and the iterations after it), on one goroutine
// of its own, which takes a core the computation leaves idle for part of
// each phase (the factor analysis keeps 1.56 of 2 busy, the resolution
// 1.63). The uniqueness ranges' and the kinetics' figures, spectra and
// profiles, are drawn once the result files are formatted, beside their
// writers (aheadResults). It also formats the parts of maps.csv the
// figures are drawn from.
//
// Nothing drawn ahead is trusted as it is: the report takes a figure only
// where the folder it is built from gives that figure the same inputs
// (report.Predrawn), and maps.csv is joined from its parts only where the
// matrices still hold the values the parts were formatted from
// (aheadMaps). So the folder's bytes are those the report would give
// alone, whatever the run changed after a figure was drawn; a figure drawn
// for nothing costs time, not correctness. The goroutine reads only what
// the run's goroutine hands it (copies, or values no longer written); no
// file is written before the folder's writers write theirs.
type ahead struct {
	tasks chan func()
	done  chan struct{}
	pre   report.Predrawn // written by the goroutine, read after done
	// data and residual are maps.csv's parts: the data and difference
	// matrices, and the residuals.
	data, residual *aheadMaps
	efa            *EFAReport    // the EFA drawn
	efaCSV         []byte        // efa.csv of efa for efaTimes, formatted by the goroutine
	efaTable       *report.Table // efaCSV parsed, the table of the figure drawn
	efaTimes       []float64
	efaExp         []int
	// failed says a task panicked (written by the goroutine, read after
	// done): the parts and efa.csv are then made again by their writers.
	failed bool
	// drawing are the goroutines drawing the spectra and profiles figures
	// while the result files are written (aheadResults), into pre and
	// second; second is adopted into pre once they are done.
	drawing []*later[bool]
	second  report.Predrawn
	part    *later[partTables] // the tables they are drawn from
	closing sync.Once          // closes tasks
	// blocks are uniqueness.csv's row blocks formatted as the ranges are
	// found (bandsFound), nil until then.
	blocks *bandBlocks
}

// startAhead begins the goroutine; a nil ahead does nothing.
func startAhead() *ahead {
	a := &ahead{tasks: make(chan func(), 8), done: make(chan struct{})}
	go func() {
		defer close(a.done)
		for t := range a.tasks {
			if !a.failed {
				a.failed = !runTask(t)
			}
		}
	}()
	return a
}

// runTask runs t, false when it panicked. A panic on this goroutine would
// end the program, past the recovery a batch puts around each run on the
// run's own goroutine (cmd/bandsolve runOne); it is dropped here instead,
// what t would have made is made again by its writer, and the panic, if
// any, is met there, where it was before figures were drawn ahead.
func runTask(t func()) (ok bool) {
	defer func() {
		if recover() != nil {
			ok = false
		}
	}()
	t()
	return true
}

// add queues f, which reads only what it was given.
func (a *ahead) add(f func()) {
	if a != nil {
		a.tasks <- f
	}
}

// wait ends the goroutine once its tasks are done; no drawing outlives the
// run. It may be called more than once.
func (a *ahead) wait() {
	if a == nil {
		return
	}
	a.waitTasks()
	for _, d := range a.drawing {
		d.get()
	}
	a.blocks.wait()
}

// bandsFound is the mcr.BandOptions.Found that formats r's uniqueness.csv
// by row blocks as the ranges are found (bandBlocks), parsed for the
// figures drawn beside the writers when there will be some
// (drawsResults); nil without a.
func (a *ahead) bandsFound(r *Result) func(j int, b mcr.Band) {
	if a == nil {
		return nil
	}
	a.blocks = &bandBlocks{parse: a.drawsResults(r)}
	return a.blocks.found(r)
}

// bandBlocks are the blocks bandsFound began (nil without).
func (a *ahead) bandBlocks() *bandBlocks {
	if a == nil {
		return nil
	}
	return a.blocks
}

// waitTasks ends the goroutine once its tasks are done, leaving the
// drawing of aheadResults to go on.
func (a *ahead) waitTasks() {
	a.closing.Do(func() { close(a.tasks) })
	<-a.done
}

// predrawn are the figures drawn ahead (nil without).
func (a *ahead) predrawn() *report.Predrawn {
	if a == nil {
		return nil
	}
	a.wait()
	a.pre.Adopt(&a.second)
	a.second = report.Predrawn{}
	return &a.pre
}

// aheadResults draws the spectra and profiles figures, the two that shade
// the uniqueness ranges and so wait for the run's last phase, while the
// other result files are written: from the bytes WriteResults gave
// spectra.csv, profiles.csv, kinetics.csv and summary.json and those
// formatted for uniqueness.csv (earlyFiles), parsed as the report parses
// them, on two goroutines (the spectra in pre, whose goroutine's image is
// already made; the profiles in second). Call it after WriteResults, once
// run has ended the goroutine drawing ahead. Like every figure drawn
// ahead, each is taken only where the folder gives it the same view. Not
// done with intervals.csv (formatted at its writer's turn).
func (a *ahead) aheadResults(r *Result, st *output.Stage) {
	if !a.drawsResults(r) {
		return
	}
	a.waitTasks() // pre is free: nothing else draws into it
	files := map[string][]byte{}
	for _, name := range []string{"spectra.csv", "profiles.csv", "kinetics.csv", "summary.json"} {
		if b, ok := st.Written(name); ok {
			files[name] = b
		}
	}
	if files["summary.json"] == nil {
		return
	}
	bands, tu := r.early.bands, report.TimeUnitRecord(r.Settings.TimeUnit)
	a.part = startLater(func() (p partTables) {
		runTask(func() {
			// The other tables are parsed while uniqueness.csv, which
			// both figures shade, is still being formatted.
			if p = partFolder(files); p.folder != nil {
				p.folder.AsRun = tu
				if b, ok := bands.get(); ok && b.table != nil {
					p.folder.Bands = p.add("uniqueness.csv", b.csv, b.table)
				} else if ok {
					p.folder.Bands = p.table("uniqueness.csv", b.csv)
				}
			}
		})
		return p
	})
	// The files of each of the two figures once drawn, and of the figures
	// drawn before once the first of the two is, are written ahead
	// (output.Stage.Prewrite), to be listed at the report's turn where it
	// takes them: their writing and flushing leave the report's path. The
	// figures drawn before wait for one of the two: written at the
	// phase's start, their 16 flushes, one after another on the same
	// processors, held both while the figures waited (a flush's system
	// call keeps its processor until the scheduler's monitor takes it
	// back, up to 10 ms; docs/performance-history.md, "Writing after the ranges",
	// thirteenth round); once one figure is drawn its processor is free
	// while the other's is drawn.
	early := a.pre.Files()
	drawn := make(chan struct{}, 2) // each figure's goroutine says it ended
	draw := func(p *report.Predrawn, id string) *later[bool] {
		return startLater(func() bool {
			defer func() { drawn <- struct{}{} }()
			return runTask(func() {
				if part, _ := a.part.get(); part.folder != nil {
					p.Draw(part.folder, id)
					prewrite(st, p.Files(id))
				}
			})
		})
	}
	a.drawing = []*later[bool]{draw(&a.pre, "fig-spectra"), draw(&a.second, "fig-profiles"),
		startLater(func() bool { <-drawn; return runTask(func() { prewrite(st, early) }) })}
}

// drawsResults says aheadResults draws r's spectra and profiles figures
// (when summary.json is written): not when bootstrap replicates are asked
// for, whose intervals the figures would shade. It goes by the replicates
// asked for rather than the intervals so that it gives one answer before
// the bootstrap (bandsFound asks it while the ranges are searched) and
// after; when the bootstrap gives no intervals, the report draws the two
// figures at its turn.
func (a *ahead) drawsResults(r *Result) bool {
	return a != nil && a.drawing == nil && r.ALS != nil && r.Settings.Replicates == 0
}

// prewrite writes files into the stage ahead of their turn, in name order.
func prewrite(st *output.Stage, files map[string][]byte) {
	names := make([]string, 0, len(files))
	for name := range files {
		names = append(names, name)
	}
	slices.Sort(names)
	for _, name := range names {
		st.Prewrite(name, files[name])
	}
}

// partTables is the part of an output folder aheadResults draws from, and
// its tables with the bytes each was parsed from.
type partTables struct {
	folder *report.Folder
	parsed map[string]report.Parsed
}

// partFolder is the part of an output folder made of files (name →
// bytes) as report.LoadStaged reads them: summary.json decoded, each
// table parsed under its name (a table that does not parse is left out,
// as LoadStaged leaves it out). No folder when summary.json does not
// decode. uniqueness.csv is added by the caller (table).
func partFolder(files map[string][]byte) partTables {
	p := partTables{folder: &report.Folder{Summary: &report.Summary{}}, parsed: map[string]report.Parsed{}}
	if json.Unmarshal(files["summary.json"], p.folder.Summary) != nil {
		return partTables{}
	}
	table := func(name string) *report.Table {
		if b, ok := files[name]; ok {
			return p.table(name, b)
		}
		return nil
	}
	f := p.folder
	f.Spectra, f.Profiles, f.Kinetics = table("spectra.csv"), table("profiles.csv"), table("kinetics.csv")
	return p
}

// table is the file name holding b parsed as report.LoadStaged parses it,
// kept with its bytes (nil when it does not parse).
func (p partTables) table(name string, b []byte) *report.Table {
	t, err := report.ParseTable(name, b)
	if err != nil {
		return nil
	}
	return p.add(name, b, t)
}

// add keeps t, the table of the file name holding b.
func (p partTables) add(name string, b []byte, t *report.Table) *report.Table {
	p.parsed[name] = report.Parsed{Bytes: b, Table: t}
	return t
}

// parsed are the tables parsed ahead (efa.csv, and those aheadResults
// draws from) with the bytes each was parsed from, for the report to take
// where the folder's files hold the same bytes (report.LoadParsed): the
// figures drawn ahead and the report then share them.
func (a *ahead) parsed() map[string]report.Parsed {
	if a == nil {
		return nil
	}
	a.waitTasks()
	out := map[string]report.Parsed{}
	if !a.failed && a.efaTable != nil {
		out["efa.csv"] = report.Parsed{Bytes: a.efaCSV, Table: a.efaTable}
	}
	if p, ok := a.part.get(); ok {
		for name, t := range p.parsed {
			out[name] = t
		}
	}
	return out
}

// summaryAhead is the summary.json keys in s as the report reads them back
// (an encoding and decoding, as the file's).
func summaryAhead(s *output.Summary) *report.Summary {
	b, err := output.JSON(s)
	if err != nil {
		return nil
	}
	var out report.Summary
	if json.Unmarshal(b, &out) != nil {
		return nil
	}
	return &out
}

// aheadData snapshots the data (and difference) matrices at maps.csv's
// points and draws the figures of the data from them. In species mode it
// waits for the difference spectra's map rows (kept when the factor
// analysis lends their memory).
func (a *ahead) aheadData(r *Result) {
	if a == nil || a.data != nil {
		return
	}
	mats := dataMatrices(r)
	if mats == nil {
		return
	}
	m := snapMaps(r, mats)
	a.data = m
	folder := &report.Folder{Summary: &report.Summary{Axis: r.AxisName, Mode: r.Mode.String()}, AsRun: report.TimeUnitRecord(r.Settings.TimeUnit)}
	a.add(func() {
		m.format()
		folder.Maps = m.part.Maps()
		a.pre.Draw(folder, "fig-absorbance", "fig-input", "fig-map")
	})
}

// aheadSingular draws the singular values' figure once the rank is counted.
func (a *ahead) aheadSingular(r *Result) {
	if a == nil {
		return
	}
	csv := singularTable(r.Factors, r.Rank, r.BaselineOrder).CSV()
	sum := &output.Summary{RankEstimate: r.Rank.Estimate, NoiseEdge: round(r.Rank.NoiseEdge), NoiseSigma: round(r.NoiseSigma),
		NoiseWeights: "off", NoiseSource: r.NoiseSource}
	if weighted(r) {
		sum.NoiseWeights = "noise"
	}
	a.add(func() {
		t, err := report.ParseTable("singular_values.csv", csv)
		if s := summaryAhead(sum); err == nil && s != nil {
			a.pre.Draw(&report.Folder{Singular: t, Summary: s}, "fig-singular")
		}
	})
}

// aheadEFA draws the EFA figure from r.EFA, which is not changed once set.
func (a *ahead) aheadEFA(r *Result) {
	if a == nil || r.EFA == nil || r.EFA == a.efa {
		return
	}
	a.efaDrawer(r)(r.EFA)
}

// efaDrawer returns what draws the EFA figure of a report at r's times as
// they are now (copied here, on the run's goroutine): it queues the drawing
// and records the report drawn. startEFA calls it from the goroutine that
// computes the report, as soon as the report is made, so that the figure
// is drawn beside the resolution's first steps, which keep 1.5 cores busy,
// rather than once the second start is done; every later reader of a.efa
// (aheadEFA, efaFile) has waited for that goroutine (efaReport takes its
// report through r.earlyEFA.get, and run waits for it before the drawing
// ends).
func (a *ahead) efaDrawer(r *Result) func(rep *EFAReport) {
	multi := len(r.Experiments) > 1
	times, exp := append([]float64(nil), r.Times...), append([]int(nil), r.ExpOfRow...)
	tu := report.TimeUnitRecord(r.Settings.TimeUnit)
	return func(rep *EFAReport) {
		a.efa, a.efaTimes, a.efaExp = rep, times, exp
		a.add(func() {
			a.efaCSV = efaTable(rep, times, exp, multi).CSV()
			if t, err := report.ParseTable("efa.csv", a.efaCSV); err == nil {
				a.efaTable = t
				a.pre.Draw(&report.Folder{EFA: t, AsRun: tu}, "fig-efa")
			}
		})
	}
}

// efaFile is efa.csv as formatted ahead, when it is of r's EFA (not
// changed once set) at r's times.
func (a *ahead) efaFile(r *Result) ([]byte, bool) {
	if a == nil || a.efa == nil || a.efa != r.EFA {
		return nil, false
	}
	a.waitTasks()
	if a.failed || a.efaCSV == nil || !vecmath.SameBits(a.efaTimes, r.Times) || !slices.Equal(a.efaExp, r.ExpOfRow) {
		return nil, false
	}
	return a.efaCSV, true
}

// aheadFit draws the residuals' and the iterations' figures once the
// resolution is done.
func (a *ahead) aheadFit(r *Result) {
	if a == nil || r.ALS == nil || r.D == nil {
		return
	}
	m := snapMaps(r, []mapSource{residualSource(r)})
	a.residual = m
	csv := iterationsTable(r).CSV()
	rtn, _ := residualToNoise(r)
	sum := &output.Summary{Axis: r.AxisName, NoiseSigma: round(r.NoiseSigma), NoiseLackOfFitPercent: round(r.NoiseLOF),
		LackOfFitPercent: round(r.LackOfFit), Iterations: r.ALS.Iterations, Converged: r.ALS.Converged,
		ResidualToNoise: round(rtn), NoiseWeights: "off", NoiseDegreesOfFreedom: round(r.ReferenceNoiseDOF())}
	// The caption's plain count of degrees of freedom, as MakeSummary
	// gives its terms.
	sum.Spectra, sum.Points = r.D.Dims()
	sum.Components = r.Components
	if r.Blind != nil {
		sum.BlindPoints = r.Blind.Count
	}
	if weighted(r) {
		sum.NoiseWeights = "noise" // as MakeSummary says it
	}
	tu := report.TimeUnitRecord(r.Settings.TimeUnit)
	a.add(func() {
		m.format()
		t, err := report.ParseTable("iterations.csv", csv)
		s := summaryAhead(sum)
		if err != nil || s == nil {
			return
		}
		a.pre.Draw(&report.Folder{Iterations: t, Summary: s, AsRun: tu, Maps: m.part.Maps()},
			"fig-iterations", "fig-residual-map", "fig-residual-spectrum")
	})
	// The images the spectra and profiles figures will be drawn in
	// (aheadResults), made and touched now, while the last phases leave
	// this goroutine idle: for legends of a line and a range per component
	// and two kinetic fits, two items a row (a larger figure makes its own).
	rows := r.Components + 2
	a.add(func() {
		a.pre.Reserve(rows)
		a.second.Reserve(rows)
	})
}

// aheadMaps is some matrices of maps.csv at its points (rows × cols),
// copied when the run hands them over, and their part of the file,
// formatted by the goroutine.
type aheadMaps struct {
	names      []string
	vals       [][]float64 // per matrix, row-major over rows × cols
	rows, cols []int
	axis       []float64
	times      []float64
	exp        []int
	part       report.MapsPart
}

// mapSource is a matrix of maps.csv read a row at a time: fill appends
// row i's values at cols to dst, the values its MapMatrix's At gives.
type mapSource struct {
	name string
	fill func(dst []float64, i int, cols []int) []float64
}

// snapMaps copies mats at maps.csv's points, with the axis and times.
func snapMaps(r *Result, mats []mapSource) *aheadMaps {
	m := &aheadMaps{rows: report.MapRows(len(r.Times)), cols: report.MapCols(len(r.Axis)),
		axis: append([]float64(nil), r.Axis...), times: append([]float64(nil), r.Times...), exp: append([]int(nil), r.ExpOfRow...)}
	for _, mm := range mats {
		m.names = append(m.names, mm.name)
		m.vals = append(m.vals, m.at(mm))
	}
	return m
}

// at is mm's values at the map's points.
func (m *aheadMaps) at(mm mapSource) []float64 {
	v := make([]float64, 0, len(m.rows)*len(m.cols))
	for _, i := range m.rows {
		v = mm.fill(v, i, m.cols)
	}
	return v
}

// format makes the part of maps.csv, on one goroutine. The matrices' At
// finds a point's place by two slices indexed by row and column (the rows
// and columns kept are increasing indices of times and axis): two map
// lookups a value were a tenth of the formatting.
func (m *aheadMaps) format() {
	ri := make([]int, len(m.times))
	for k, i := range m.rows {
		ri[i] = k * len(m.cols)
	}
	cj := make([]int, len(m.axis))
	for k, j := range m.cols {
		cj[j] = k
	}
	mats := make([]report.MapMatrix, len(m.names))
	for q := range mats {
		v := m.vals[q]
		mats[q] = report.MapMatrix{Name: m.names[q], At: func(i, j int) float64 { return v[ri[i]+cj[j]] }}
	}
	m.part = report.FormatMapsPart(m.axis, m.times, m.exp, mats, 1)
}

// holds says whether mats are m's matrices with m's values, and the run's
// axis and times m's: then m's part is theirs. Values are compared bit for
// bit (a NaN matches the same NaN).
func (m *aheadMaps) holds(r *Result, mats []mapSource) bool {
	if m == nil || len(mats) != len(m.names) || !vecmath.SameBits(m.axis, r.Axis) || !vecmath.SameBits(m.times, r.Times) || !slices.Equal(m.exp, r.ExpOfRow) {
		return false
	}
	for q, mm := range mats {
		if mm.name != m.names[q] || !vecmath.SameBits(m.vals[q], m.at(mm)) {
			return false
		}
	}
	return true
}

// mapsFile is maps.csv joined from the parts formatted ahead, when the
// run's matrices still hold their values (ok false otherwise: formatMaps
// makes it).
func (a *ahead) mapsFile(r *Result) (mapsFile, bool) {
	if a == nil || a.data == nil {
		return mapsFile{}, false
	}
	a.waitTasks()
	if a.failed {
		return mapsFile{}, false
	}
	data := dataMatrices(r)
	if data == nil || !a.data.holds(r, data) {
		return mapsFile{}, false
	}
	if r.ALS == nil {
		if a.residual != nil {
			return mapsFile{}, false
		}
		b, m := report.JoinMaps(a.data.part)
		return mapsFile{csv: b, maps: m}, true
	}
	if !a.residual.holds(r, []mapSource{residualSource(r)}) {
		return mapsFile{}, false
	}
	b, m := report.JoinMaps(a.data.part, a.residual.part)
	return mapsFile{csv: b, maps: m}, true
}

// dataMatrices are the data and difference matrices of maps.csv as
// mapMatrices gives them when the difference is known without stacking the
// experiments' own (its map rows kept, or reactions mode, where the data
// are the differences); nil otherwise.
func dataMatrices(r *Result) []mapSource {
	if r.D == nil {
		return nil
	}
	d := r.D
	mats := []mapSource{{name: "data", fill: func(dst []float64, i int, cols []int) []float64 {
		row := d.RawRowView(i)
		for _, j := range cols {
			dst = append(dst, row[j])
		}
		return dst
	}}}
	switch {
	case r.diffMapRows != nil:
		mats = append(mats, mapSource{name: "difference", fill: r.diffMapRows.fill})
	case r.Mode != mcr.Reactions:
		return nil
	}
	return mats
}

// residualSource is residualMatrix read a row at a time.
func residualSource(r *Result) mapSource {
	d, c, s := r.D, r.ALS.C, r.ALS.S
	return mapSource{name: "residual", fill: func(dst []float64, i int, cols []int) []float64 {
		drow, crow := d.RawRowView(i), c.RawRowView(i)
		for _, j := range cols {
			dst = append(dst, residualAt(drow, crow, s.RawRowView(j), j))
		}
		return dst
	}}
}
