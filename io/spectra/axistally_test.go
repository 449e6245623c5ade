package spectra

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Linear interpolation at a fraction f of a spacing is (1−f)·y_k + f·y_{k+1};
// for independent y of variance σ² its variance is ((1−f)² + f²)·σ²
// (variance of a linear combination of independent variables; any
// statistics text): σ²/2 halfway.
func TestInterpolationNoiseAnalytic(t *testing.T) {
	x := []float64{0, 1, 2, 3, 4}
	for _, c := range []struct {
		target []float64
		want   float64
	}{
		{[]float64{0, 1, 2, 3}, 1},                                      // on the points
		{[]float64{0.5, 1.5, 2.5, 3.5}, math.Sqrt(0.5)},                 // halfway
		{[]float64{0.25, 1.25}, math.Sqrt(0.75*0.75 + 0.25*0.25)},       // a quarter
		{[]float64{0.5, 2}, math.Sqrt((0.5 + 1) / 2)},                   // root mean of the variances
		{[]float64{3.5, 2.5, 1.5}, math.Sqrt(0.5)},                      // order of the targets
		{[]float64{0.998, 1.998}, math.Sqrt(0.998*0.998 + 0.002*0.002)}, // 0.2 % below a point
	} {
		if got := interpolationNoise(x, c.target); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("targets %v: %.15g, want %.15g", c.target, got, c.want)
		}
	}
	// The same on a descending axis, as spectra are written (4000 → 1000).
	if got := interpolationNoise([]float64{4, 3, 2, 1, 0}, []float64{3.5, 0.5}); math.Abs(got-math.Sqrt(0.5)) > 1e-12 {
		t.Errorf("descending axis: %g, want √0.5", got)
	}
}

// What Resample does to white noise: the standard deviation of noise
// interpolated halfway is √0.5 of the original's (as above). 40000 normal
// values (seeded) give the ratio to about 0.4 % (the standard error of a
// sample standard deviation is σ/√(2n)); 2 % is far outside chance.
func TestResampledNoiseIsLower(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	n := 40000
	x, y, target := make([]float64, n), make([]float64, n), make([]float64, n-1)
	for i := range x {
		x[i], y[i] = float64(i), rng.NormFloat64()
	}
	for i := range target {
		target[i] = float64(i) + 0.5
	}
	v, err := Resample(x, y, target)
	if err != nil {
		t.Fatal(err)
	}
	sd := func(a []float64) float64 {
		m, s := 0.0, 0.0
		for _, u := range a {
			m += u
		}
		m /= float64(len(a))
		for _, u := range a {
			s += (u - m) * (u - m)
		}
		return math.Sqrt(s / float64(len(a)-1))
	}
	ratio := sd(v) / sd(y)
	if want := interpolationNoise(x, target); math.Abs(ratio-want) > 0.02 {
		t.Errorf("interpolated noise %.4f of the original, the model says %.4f", ratio, want)
	}
}

// writeAxisFolder writes four single beams; files from `from` on are on
// the axis moved by shift (in axis units), at a spacing of 1.929 cm⁻¹ as in
// a 4000–1000 cm⁻¹ export of 1556 points.
func writeAxisFolder(t *testing.T, shift float64, from int) string {
	t.Helper()
	dir := t.TempDir()
	const h = 1.929
	for f := 0; f < 4; f++ {
		var b strings.Builder
		b.WriteString("wavenumber,intensity\n")
		for j := 0; j < 40; j++ {
			x := 1100 - h*float64(j)
			if f >= from {
				x += shift
			}
			fmt.Fprintf(&b, "%.6f,%g\n", x, 1000+10*float64(j%7)+float64(f))
		}
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("scan_%03d.csv", (f+1)*30)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// Half a spacing off from the third file on: --resample interpolates two of
// four, and one note says how many, from which, and that their noise is
// √0.5 of the others'; without --resample the files are refused.
func TestResampleNote(t *testing.T) {
	dir := writeAxisFolder(t, 1.929/2, 2)
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true, Resample: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Notes) != 1 {
		t.Fatalf("notes %q, want one", s.Notes)
	}
	for _, part := range []string{"--resample: 2 of 4 spectra were interpolated", "axis of scan_030.csv", "the first scan_090.csv at 90 s", "noise is lower, 0.71×", "does not account"} {
		if !strings.Contains(s.Notes[0], part) {
			t.Errorf("note %q lacks %q", s.Notes[0], part)
		}
	}
	if _, err := ReadFolder(dir, FolderOptions{TimesFromName: true}); err == nil || !strings.Contains(err.Error(), "use --resample") {
		t.Errorf("without --resample: %v", err)
	}
	// On one axis: no note.
	s, err = ReadFolder(writeAxisFolder(t, 0, 2), FolderOptions{TimesFromName: true, Resample: true})
	if err != nil || len(s.Notes) != 0 {
		t.Errorf("one axis: notes %q, err %v", s.Notes, err)
	}
}

// An axis 0.004 cm⁻¹ off at a 1.929 cm⁻¹ spacing (0.21 %, an export's
// rounding) is taken as the first file's, values as written, with or
// without --resample, and said in a note; 2 % off (beyond the 1 % slack)
// still needs --resample.
func TestRoundedAxisTaken(t *testing.T) {
	dir := writeAxisFolder(t, 0.004, 1)
	for _, resample := range []bool{false, true} {
		s, err := ReadFolder(dir, FolderOptions{TimesFromName: true, Resample: resample})
		if err != nil {
			t.Fatalf("resample %v: %v", resample, err)
		}
		if _, m := s.Values.Dims(); m != 40 || s.Axis[0] != 1100 {
			t.Errorf("resample %v: %d points from %g, want the first file's 40 from 1100", resample, m, s.Axis[0])
		}
		if got, want := s.Values.At(3, 5), 1000+10*5.0+3; got != want {
			t.Errorf("resample %v: value %g, written %g", resample, got, want)
		}
		if len(s.Notes) != 1 || !strings.Contains(s.Notes[0], "3 of 4 spectra (the first scan_060.csv) lie on axes up to 0.004 cm⁻¹ (0.21 % of a point spacing) off that of scan_030.csv") {
			t.Errorf("resample %v: notes %q", resample, s.Notes)
		}
	}
	if _, err := ReadFolder(writeAxisFolder(t, 0.02*1.929, 1), FolderOptions{TimesFromName: true}); err == nil || !strings.Contains(err.Error(), "use --resample") {
		t.Errorf("2 %% off without --resample: %v", err)
	}
}
