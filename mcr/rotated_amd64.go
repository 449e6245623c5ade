//go:build !purego

package mcr

import "golang.org/x/sys/cpu"

// havePanels says whether rotatedRows forms its rows four at a time in the
// lanes of rotated_amd64.s: the processor has AVX2 and the operating system
// saves the ymm registers (cpu.X86.HasAVX2 checks both).
var havePanels = cpu.X86.HasAVX2

// rotatedPanels forms rows 4p … 4p+3 of X·V for every panel p < panels
// (rotated_amd64.s): out and minus row-major from their first row, clipped
// a word per row, xp the rows in panels (rowPanels), vt = Vᵀ, nnm the
// columns' masks (all ones when non-negative), spread the table of
// spreadBits, k ≤ 16.
//
//go:noescape
func rotatedPanels(out, minus *float64, clipped *uint64, xp, vt *float64, nnm, spread *uint64, k, panels int)
