package pipeline

import (
	"io"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// Identical single beams with a blank: the absorbance is one unchanging
// spectrum (rank 1), the differences are zero within noise (rank 0), so
// nothing reacted: zero components, a note, no error (it used to stop with
// "every channel has zero variance"). By definition a species whose
// concentration never changes has no profile to resolve. Detector noise is
// constant in counts (20 counts on beams of up to 2·10⁴), so absorbance
// noise grows as 1/I where the beam is weak.
func TestNoChangeWithBlankIsNotAnError(t *testing.T) {
	for _, counts := range []float64{0, 20} {
		d := makeBateman(t, 1e-3, 1e-3, 0, 4, 3)
		rng := rand.New(rand.NewPCG(7, 1))
		n, m := d.beams.Dims()
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.beams.Set(i, j, d.beams.At(0, j)+counts*rng.NormFloat64())
			}
		}
		series, blank := d.write(t)
		s := NewSettings()
		s.Data, s.Kind, s.Blanks, s.Pre = []string{series}, "single-beam", []string{blank}, 3
		r, err := Run(s, nil)
		if err != nil {
			t.Fatalf("noise %g counts: %v", counts, err)
		}
		if r.Components != 0 || r.ALS != nil || r.DiffRank == nil || r.DiffRank.Estimate != 0 {
			t.Fatalf("noise %g counts: components %d, difference rank %v; want 0 and no resolution", counts, r.Components, r.DiffRank)
		}
		if !strings.Contains(strings.Join(r.Notes, "\n"), "no change: every spectrum equals the first within noise") {
			t.Errorf("noise %g counts: notes %q do not say that nothing changed", counts, r.Notes)
		}
	}
}

// Single beams near 1e-307 against an ordinary blank: I0/I overflows
// double precision (largest finite ≈ 1.8e308, IEEE 754). The run stops
// with the file, time and wavenumber named, not "non-finite value at row 0".
func TestTinySingleBeamsNameTheFile(t *testing.T) {
	d := makeBateman(t, 1e-3, 1e-3, 0, 4, 3)
	d.beams.Scale(1e-311, d.beams)
	series, blank := d.write(t)
	s := NewSettings()
	s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
	_, err := Run(s, nil)
	if err == nil || !strings.Contains(err.Error(), series+": the absorbance of the spectrum at 0 s") || !strings.Contains(err.Error(), "too close to zero") {
		t.Fatalf("err = %v", err)
	}
}

// A command file's values are quoted clipped in messages (80 characters
// and "…"): a 1 MB value used to give a 1 MB error line.
func TestCommandFileValuesClippedInMessages(t *testing.T) {
	long := strings.Repeat("9", 1<<19) // half the largest command file
	for _, text := range []string{
		"components " + long + "\n",   // a bad value, refused by the setting
		long + " 3\n",                 // an unknown keyword
		"out /" + long + "\n",         // an absolute out
		"region " + long + ":1000\n",  // a bad range
		"data \"" + long + "\" # x\n", // a quoted value, then a comment
		"tolerance x" + long + "\n",   // not a number
	} {
		p := filepath.Join(t.TempDir(), "long.bsr")
		writeFile(t, p, []byte(text))
		_, err := LoadCommandFile(p, NewSettings(), nil)
		if text[:5] == "data " {
			continue // a valid path; only its reading can fail
		}
		if err == nil {
			t.Errorf("%.20s…: accepted", text)
			continue
		}
		if msg := err.Error(); len(msg) > 600 || !strings.Contains(msg, "…") {
			t.Errorf("%.20s…: message of %d bytes: %.300s", text, len(msg), msg)
		}
	}
}

// The --known-spectrum file is an input like the data: hashed into the
// manifest, so that verify blames a changed reference file rather than the
// results it changed.
func TestKnownSpectrumFileInManifest(t *testing.T) {
	dir := t.TempDir()
	f := makeFirstOrder(1, 0, 2.5e-3, 0)
	p := f.write(t, dir, "run.csv", 1e-4, 5)
	ref := output.Table{Header: []string{"wavenumber", "absorbance"}}
	for i, x := range f.axis {
		ref.Rows = append(ref.Rows, []string{output.Float(x), output.Float(f.spectra.At(i, 0))})
	}
	rp := filepath.Join(dir, "a.csv")
	writeFile(t, rp, ref.CSV())
	s := NewSettings()
	s.Data, s.Kind, s.Components, s.Bands, s.Report = []string{p}, "absorbance", "2", "off", "off"
	s.Out, s.Quiet = filepath.Join(dir, "out"), true
	if err := s.Set("known-spectrum", "1=a.csv:100"); err != nil {
		t.Fatal(err)
	}
	s.Dir = dir
	if _, err := Execute(s, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		t.Fatal(err)
	}
	m, err := ReadManifest(s.Out)
	if err != nil {
		t.Fatal(err)
	}
	_, sum, _ := HashFile(rp)
	found := false
	for _, in := range m.Inputs {
		found = found || (in.Path == "../a.csv" && in.SHA256 == sum)
	}
	if !found {
		t.Fatalf("manifest inputs %+v lack ../a.csv with SHA-256 %s", m.Inputs, sum)
	}
	writeFile(t, rp, append(ref.CSV(), '\n'))
	v, err := Verify(s.Out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v.OK() || !strings.Contains(v.Differences[0].String(), "input ../a.csv: SHA-256 mismatch") {
		t.Errorf("a changed known spectrum: %v", v.Differences)
	}
}
