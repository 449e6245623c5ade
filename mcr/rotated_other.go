//go:build !amd64 || purego

package mcr

// havePanels is false off amd64 and under the purego build tag: rotatedRows
// forms every row in Go.
const havePanels = false

// rotatedPanels is never called without havePanels.
func rotatedPanels(out, minus *float64, clipped *uint64, xp, vt *float64, nnm, spread *uint64, k, panels int) {
	panic("mcr: no vector rows in this build")
}
