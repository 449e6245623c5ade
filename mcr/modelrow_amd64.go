//go:build amd64 && !noasm && !gccgo && !safe

package mcr

// modelRow sets dst to row i of C Sᵀ, dst[j] = x · s_j for x the row of C
// (k entries) and s_j row j of S (s holds S's rows stride apart, k ≤
// stride), each entry the value mat.Dense.Mul of C and Sᵀ gives it: gonum's
// Dgemm with the second factor transposed forms every entry as one call of
// its dot kernel (internal/asm/f64 DotUnitary, the amd64 assembly built
// unless the noasm, gccgo or safe tag is given), added to the zeroed output
// with α = 1. The kernel keeps four sums from +0, lane l taking the terms
// l ≡ 0, 1, 2, 3 (mod 4) of the leading multiples of four, lane 0 then the
// remaining one to three terms in order, and returns (s0 + s2) + (s1 + s3);
// the conversions keep each product rounded on its own (no fused
// multiply–add), as MULPD then ADDPD do. Here the sums run inline: at a few
// components the kernel's call per entry cost more than its work (the model
// of 2000 × 3001 data at k = 5 took 0.046 s CPU through Dgemm). Dgemm
// splits the inner sum in blocks of 64 terms; callers use this for k ≤ 64
// only (maxModelK).
func modelRow(dst, x, s []float64, stride int) {
	switch len(x) {
	case 1, 2, 3:
		modelRowShort(dst, x, s, stride)
	case 4:
		modelRow4(dst, x, s, stride)
	case 5:
		modelRow5(dst, x, s, stride)
	default:
		modelRowAny(dst, x, s, stride)
	}
}

// modelRowShort is modelRow for one to three terms: the kernel's tail
// alone, the plain sum from +0 in index order (added to +0 again by Dgemm,
// which changes no value the squares see: only −0 becomes +0).
func modelRowShort(dst, x, s []float64, stride int) {
	k := len(x)
	for j := range dst {
		y := s[j*stride : j*stride+k : j*stride+k]
		v := 0.0
		for l, xl := range x {
			v += float64(xl * y[l])
		}
		dst[j] = v
	}
}

// modelRow4 is one pass of the kernel's loop: ((0 + x0y0) + (0 + x2y2)) +
// ((0 + x1y1) + (0 + x3y3)).
func modelRow4(dst, x, s []float64, stride int) {
	x0, x1, x2, x3 := x[0], x[1], x[2], x[3]
	for j := range dst {
		y := s[j*stride : j*stride+4 : j*stride+4]
		var s0, s1, s2, s3 float64
		s0 += float64(x0 * y[0])
		s1 += float64(x1 * y[1])
		s2 += float64(x2 * y[2])
		s3 += float64(x3 * y[3])
		dst[j] = (s0 + s2) + (s1 + s3)
	}
}

// modelRow5 is one pass of the loop and one term of the tail, added to
// lane 0.
func modelRow5(dst, x, s []float64, stride int) {
	x0, x1, x2, x3, x4 := x[0], x[1], x[2], x[3], x[4]
	for j := range dst {
		y := s[j*stride : j*stride+5 : j*stride+5]
		var s0, s1, s2, s3 float64
		s0 += float64(x0 * y[0])
		s1 += float64(x1 * y[1])
		s2 += float64(x2 * y[2])
		s3 += float64(x3 * y[3])
		s0 += float64(x4 * y[4])
		dst[j] = (s0 + s2) + (s1 + s3)
	}
}

// modelRowAny is the kernel's sums for any k.
func modelRowAny(dst, x, s []float64, stride int) {
	k := len(x)
	for j := range dst {
		y := s[j*stride : j*stride+k : j*stride+k]
		var s0, s1, s2, s3 float64
		l := 0
		for ; l+4 <= k; l += 4 {
			s0 += float64(x[l] * y[l])
			s1 += float64(x[l+1] * y[l+1])
			s2 += float64(x[l+2] * y[l+2])
			s3 += float64(x[l+3] * y[l+3])
		}
		for ; l < k; l++ {
			s0 += float64(x[l] * y[l])
		}
		dst[j] = (s0 + s2) + (s1 + s3)
	}
}
