package report

import (
	"image"
	"reflect"
	"slices"

	"gonum.org/v1/plot/vg"
)

// Predrawn holds figures drawn ahead of the folder they belong to, with
// their files. A run knows most figures' inputs long before its folder is
// written (the data maps and the singular values after the factor
// analysis, the residuals after the resolution) and draws each then, on a
// core the computation leaves idle (Draw, on a partial Folder); the report
// takes a figure drawn ahead (BuildWithPredrawn) only where the folder
// gives it the same view, every part of the folder the figure reads, so
// that it is the figure the folder itself would give. The rest are drawn
// with the report, as before.
//
// A Predrawn is used by one goroutine at a time.
type Predrawn struct {
	figs    map[string]*predrawn
	scratch fileScratch
	taken   []string // the figures a report took, in reading order
}

// predrawn is one figure drawn ahead: its view, what building it gave, and
// its files.
type predrawn struct {
	view      *Folder
	fig       *Figure
	err       error
	svg, pngb []byte
	fileErr   error
}

// Draw draws the figures named in ids that the partial folder f holds the
// inputs of, with their files, and keeps them (in place of any drawn before
// under the same name). A figure whose building panics is not kept: the
// report builds it again and meets the panic where it did before.
func (p *Predrawn) Draw(f *Folder, ids ...string) {
	for _, j := range figureJobs(f) {
		if !slices.Contains(ids, j.id) {
			continue
		}
		if e := predraw(j, &p.scratch); e != nil {
			if p.figs == nil {
				p.figs = map[string]*predrawn{}
			}
			p.figs[j.id] = e
		}
	}
}

// Reserve readies p's drawing memory for a figure of the report's usual
// size (the spectra's, the profiles') with up to rows rows of legend: the
// image made now and painted, and the PNG encoder's working memory made
// by encoding a small image, so that a figure drawn later does not wait
// for memory new to the process, whose first touch is dear
// (docs/performance.md, Machine: ≈ 10 ms for one figure's 2.6 MB image on
// the shared machine). Call it on the goroutine that draws into p, where
// it has time to spare.
func (p *Predrawn) Reserve(rows int) {
	n := 4 * figurePixels(figW) * figurePixels(figH+vg.Length(rows)*legendRowH)
	if cap(p.scratch.pix) < n {
		pix := make([]byte, n)
		for i := range pix {
			pix[i] = 0xff
		}
		p.scratch.pix = pix
	}
	if p.scratch.png.zw == nil {
		p.scratch.png.encode(image.NewRGBA(image.Rect(0, 0, 64, 64)))
	}
}

// Adopt keeps the figures q drew (in place of any p drew under the same
// names), so that figures drawn ahead on several goroutines, each with a
// Predrawn of its own, are offered to one report. q is not used after.
func (p *Predrawn) Adopt(q *Predrawn) {
	if q == nil {
		return
	}
	for id, e := range q.figs {
		if p.figs == nil {
			p.figs = map[string]*predrawn{}
		}
		p.figs[id] = e
	}
}

// Taken lists the names of the figures drawn ahead that the report took
// (BuildWithPredrawn), in reading order.
func (p *Predrawn) Taken() []string {
	if p == nil {
		return nil
	}
	return p.taken
}

// SVGFile is the SVG file of the figure drawn ahead under id (nil when
// there is none).
func (p *Predrawn) SVGFile(id string) []byte {
	if p == nil || p.figs[id] == nil {
		return nil
	}
	return p.figs[id].svg
}

// Files are the files of the figures drawn ahead (all, or those named in
// ids), by their names in the folder (figures/<id>.svg and .png), as the
// report would give them when it takes the figures.
func (p *Predrawn) Files(ids ...string) map[string][]byte {
	out := map[string][]byte{}
	if p == nil {
		return out
	}
	for id, e := range p.figs {
		if len(ids) > 0 && !slices.Contains(ids, id) {
			continue
		}
		if e.fig != nil && e.err == nil && e.fig.drawing.draw != nil && e.fileErr == nil && e.svg != nil && e.pngb != nil {
			out["figures/"+id+".svg"] = e.svg
			out["figures/"+id+".png"] = e.pngb
		}
	}
	return out
}

// Drawn lists the names of the figures drawn ahead, sorted.
func (p *Predrawn) Drawn() []string {
	var ids []string
	if p != nil {
		for id := range p.figs {
			ids = append(ids, id)
		}
	}
	slices.Sort(ids)
	return ids
}

func predraw(j figureJob, s *fileScratch) (e *predrawn) {
	defer func() {
		if recover() != nil {
			e = nil
		}
	}()
	e = &predrawn{view: j.view}
	e.fig, e.err = j.build(j.view)
	if e.fig != nil && e.fig.drawing.draw != nil {
		e.svg, e.pngb, e.fileErr = standalone(*e.fig, s)
	}
	return e
}

// match is the figure drawn ahead for job, nil when there is none or its
// view differs from the job's. Values are compared as reflect.DeepEqual
// does: a NaN in a view never matches, and the figure is drawn again.
func (p *Predrawn) match(job figureJob) *predrawn {
	if p == nil {
		return nil
	}
	e := p.figs[job.id]
	if e == nil || !reflect.DeepEqual(e.view, job.view) {
		return nil
	}
	p.taken = append(p.taken, job.id)
	return e
}
