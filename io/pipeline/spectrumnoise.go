package pipeline

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
)

// Each spectrum's own noise level (spectra.SpectrumNoise): of the
// absorbance for absorbance and difference input, of the detector (in
// single-beam units) for single beams; said, and written, only when the
// weights follow it, so that a series whose spectra are equally noisy
// keeps every output.

// spectrumNoiseOf is experiment e's per-spectrum noise when its weights
// follow it, else nil.
func spectrumNoiseOf(e *Experiment) *spectra.SpectrumNoise {
	if e.Assembled == nil || e.Assembled.Noise.Spectra == nil || !e.Assembled.Noise.Spectra.Varies {
		return nil
	}
	return e.Assembled.Noise.Spectra
}

// weightsPerSpectrum says whether some experiment's weights follow its
// spectra's own noise levels.
func weightsPerSpectrum(r *Result) bool {
	for _, e := range r.Experiments {
		if spectrumNoiseOf(e) != nil {
			return true
		}
	}
	return false
}

// spectrumLevels are the least and largest noise level over experiment e's
// spectra, σ_i = f_i · median_j σ_j, in the units of e's noise
// (levelUnits).
func spectrumLevels(e *Experiment, sn *spectra.SpectrumNoise) (lo, hi float64) {
	level := medianOf(e.Assembled.Noise.Channel)
	lo = math.Inf(1)
	for _, f := range sn.Factor {
		lo, hi = math.Min(lo, f*level), math.Max(hi, f*level)
	}
	return lo, hi
}

// spectrumNoiseSummary is summary.json's spectrum_noise: every experiment
// that was judged, when some experiment's weights follow its spectra.
func spectrumNoiseSummary(r *Result) []output.SpectrumNoiseJSON {
	if !weightsPerSpectrum(r) || !weighted(r) {
		return nil
	}
	var out []output.SpectrumNoiseJSON
	for i, e := range r.Experiments {
		if e.Assembled == nil || e.Assembled.Noise.Spectra == nil {
			continue
		}
		sn := e.Assembled.Noise.Spectra
		lo, hi := spectrumLevels(e, sn)
		js := output.SpectrumNoiseJSON{Experiment: i + 1, WeightsPerSpectrum: sn.Varies,
			NoiseSDMin: round(lo), NoiseSDMax: round(hi), Ratio: round(sn.Ratio()), PValue: round(sn.P), Test: sn.Test()}
		if e.Assembled.Noise.Unit == singleBeamUnits {
			js.Unit = singleBeamUnits
		}
		out = append(out, js)
	}
	return out
}

// spectrumNoiseNotes says, for each experiment whose weights follow its
// spectra, how far their noise differs and how that was decided.
func spectrumNoiseNotes(r *Result) []string {
	if !weighted(r) {
		return nil
	}
	var notes []string
	for i, e := range r.Experiments {
		sn := spectrumNoiseOf(e)
		if sn == nil {
			continue
		}
		lo, hi := spectrumLevels(e, sn)
		which := ""
		if len(r.Experiments) > 1 {
			which = fmt.Sprintf(" of experiment %d", i+1)
		}
		level := fmt.Sprintf("σ from %.3g to %.3g absorbance", lo, hi)
		if e.Assembled.Noise.Unit == singleBeamUnits {
			level = fmt.Sprintf("detector noise from %.3g to %.3g in single-beam units", lo, hi)
		}
		notes = append(notes, fmt.Sprintf("the spectra%s differ in noise: %s, the noisiest %.3g× the quietest (%s); each spectrum is weighted by its own 1/σ² (noise_spectra.csv noise_sd), not by one level for all", which, level, sn.Ratio(), sn.Test()))
	}
	return notes
}
