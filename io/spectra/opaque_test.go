package spectra

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// opaqueExport is an absorbance export against an empty reference (as ATR
// against the empty crystal) with detector noise constant in counts: I =
// 10^(−A) + σ_I·ε relative to the reference's light, A_obs = −log10 I
// (the definition of absorbance, IUPAC Gold Book), written as capAt where
// the beam is at or below zero or A_obs is above it (common practice). The
// sample has a reaction's bands (0.4 falling at 1700, 0.5 rising at 1400
// cm⁻¹), a constant opaque band of absorbance top at 1550 cm⁻¹ (Gaussian,
// 40 cm⁻¹ at half height) and, when gas is true, a sharp gas line at 1250
// cm⁻¹ whose absorbance of about 0.01 fluctuates 40 times the typical
// noise from spectrum to spectrum (a beam path's changing air). It returns
// the export and the opaque band's absorbance per channel.
func opaqueExport(n int, sigI, top, capAt float64, gas bool, seed uint64) (*Series, []float64) {
	m := 301
	s := &Series{AxisName: "wavenumber", Source: "sim.csv", Values: mat.NewDense(n, m, nil)}
	rng := rand.New(rand.NewPCG(seed, 2026))
	band := make([]float64, m)
	for j := 0; j < m; j++ {
		nu := 1800 - 2*float64(j)
		s.Axis = append(s.Axis, nu)
		band[j] = top * math.Exp(-4*math.Ln2*sq((nu-1550)/40))
	}
	typical := sigI / math.Ln10 // σ_A where A ≈ 0 (propagation of error)
	for i := 0; i < n; i++ {
		s.Times = append(s.Times, 30*float64(i))
		x := 1 - math.Exp(-float64(i)/float64(n/3))
		for j, nu := range s.Axis {
			a := 0.4*(1-x)*math.Exp(-0.5*sq((nu-1700)/14)) + 0.5*x*math.Exp(-0.5*sq((nu-1400)/18)) + band[j]
			beam := math.Pow(10, -a) + sigI*rng.NormFloat64()
			v := -math.Log10(beam)
			if beam <= 0 || v > capAt {
				v = capAt
			}
			if gas && nu == 1250 {
				v += 0.01 + 40*typical*rng.NormFloat64()
			}
			s.Values.Set(i, j, v)
		}
	}
	return s, band
}

// An opaque band in absorbance input is blind whole, and only it: by propagation of
// error through A = −log10 I with noise constant in counts, σ_A = σ_I/(I ln 10)
// (analytic), so the band's own scatter is 10^A_band times the typical channel's (1000
// times at A = 3, checked at A = 2 within a factor 1.5: a median of 38 second
// differences), and every channel with A_band ≥ log10 30 must be blind in every
// spectrum; the band ends where its noise is back near the typical, so channels with
// A_band < 0.05 (12 % more noise) stay in the fit. A gas line 40 times noisier at an
// absorbance of 0.01 is not dark and stays too. One note names the range. Before, only
// the channels noisier than 0.145 absorbance (A_band above about 2.3) were blind, and
// the flanks, 30 to 200 times noisier, stayed in the fit.
func TestOpaqueBandIsBlind(t *testing.T) {
	const sigI = 1e-3
	s, band := opaqueExport(40, sigI, 3.5, 4, true, 7)
	b, sigma, _, _, _ := absorbanceNoise(s.Values, s.Times, 0)
	if b == nil || len(b.Opaque) != 1 {
		var runs [][2]int
		if b != nil {
			runs = b.Opaque
		}
		t.Fatalf("opaque runs %v, want one", runs)
	}
	own, cnt := channelScales(timeDiffs{v: s.Values, line: lineWeights(s.Times)})
	typical := typicalOwn(own, cnt)
	gone := b.Everywhere(len(s.Axis))
	at2 := -1
	for j, a := range band {
		switch {
		case a >= math.Log10(opaqueOverTypical) && !gone[j]:
			t.Errorf("%g cm⁻¹ (band absorbance %.2f, noise %.0f× the typical by σ_I/(I ln 10)) not blind", s.Axis[j], a, math.Pow(10, a))
		case a < 0.05 && gone[j]:
			t.Errorf("%g cm⁻¹ (band absorbance %.3f) blind", s.Axis[j], a)
		}
		if at2 < 0 || math.Abs(a-2) < math.Abs(band[at2]-2) {
			at2 = j
		}
	}
	want := math.Pow(10, band[at2])
	if got := own[at2] / typical; got < want/1.5 || got > want*1.5 {
		t.Errorf("scatter at band absorbance %.2f is %.0f× the typical, want %.0f× (σ_A = σ_I/(I ln 10)) within 1.5×", band[at2], got, want)
	}
	gasCh := 275 // 1250 cm⁻¹
	if gone[gasCh] || b.Has(0, gasCh) {
		t.Errorf("the gas line at %g cm⁻¹ (absorbance 0.01) is blind", s.Axis[gasCh])
	}
	if own[gasCh] < opaqueOverTypical*typical {
		t.Errorf("the gas line's scatter is %.0f× the typical: the case does not test the level rule", own[gasCh]/typical)
	}
	if len(sigma) != len(s.Axis) {
		t.Fatalf("σ has %d channels", len(sigma))
	}
	notes := absorbanceBlindNotes(s, b)
	r := b.Opaque[0]
	where := fmt.Sprintf("wavenumber %g–%g", s.Axis[r[0]], s.Axis[r[1]])
	if len(notes) != 1 || !strings.Contains(notes[0], where) || !strings.Contains(notes[0], "opaque band") {
		t.Errorf("notes %q: want one note naming %s as an opaque band", notes, where)
	}
}

// Without an opaque band nothing changes: the same export with the band left out
// has no opaque run and no blind point (its noise is the detector's alone).
func TestNoOpaqueBandNoBlind(t *testing.T) {
	s, _ := opaqueExport(40, 1e-3, 0, 4, true, 7)
	b, _, _, _, _ := absorbanceNoise(s.Values, s.Times, 0)
	if b != nil {
		t.Errorf("blind %d points, opaque runs %v; want none", b.Count, b.Opaque)
	}
}
