//go:build !purego

package product

import "golang.org/x/sys/cpu"

// haveAVX512 says whether the processor has AVX-512 (its foundation set)
// besides AVX2 and the operating system saves the zmm and mask registers
// (cpu.X86.HasAVX512F checks both): then the wide products of more than
// eight columns take the tiles of wide512_amd64.s, eight output columns to
// a register instead of four. Measured on the shared machine (an AMD
// processor of the Zen 5 family, whose vector units are 512 bits wide;
// GOMAXPROCS 1, 2000 × 3001 by 34 columns, process CPU per product): D X
// 12.5–13.1 ms on the AVX2 tiles, 6.6–6.7 on these; Dᵀ Y 14.5–17.5 against
// 8.1–10.9. Each row of a is read once per product instead of once per
// twelve columns, and each multiply and add does eight terms.
var haveAVX512 = cpu.X86.HasAVX512F && cpu.X86.HasAVX2

// Register tiles of wide512_amd64.s: 4 rows by 16, 24, 32 or 40 columns of
// sums, the last group of eight under mask.
//
//go:noescape
func tile4x16z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)

//go:noescape
func tile4x24z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)

//go:noescape
func tile4x32z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)

//go:noescape
func tile4x40z(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask uint64)

// tile4z is tile4 on the AVX-512 tiles for w = 9…40 columns.
func tile4z(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, w int) {
	if n <= 0 {
		return
	}
	_ = o[3*so+w-1]
	_ = a[3*ar+(n-1)*al]
	_ = b[(n-1)*bl+w-1]
	pf := prefetch * al * 8
	mask := uint64(1)<<((w-1)%8+1) - 1 // the lanes of the last group that are columns
	switch (w + 7) / 8 {
	case 2:
		tile4x16z(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, mask)
	case 3:
		tile4x24z(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, mask)
	case 4:
		tile4x32z(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, mask)
	case 5:
		tile4x40z(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, mask)
	default:
		panic("product: tile4z takes 9 to 40 columns")
	}
}

// tileRow4z is tileRow4 on the AVX-512 tiles: k columns in tiles of 40,
// the last one or two of 9 to 40 (a rest of 41 to 48 is split 32 and 9 to
// 16, so that no tile has a single group of eight). Up to twelve columns
// take the AVX2 tiles, which fill their lanes better there (at 9 to 12
// columns the two ran within a few per cent of each other; from 13 on
// these took 25–45 % less time: 2000 × 3001, GOMAXPROCS 1).
func tileRow4z(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, k int) {
	if k <= 12 {
		tileRow4(o, so, a, ar, al, b, bl, n, k)
		return
	}
	for c := 0; c < k; {
		w := k - c
		switch {
		case w > 48:
			w = 40
		case w > 40:
			w = 32
		}
		tile4z(o[c:], so, a, ar, al, b[c:], bl, n, w)
		c += w
	}
}
