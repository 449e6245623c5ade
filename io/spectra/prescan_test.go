package spectra

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// writeMatrixCSV writes s in the matrix layout (one line per channel, one
// column per spectrum) with the shortest decimal of each value.
func writeMatrixCSV(t *testing.T, path string, s *Series) {
	t.Helper()
	n, m := s.Values.Dims()
	var b strings.Builder
	b.WriteString("wavenumber")
	for _, x := range s.Times {
		b.WriteString("," + strconv.FormatFloat(x, 'g', -1, 64))
	}
	b.WriteString("\n")
	for j := 0; j < m; j++ {
		b.WriteString(strconv.FormatFloat(s.Axis[j], 'g', -1, 64))
		for i := 0; i < n; i++ {
			b.WriteString("," + strconv.FormatFloat(s.Values.At(i, j), 'g', -1, 64))
		}
		b.WriteString("\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// sameBits reports where two slices differ bit for bit ("" when they do not).
func sameBits(what string, a, b []float64) string {
	if len(a) != len(b) {
		return fmt.Sprintf("%s: %d values against %d", what, len(a), len(b))
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return fmt.Sprintf("%s[%d]: %v against %v", what, i, a[i], b[i])
		}
	}
	return ""
}

func matrixBits(what string, a, b *mat.Dense) string {
	if (a == nil) != (b == nil) {
		return what + ": one is nil"
	}
	if a == nil {
		return ""
	}
	n, _ := a.Dims()
	for i := 0; i < n; i++ {
		if d := sameBits(fmt.Sprintf("%s row %d", what, i), a.RawRowView(i), b.RawRowView(i)); d != "" {
			return d
		}
	}
	return ""
}

func weightBits(what string, a, b *Weights) string {
	if (a == nil) != (b == nil) {
		return what + ": one is nil"
	}
	if a == nil {
		return ""
	}
	if d := sameBits(what+" rows", a.Row, b.Row); d != "" {
		return d
	}
	return sameBits(what+" columns", a.Col, b.Col)
}

// assembledDiff says where two assemblies differ, bit for bit ("" when
// they do not).
func assembledDiff(a, b *Assembled) string {
	for _, d := range []string{
		matrixBits("absolute", a.Absolute, b.Absolute),
		matrixBits("difference", a.Difference, b.Difference),
		weightBits("absolute weights", a.AbsoluteWeights, b.AbsoluteWeights),
		weightBits("difference weights", a.DifferenceWeights, b.DifferenceWeights),
		sameBits("noise per channel", a.Noise.Channel, b.Noise.Channel),
		sameBits("noise level and step", []float64{a.Noise.Level, a.Noise.Quantum}, []float64{b.Noise.Level, b.Noise.Quantum}),
		sameBits("largest absorbance", a.AbsoluteTop, b.AbsoluteTop),
	} {
		if d != "" {
			return d
		}
	}
	switch {
	case a.Noise.Source != b.Noise.Source || a.Noise.Unit != b.Noise.Unit:
		return "noise source or unit"
	case a.Finite != b.Finite:
		return "finite"
	case !slices.Equal(a.ReferenceRows, b.ReferenceRows):
		return "reference rows"
	case !slices.Equal(a.Notes, b.Notes):
		return fmt.Sprintf("notes %q against %q", a.Notes, b.Notes)
	case !slices.Equal(a.Warnings, b.Warnings):
		return fmt.Sprintf("warnings %q against %q", a.Warnings, b.Warnings)
	case (a.Blind == nil) != (b.Blind == nil):
		return "blind: one is nil"
	}
	if a.Blind != nil {
		if a.Blind.Count != b.Blind.Count || len(a.Blind.Rows) != len(b.Blind.Rows) {
			return fmt.Sprintf("blind count %d against %d", a.Blind.Count, b.Blind.Count)
		}
		for i := range a.Blind.Rows {
			if !slices.Equal(a.Blind.Rows[i], b.Blind.Rows[i]) {
				return fmt.Sprintf("blind row %d: %v against %v", i, a.Blind.Rows[i], b.Blind.Rows[i])
			}
		}
	}
	return ""
}

// The assembly from the parse's channel scan (ScanBeams) against the
// assembly's own passes over the matrix (scanBeams, the noise model's
// blocks), which the tests of noise_ref_test.go check against the direct
// forms: every value, weight, blind point, note and warning the same bit
// for bit. Beams with detector noise constant in counts (PRIMER §8), with
// and without a blank and --pre, rounded (a rounding step), with beams at
// or below zero, a channel dark in every spectrum, a blank with unusable
// channels, a detector ceiling (flat top), few spectra (pooled
// differences), a mean reference, a reference file with unusable channels,
// and times out of order in the file (no scan: the same answer).
func TestScannedParseAssemblesAsThePasses(t *testing.T) {
	dir := t.TempDir()
	type tc struct {
		name    string
		n, m    int
		step    float64
		edit    func(s *Series, blank []float64)
		pre     int
		mean    int
		noBlank bool
		refFile bool // the reference a spectrum of its own (with unusable channels) rather than the first rows
		scanned bool // the scan is expected to describe the matrix
	}
	dark := func(s *Series, _ []float64) {
		n, _ := s.Values.Dims()
		for i := 0; i < n; i++ {
			s.Values.Set(i, 7, -0.5) // a channel with no light at all
		}
		s.Values.Set(3, 2, 0)
		s.Values.Set(n-1, 20, -3)
		s.Values.Set(n/2, 21, 0)
	}
	cases := []tc{
		{name: "blank", n: 60, m: 50, scanned: true},
		{name: "no blank", n: 60, m: 50, noBlank: true, scanned: true},
		{name: "pre 6", n: 60, m: 50, pre: 6, scanned: true},
		{name: "pre 6 mean 3", n: 60, m: 50, pre: 6, mean: 3, scanned: true},
		{name: "rounded", n: 70, m: 41, step: 0.5, scanned: true},
		{name: "dark points", n: 60, m: 50, edit: dark, scanned: true},
		{name: "dark points, pre 5", n: 60, m: 50, pre: 5, edit: dark, scanned: true},
		{name: "unusable blank channels", n: 60, m: 50, scanned: true, edit: func(_ *Series, b []float64) {
			b[0], b[30] = 0, -2
		}},
		{name: "flat top", n: 60, m: 50, scanned: true, edit: func(s *Series, _ []float64) {
			for j := 10; j < 13; j++ {
				s.Values.Set(40, j, 5e4) // above every other beam
			}
		}},
		{name: "few spectra", n: 6, m: 50, scanned: true},
		{name: "reference file with unusable channels", n: 60, m: 50, refFile: true, noBlank: true, scanned: true},
		{name: "times out of order", n: 60, m: 50, scanned: false, edit: func(s *Series, _ []float64) {
			s.Times[4], s.Times[5] = s.Times[5], s.Times[4]
		}},
	}
	for k, c := range cases {
		rng := rand.New(rand.NewPCG(uint64(k)+1, 9))
		s := beams(rng, c.n, c.m, 3, 1, c.step)
		blank := make([]float64, c.m)
		for j := range blank {
			u := float64(j) / float64(c.m)
			blank[j] = 1e4*(0.6+0.4*math.Sin(3*u)) + 3*rng.NormFloat64()
		}
		if c.edit != nil {
			c.edit(s, blank)
		}
		if c.noBlank {
			blank = nil
		}
		path := filepath.Join(dir, fmt.Sprintf("case%d.csv", k))
		writeMatrixCSV(t, path, s)
		opt := AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: max(c.mean, 1)}, Pre: c.pre, Consume: true}
		if c.refFile {
			// A beam of its own, dark at two channels (unusable there,
			// as a blank's are), the data's first beam elsewhere.
			ref := slices.Clone(s.Values.RawRowView(0))
			ref[4], ref[33] = 0, -1
			opt.Reference = Reference{File: &Spectrum{Axis: s.Axis, Values: ref, Source: "reference.csv"}}
		}
		for _, procs := range []int{1, 2, 3} {
			old := runtime.GOMAXPROCS(procs)
			plain, err := ReadMatrixCSV(path)
			if err != nil {
				t.Fatal(err)
			}
			scanned, err := Load(path, FolderOptions{ScanBeams: true, Pre: c.pre})
			if err != nil {
				t.Fatal(err)
			}
			if got := scanned.scan.usable(scanned.Values, c.pre) != nil; got != c.scanned {
				t.Errorf("%s: scan taken %v, want %v", c.name, got, c.scanned)
			}
			want, err1 := Assemble(plain, opt)
			got, err2 := Assemble(scanned, opt)
			runtime.GOMAXPROCS(old)
			if err1 != nil || err2 != nil {
				t.Fatalf("%s: %v, %v", c.name, err1, err2)
			}
			if d := assembledDiff(got, want); d != "" {
				t.Errorf("%s, GOMAXPROCS %d: %s", c.name, procs, d)
			}
		}
	}
}

// A scan describes the matrix it was taken from, with the --pre it was
// taken for: a subset of the channels, a changed --pre or a matrix changed
// after the parse (a new one) is assembled by the passes.
func TestScanOnlyForItsMatrix(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	s := beams(rng, 30, 20, 3, 1, 0)
	path := filepath.Join(t.TempDir(), "s.csv")
	writeMatrixCSV(t, path, s)
	got, err := Load(path, FolderOptions{ScanBeams: true, Pre: 0})
	if err != nil {
		t.Fatal(err)
	}
	if got.scan.usable(got.Values, 0) == nil {
		t.Fatal("no scan of a sorted matrix CSV")
	}
	if got.scan.usable(got.Values, 4) != nil {
		t.Error("a scan with second differences used for --pre 4")
	}
	if k := got.Keep([]int{0, 2, 3}); k.scan.usable(k.Values, 0) != nil {
		t.Error("a scan used for a subset of the channels")
	}
	if k := got.Keep([]int{0, 2, 3}); k.scan.usable(mat.DenseCopyOf(got.Values), 0) != nil {
		t.Error("a scan used for another matrix")
	}
	if plain, _ := ReadMatrixCSV(path); plain.scan != nil {
		t.Error("ReadMatrixCSV scanned without being asked")
	}
}
