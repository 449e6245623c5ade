//go:build !purego

package mcr

import "golang.org/x/sys/cpu"

// haveEnvelopeLanes says whether lowerEnvelope4 clips four points at a time
// in the lanes of envelope_amd64.s: the processor has AVX2 and the
// operating system saves the ymm registers (cpu.X86.HasAVX2 checks both).
var haveEnvelopeLanes = cpu.X86.HasAVX2

// envelopePass4 runs one clipping iteration of lowerEnvelope4 over blocks
// blocks of four points (envelope_amd64.s): y and fit from the first point,
// qt the basis block-transposed (transposeBlocks4), q row-major, c the
// coefficients of the fit; the running sums of the next coefficients are
// written to next, and it says whether any point was clipped.
//
//go:noescape
func envelopePass4(y, fit, qt, q *float64, blocks int, c, next *[4]float64) bool
