//go:build !purego

package product

import "golang.org/x/sys/cpu"

// haveAVX2 says whether the processor has AVX2 and the operating system
// saves the ymm registers across context switches (cpu.X86.HasAVX2 checks
// both, CPUID and XGETBV): then the tiles of wide_amd64.s do the wide
// products (widevec.go), else the Go loops of wide.go.
var haveAVX2 = cpu.X86.HasAVX2

// Register tiles of wide_amd64.s: 4 rows by 12, 8 or 4 columns of sums.
//
//go:noescape
func tile4x12(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)

//go:noescape
func tile4x8(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)

//go:noescape
func tile4x4(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int)

// prefetch is how many steps ahead the tiles ask for the lines of a they
// will read: in the transposed product each step is a new row of a, far
// from the last, which the processor's own prefetch does not foresee (32
// steps measured 10–30 % faster than none on 2000 × 3001 by 34 columns,
// on the shared machine; it made little difference to D X, whose rows of a
// are read in order).
const prefetch = 32

// The same for 1–3, 5–7 and 9–11 columns: the last group of four columns
// is loaded and stored under mask (the first w%4 of its lanes).
//
//go:noescape
func tile4x4m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)

//go:noescape
func tile4x8m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)

//go:noescape
func tile4x12m(o *float64, so int, a *float64, ar, al int, b *float64, bl int, n, pf int, mask *uint64)

// tile4 adds Σ_l a_r(l) b(l) to row r of o (r = 0…3, w = 1…12 columns),
// l = 0…n−1 ascending, a_r(l) = a[r·ar + l·al], b(l) = b[l·bl : l·bl+w],
// row r of o at o[r·so:]. The bounds are checked here, once, since the
// assembly reads and writes without checks.
func tile4(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, w int) {
	if n <= 0 {
		return
	}
	_ = o[3*so+w-1]
	_ = a[3*ar+(n-1)*al]
	_ = b[(n-1)*bl+w-1]
	pf := prefetch * al * 8 // in bytes; a prefetch past the end of a never faults
	var mask [4]uint64      // the lanes of the last group of four that are columns
	for c := range (w-1)%4 + 1 {
		mask[c] = 1 << 63
	}
	switch {
	case w == 12:
		tile4x12(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf)
	case w > 8:
		tile4x12m(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, &mask[0])
	case w == 8:
		tile4x8(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf)
	case w > 4:
		tile4x8m(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, &mask[0])
	case w == 4:
		tile4x4(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf)
	case w > 0:
		tile4x4m(&o[0], so, &a[0], ar, al, &b[0], bl, n, pf, &mask[0])
	default:
		panic("product: tile4 takes 1 to 12 columns")
	}
}
