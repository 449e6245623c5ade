package pipeline

import (
	"math"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"gonum.org/v1/gonum/mat"
)

// TestPreStepAgainstAllSpectra: the real catalyst-1.00 series (source as urethaneDir) runs
// from its first spectrum on, so --pre 3 counts steps of the reaction as noise repeats.
// The noise model's shape then comes from those steps, and measured against it a step
// looked like noise: 1.73 times it before this check took its noise from second
// differences in time of all the spectra. (With --pre 2 the one step touches the first
// spectrum, which, unlike the rest, is set aside since the spectra's common noise level is
// the whole series' rather than that of the step it is to judge; a step touching a
// spectrum set aside, whose row holds the model, is not judged.) The warning's figure against the series' noise (the one in
// parentheses; the first is against the two spectra's own, TestPreRepeatsOfNoisierSpectra)
// is recomputed here from its definition
// (spectra.StepToNoise: ρ = √(mean_j z_j²), z_j = step_j / (√2 σ_j), the step's drift along
// the axis — a cubic — taken out by weighted least squares, each residual divided by
// √(1 − leverage)) with σ_j a plain per-channel median of |second differences| /
// (0.6745·√6) (normal MAD, common practice), not the tool's pooled estimate, and a plain
// least-squares cubic, not the tool's trimmed one: within 10 % (measured with --pre 2,
// before the first spectrum was set aside: 4.78 against 4.49), and well above 1.
func TestPreStepAgainstAllSpectra(t *testing.T) {
	dir := filepath.Join(urethaneDir, "catalyst-1.00")
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName, s.Pre = []string{dir}, "absorbance", true, 3
	s.Bands, s.Checks = "off", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	re := regexp.MustCompile(`spectrum 3 \(t = [0-9.]+ s\), counted as before the reaction by --pre 3, differs from the one before it by ([0-9.]+) times the noise of the two \(repeats of one state differ by about 1; ([0-9.]+) times the series' noise`)
	var rho float64
	for _, w := range r.Warnings {
		if m := re.FindStringSubmatch(w); m != nil {
			t.Log(w)
			rho, _ = strconv.ParseFloat(m[2], 64)
		}
	}
	if rho == 0 {
		t.Fatalf("no warning names spectrum 3 as changed: %q", r.Warnings)
	}
	ser, err := spectra.Load(dir, spectra.FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	n, m := ser.Values.Dims()
	// z_j = step_j/(√2 σ_j) on the channels observed in both, then the drift taken out:
	// the residual of the least-squares fit of the Legendre polynomials P_0 … P_3 of the
	// channel index (each scaled like z), by gonum's QR, each residual divided by
	// √(1 − h_j) (its leverage; Draper & Smith 1998).
	sec := make([]float64, n-2)
	var z, sds []float64
	var cols []int
	for j := 0; j < m; j++ {
		for i := 1; i+1 < n; i++ {
			sec[i-1] = math.Abs(ser.Values.At(i+1, j) - 2*ser.Values.At(i, j) + ser.Values.At(i-1, j))
		}
		sort.Float64s(sec)
		sd := sec[len(sec)/2] / 0.6744897501960817 / math.Sqrt(6)
		if sd == 0 || r.Blind.Has(1, j) || r.Blind.Has(2, j) {
			continue
		}
		z = append(z, (ser.Values.At(2, j)-ser.Values.At(1, j))/(math.Sqrt2*sd))
		cols, sds = append(cols, j), append(sds, sd)
	}
	x := mat.NewDense(len(z), 4, nil)
	for a, j := range cols {
		u := 2*float64(j)/float64(m-1) - 1
		for k, pk := range []float64{1, u, (3*u*u - 1) / 2, (5*u*u*u - 3*u) / 2} {
			x.Set(a, k, pk/(math.Sqrt2*sds[a]))
		}
	}
	var qr mat.QR
	qr.Factorize(x)
	var q mat.Dense
	qr.QTo(&q)
	var ss float64
	for a := range z {
		fit, lev := 0.0, 0.0
		for k := 0; k < 4; k++ {
			var c float64
			for b := range z {
				c += q.At(b, k) * z[b]
			}
			fit += c * q.At(a, k)
			lev += q.At(a, k) * q.At(a, k)
		}
		e := (z[a] - fit) / math.Sqrt(1-lev)
		ss += e * e
	}
	cnt := len(z)
	want := math.Sqrt(ss / float64(cnt))
	if math.Abs(rho/want-1) > 0.1 || rho < 2 {
		t.Errorf("step of spectrum 3: %.3g times the noise in the warning, %.3g recomputed; want within 10 %% and above 2", rho, want)
	}
	t.Logf("step of spectrum 3: %.3g times the noise in the warning, %.3g recomputed", rho, want)
}
