//go:build !amd64 || purego

package mcr

// haveEnvelopeLanes is false off amd64 and under the purego build tag:
// lowerEnvelope4 clips every point in Go.
const haveEnvelopeLanes = false

// envelopePass4 is never called without haveEnvelopeLanes.
func envelopePass4(y, fit, qt, q *float64, blocks int, c, next *[4]float64) bool {
	panic("mcr: no vector envelope in this build")
}
