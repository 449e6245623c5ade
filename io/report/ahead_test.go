package report

import (
	"bytes"
	"math"
	"reflect"
	"slices"
	"testing"
)

// maps.csv joined from parts, each formatted on its own (as a run formats
// the data's when they are final and the residuals' later), is the file
// and the Maps FormatMaps gives for all the matrices at once (the
// reference: the one-pass writer).
func TestJoinedMapsAreFormatMaps(t *testing.T) {
	n, m := 450, 900 // more than MapTimes and MapPoints: rows and points are picked
	axis, times := make([]float64, m), make([]float64, n)
	exp := make([]int, n)
	for j := range axis {
		axis[j] = 4000 - 3.5*float64(j)
	}
	for i := range times {
		times[i], exp[i] = 12.5*float64(i), i*3/n
	}
	mat := func(name string, scale float64) MapMatrix {
		return MapMatrix{Name: name, At: func(i, j int) float64 { return scale * math.Sin(0.01*float64(i*j)+float64(j)) }}
	}
	mats := []MapMatrix{mat("data", 1.5), mat("difference", 0.2), mat("residual", 1e-4)}
	want, wantMaps := FormatMaps(axis, times, exp, mats)
	got, gotMaps := JoinMaps(FormatMapsPart(axis, times, exp, mats[:2], 1), FormatMapsPart(axis, times, exp, mats[2:], 0))
	if !bytes.Equal(got, want) {
		t.Fatalf("joined maps.csv differs from FormatMaps' (%d vs %d bytes)", len(got), len(want))
	}
	if !reflect.DeepEqual(gotMaps, wantMaps) || gotMaps == nil {
		t.Fatal("joined Maps differ from FormatMaps'")
	}
}

// A figure drawn ahead is taken only for the same view: drawn from the
// whole folder, every figure is taken and the report and files are
// BuildWithFiles' bytes (the reference: drawing them with the report);
// with the noise σ changed after, the two figures that show it are drawn
// again, and the bytes are still BuildWithFiles' for the changed folder.
func TestPredrawnTakenOnlyForTheSameView(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, j := range figureJobs(f) {
		ids = append(ids, j.id)
	}
	check := func(f *Folder, pre *Predrawn) {
		t.Helper()
		want, wantFiles, err := BuildWithFiles(f)
		if err != nil {
			t.Fatal(err)
		}
		got, files, err := BuildWithPredrawn(f, pre)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) || len(files) != len(wantFiles) {
			t.Fatal("report with figures drawn ahead differs from BuildWithFiles'")
		}
		for name, b := range wantFiles {
			if !bytes.Equal(files[name], b) {
				t.Fatalf("%s drawn ahead differs from BuildWithFiles'", name)
			}
		}
	}
	pre := &Predrawn{}
	pre.Draw(f, ids...)
	check(f, pre)
	if got := pre.Taken(); !slices.Equal(got, ids) {
		t.Errorf("taken %v, want every figure %v", got, ids)
	}
	g := *f
	s := *f.Summary
	s.NoiseSigma *= 2
	g.Summary = &s
	pre.taken = nil
	check(&g, pre)
	for _, id := range pre.Taken() {
		if id == "fig-singular" || id == "fig-residual-spectrum" {
			t.Errorf("%s was taken although the noise σ it shows changed", id)
		}
	}
	if len(pre.Taken()) != len(ids)-2 {
		t.Errorf("taken %v: every figure but the two showing σ should be", pre.Taken())
	}
}

// A Predrawn readied with Reserve draws the figures' files in the image it
// made (no new one), and the files are FigureFiles' bytes (the reference:
// the files drawn with fresh memory): what the image held before is
// painted over.
func TestReservedPredrawnDrawsTheSameFiles(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	want, _ := FigureFiles(f)
	var p Predrawn
	p.Reserve(len(f.Summary.ComponentNames) + 2)
	img := &p.scratch.pix[:1][0]
	for i := range p.scratch.pix {
		p.scratch.pix[i] = byte(i) // not white: the drawing must not rely on it
	}
	p.Draw(f, "fig-spectra", "fig-profiles")
	for _, id := range []string{"fig-spectra", "fig-profiles"} {
		e := p.figs[id]
		if e == nil || !bytes.Equal(e.svg, want["figures/"+id+".svg"]) || !bytes.Equal(e.pngb, want["figures/"+id+".png"]) {
			t.Errorf("%s: the files drawn in a reserved Predrawn differ from FigureFiles'", id)
		}
	}
	if &p.scratch.pix[:1][0] != img {
		t.Error("a new image was made for figures the reserved one holds")
	}
}
