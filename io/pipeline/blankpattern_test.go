package pipeline

import (
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A blank as noisy as the samples puts one fixed noise pattern in every
// absorbance spectrum (A = −log₁₀(I/I_blank): the blank's noise enters every
// row alike). Data made exactly under the model (A → B → C, Bateman 1910,
// noise constant in counts relative to the envelope) must not be said to
// disagree with any constraint, in any of 10 noise draws.
func TestNoConstraintWarningWithNoisyBlank(t *testing.T) {
	for draw := uint64(1); draw <= 10; draw++ {
		d := makeBateman(t, 6e-3, 2e-3, 2e-4, draw, 3)
		rng := rand.New(rand.NewPCG(draw, 7))
		for j := range d.blank {
			d.blank[j] *= 1 + 2e-4*rng.NormFloat64()
		}
		thin(d)
		series, blank := d.write(t)
		s := NewSettings()
		s.Data, s.Kind, s.Blanks, s.Pre, s.Components = []string{series}, "single-beam", []string{blank}, 3, "3"
		s.Bands, s.Replicates = "off", 0
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		for _, w := range r.Warnings {
			if strings.Contains(w, "disagree") {
				t.Errorf("draw %d: %s", draw, w)
			}
		}
	}
}

// thin keeps every second axis point (half the work per run; the bands stay
// 7+ points wide). All spectra are kept: the blank's pattern costs in
// proportion to their number, the pinned values' allowance does not.
func thin(d *synth) {
	var times, axis, blank []float64
	for i := 0; i < len(d.times); i++ {
		times = append(times, d.times[i])
	}
	for j := 0; j < len(d.axis); j += 2 {
		axis = append(axis, d.axis[j])
		blank = append(blank, d.blank[j])
	}
	beams := mat.NewDense(len(times), len(axis), nil)
	for i := range times {
		for j := range axis {
			beams.Set(i, j, d.beams.At(i, 2*j))
		}
	}
	d.times, d.axis, d.blank, d.beams = times, axis, blank, beams
}
