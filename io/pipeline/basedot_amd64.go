//go:build amd64 && !noasm && !gccgo && !safe

package pipeline

// baselineDot is x · y (len(y) ≥ len(x)) with the roundings of gonum's dot
// kernel on amd64 (internal/asm/f64 DotUnitary, the assembly built unless
// the noasm, gccgo or safe tag is given): four sums from +0, lane l taking
// the terms i ≡ l (mod 4) of the leading multiples of four, lane 0 then the
// remaining one to three terms in order, and the result (s0 + s2) + (s1 + s3).
// The conversions keep each product rounded on its own (no fused
// multiply–add), as MULPD then ADDPD do.
func baselineDot(x, y []float64) float64 {
	var s0, s1, s2, s3 float64
	y = y[:len(x)]
	i := 0
	for ; i+4 <= len(x); i += 4 {
		s0 += float64(x[i] * y[i])
		s1 += float64(x[i+1] * y[i+1])
		s2 += float64(x[i+2] * y[i+2])
		s3 += float64(x[i+3] * y[i+3])
	}
	for ; i < len(x); i++ {
		s0 += float64(x[i] * y[i])
	}
	return (s0 + s2) + (s1 + s3)
}

// baselineRow4 is lessBaseline's row for four terms: one pass of the
// kernel's loop, ((0 + x0y0) + (0 + x2y2)) + ((0 + x1y1) + (0 + x3y3)). p
// holds P's rows from the row of src[0] on, stride apart.
func baselineRow4(dst, src, bi, p []float64, stride int) {
	b0, b1, b2, b3 := bi[0], bi[1], bi[2], bi[3]
	dst = dst[:len(src)]
	for j, v := range src {
		q := p[:4:4]
		var s0, s1, s2, s3 float64
		s0 += float64(b0 * q[0])
		s1 += float64(b1 * q[1])
		s2 += float64(b2 * q[2])
		s3 += float64(b3 * q[3])
		dst[j] = v - ((s0 + s2) + (s1 + s3))
		if j+1 < len(src) {
			p = p[stride:]
		}
	}
}

// baselineRowShort is lessBaseline's row for one to three terms: the
// kernel's tail alone, the plain sum from +0 in index order.
func baselineRowShort(dst, src, bi, p []float64, stride int) {
	nb := len(bi)
	dst = dst[:len(src)]
	for j, v := range src {
		q := p[:nb:nb]
		s := 0.0
		for l, x := range bi {
			s += float64(x * q[l])
		}
		dst[j] = v - s
		if j+1 < len(src) {
			p = p[stride:]
		}
	}
}
