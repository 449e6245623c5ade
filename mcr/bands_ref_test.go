package mcr

import (
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// The range search's objective written out directly on gonum matrices, as
// FeasibleBands' documentation states it (the form the search used before
// costWork): the reference the fast evaluation is checked against.

// cost is the reference: sign·log f_j + μ·penalty at θ, and its gradient into g when non-nil.
func (p *bandProblem) cost(j int, sign, mu float64, theta, g []float64) (float64, bool) {
	t := p.rotation(theta)
	a, b, tinvT, ok := p.rotate(t)
	if !ok {
		// Outside the region where T is invertible: a high wall, flat so
		// the line search steps back.
		for i := range g {
			g[i] = 0
		}
		return 1e6, false
	}
	k := p.k
	var ga, gb *mat.Dense
	if g != nil {
		ga, gb = mat.NewDense(p.n, k, nil), mat.NewDense(p.m, k, nil)
	}
	var pen float64
	if p.allow > 0 {
		pen = p.residualPenalty(a, b, ga, gb)
	} else {
		pen = p.penalty(a, b, ga, gb)
	}
	na, nb := math.Sqrt(colNormSq(a, j)), math.Sqrt(colNormSq(b, j))
	if na == 0 || nb == 0 {
		for i := range g {
			g[i] = 0
		}
		return 1e6, false
	}
	// log f rather than f: outside the feasible set f can grow like θ²
	// and outrun a penalty of the same order, log f cannot; the extremes
	// are the same.
	v := sign*(math.Log(na)+math.Log(nb)-math.Log(p.norm)) + mu*pen
	if g == nil {
		return v, true
	}
	// ∂log f/∂a_j = a_j/‖a_j‖², ∂log f/∂b_j = b_j/‖b_j‖².
	for i := 0; i < p.n; i++ {
		ga.Set(i, j, mu*ga.At(i, j)+sign*a.At(i, j)/(na*na))
	}
	for i := 0; i < p.m; i++ {
		gb.Set(i, j, mu*gb.At(i, j)+sign*b.At(i, j)/(nb*nb))
	}
	for jj := 0; jj < k; jj++ {
		if jj == j {
			continue
		}
		for i := 0; i < p.n; i++ {
			ga.Set(i, jj, mu*ga.At(i, jj))
		}
		for i := 0; i < p.m; i++ {
			gb.Set(i, jj, mu*gb.At(i, jj))
		}
	}
	// dT = Cᵀ G_A − T⁻ᵀ G_Bᵀ B.
	var gt, gbB, tmp mat.Dense
	gt.Mul(p.c.T(), ga)
	gbB.Mul(gb.T(), b)
	tmp.Mul(tinvT, &gbB)
	gt.Sub(&gt, &tmp)
	for q, fr := range p.free {
		s := 0.0
		for col, d := range fr.dir {
			s += gt.At(fr.row, col) * d
		}
		g[q] = s
	}
	return v, true
}

// penalty returns Σ over constrained entries of the squared violation,
// scaled per component, and its gradients with respect to A and B.
func (p *bandProblem) penalty(a, b *mat.Dense, ga, gb *mat.Dense) float64 {
	pen := 0.0
	side := func(x *mat.Dense, nn []bool, zero [][]bool, w []float64, g *mat.Dense) {
		r, k := x.Dims()
		for j := 0; j < k; j++ {
			var z []bool
			if j < len(zero) {
				z = zero[j]
			}
			for i := 0; i < r; i++ {
				v := x.At(i, j)
				viol := 0.0
				switch {
				case z != nil && z[i]:
					viol = v
				case nn[j] && v < 0:
					viol = v
				}
				if viol != 0 {
					pen += w[j] * viol * viol
					if g != nil {
						g.Set(i, j, g.At(i, j)+2*w[j]*viol)
					}
				}
			}
		}
	}
	side(a, p.nnC, p.opt.ZeroProfiles, p.wc, ga)
	side(b, p.nnS, p.opt.ZeroSpectra, p.ws, gb)
	return pen
}

// residualPenalty is max(0, rise/allowance − 1)², the search's penalty
// within the noise, with its gradients (into ga, gb when non-nil).
func (p *bandProblem) residualPenalty(a, b, ga, gb *mat.Dense) float64 {
	h := p.rise(a, b, ga, gb)/p.allow - 1
	if h <= 0 {
		h = 0
	}
	if ga != nil {
		ga.Scale(2*h/p.allow, ga)
		gb.Scale(2*h/p.allow, gb)
	}
	return h * h
}

// costWork is cost (the reference above) on the work buffers, as the search
// evaluates it (bandObjective: valueWork, then gradientWork): the same
// function and gradient, without allocating and without forming C T and
// S T⁻ᵀ whole (see valueGram). With g nil only the value.
func (p *bandProblem) costWork(j int, sign, mu float64, theta, g []float64) float64 {
	v := p.valueWork(j, sign, mu, theta)
	if g != nil {
		p.gradientWork(g)
	}
	return v
}

// The fast evaluation (costWork: Gram matrices, margins that skip entries
// provably inside the constraints, no allocation) must give the objective
// and gradient of the direct formula to rounding, with zero windows,
// closure and a known spectrum, exactly and within the noise; and its
// gradient must match central differences (the definition of the
// derivative) where the objective is smooth.
func TestCostWorkMatchesDirectFormula(t *testing.T) {
	const n, m, k = 50, 70, 4
	c, s := bandsBenchPair(n, m, k)
	zp := make([][]bool, k)
	zp[2] = make([]bool, n)
	for i := 0; i < 6; i++ {
		zp[2][i] = true
	}
	zs := make([][]bool, k)
	zs[0] = make([]bool, m)
	for i := 60; i < m; i++ {
		zs[0][i] = true
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, o := range []BandOptions{
		{Mode: Species},
		{Mode: Species, ZeroProfiles: zp, ZeroSpectra: zs},
		{Mode: Species, Closure: true, Known: []bool{false, true, false, false}},
		{Mode: Reactions, NonNegProfiles: []bool{true, false, true, true}},
	} {
		for _, allow := range []float64{0, 1e-3} {
			o.Tolerance = 1e-3
			p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
			if err := p.setup(); err != nil {
				t.Fatal(err)
			}
			p.newWork()
			p.allow = allow
			for trial := 0; trial < 8; trial++ {
				th := make([]float64, len(p.free))
				for i := range th {
					// Small and large moves: the margins hold some
					// entries back and the reference moves.
					th[i] = 0.02 * float64(1+trial%4*10) * rng.NormFloat64()
				}
				want, got := make([]float64, len(th)), make([]float64, len(th))
				j := trial % k
				v1, _ := p.cost(j, 1, 1e4, th, want)
				v2 := p.costWork(j, 1, 1e4, th, got)
				if math.Abs(v1-v2) > 1e-9*math.Max(1, math.Abs(v1)) {
					t.Errorf("%+v allowance %g: objective %.15g, direct %.15g", o.Known, allow, v2, v1)
				}
				for i := range want {
					if math.Abs(want[i]-got[i]) > 1e-7*(1+math.Abs(want[i])) {
						t.Errorf("%+v allowance %g: gradient %d %.12g, direct %.12g", o.Known, allow, i, got[i], want[i])
					}
				}
				if allow > 0 || trial > 0 {
					continue
				}
				// Central differences at the identity's neighbourhood.
				for i := range th {
					h := 1e-6
					th[i] += h
					fp := p.costWork(j, 1, 1e4, th, nil)
					th[i] -= 2 * h
					fm := p.costWork(j, 1, 1e4, th, nil)
					th[i] += h
					if fd := (fp - fm) / (2 * h); math.Abs(fd-got[i]) > 1e-4*(1+math.Abs(fd)) {
						t.Errorf("gradient %d: %.8g, central difference %.8g", i, got[i], fd)
					}
				}
			}
		}
	}
}

// One evaluation of the search allocates nothing (the point of bandWork),
// exactly and within the noise.
func TestCostWorkAllocatesNothing(t *testing.T) {
	c, s := bandsBenchPair(50, 70, 4)
	for _, allow := range []float64{0, 1e-3} {
		p := &bandProblem{c: c, s: s, n: 50, m: 70, k: 4, opt: BandOptions{Mode: Species, Tolerance: 1e-3}}
		if err := p.setup(); err != nil {
			t.Fatal(err)
		}
		p.newWork()
		p.allow = allow
		th := make([]float64, len(p.free))
		for i := range th {
			th[i] = 0.05 * float64(i%3-1)
		}
		g := make([]float64, len(th))
		p.costWork(1, 1, 1e4, th, g) // the reference is set on the first call
		if a := testing.AllocsPerRun(50, func() { p.costWork(1, 1, 1e4, th, g) }); a != 0 {
			t.Errorf("allowance %g: %v allocations per evaluation", allow, a)
		}
	}
}

// Within the noise the clipped rows of C T and S T⁻ᵀ are found either
// through the margin test or by forming the product whole (clippedRows);
// the two must give the same rows, the same entries to the last bit (each
// entry summed in the same order), and the rows and clipped entries the
// constraints define: a row is listed when an entry of a non-negative
// column is below zero or lies in a zero window (FeasibleBands), its
// entries are (C T)_ij to rounding (gonum's product).
func TestClippedRowsBothWaysSame(t *testing.T) {
	const n, m, k = 50, 70, 4
	c, s := bandsBenchPair(n, m, k)
	zp := make([][]bool, k)
	zp[1] = make([]bool, n)
	for i := 10; i < 16; i++ {
		zp[1][i] = true
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for _, o := range []BandOptions{
		{Mode: Species},
		{Mode: Species, ZeroProfiles: zp},
		{Mode: Reactions, NonNegProfiles: []bool{true, false, true, true}},
	} {
		p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
		if err := p.setup(); err != nil {
			t.Fatal(err)
		}
		p.newWork()
		w := p.work
		for trial := 0; trial < 12; trial++ {
			th := make([]float64, len(p.free))
			for i := range th {
				th[i] = 0.03 * float64(1+trial%4*10) * rng.NormFloat64()
			}
			if !p.rotateWork(th) {
				continue
			}
			for _, side := range []struct {
				ms *marginSide
				v  []float64
				x  *mat.Dense
				vm func() *mat.Dense
			}{
				{w.sideC, w.t, c, func() *mat.Dense { return mat.NewDense(k, k, append([]float64(nil), w.t...)) }},
				{w.sideS, w.tinvT, s, func() *mat.Dense { return mat.NewDense(k, k, append([]float64(nil), w.tinvT...)) }},
			} {
				var list, dense clippedRows
				side.ms.denseAbove = math.Inf(1) // the margin test alone
				list.form(side.ms, side.v)       // sizes the storage; no rows yet: the margins
				if list.dense {
					t.Fatal("first evaluation formed whole")
				}
				dense.form(side.ms, side.v) // sizes the storage
				dense.formDense(side.ms, side.v)
				var want mat.Dense
				want.Mul(side.x, side.vm())
				rows, _ := side.x.Dims()
				var wantIdx []int
				for i := 0; i < rows; i++ {
					for j := 0; j < k; j++ {
						if side.ms.zeroAt(i, j) || side.ms.nn[j] && want.At(i, j) < 0 {
							wantIdx = append(wantIdx, i)
							break
						}
					}
				}
				if len(list.idx) != len(dense.idx) || len(list.idx) != len(wantIdx) {
					t.Fatalf("%+v trial %d: %d rows by the margins, %d whole, %d by definition", o.Mode, trial, len(list.idx), len(dense.idx), len(wantIdx))
				}
				r := 0
				list.each(k, func(i int, cols uint64, full, minus []float64) {
					d := dense.idx[r]
					df, dm := dense.full[d*k:d*k+k], dense.minus[d*k:d*k+k]
					if i != d || i != wantIdx[r] {
						t.Fatalf("row %d: %d by the margins, %d whole, %d by definition", r, i, d, wantIdx[r])
					}
					if cols != dense.cols[r] {
						t.Errorf("row %d: clipped columns %b by the margins, %b whole", i, cols, dense.cols[r])
					}
					for j := 0; j < k; j++ {
						if clip := side.ms.zeroAt(i, j) || side.ms.nn[j] && want.At(i, j) < 0; clip != (cols>>j&1 == 1) {
							t.Errorf("row %d entry %d: clipped %v, by definition %v", i, j, cols>>j&1 == 1, clip)
						}
						if math.Float64bits(full[j]) != math.Float64bits(df[j]) || math.Float64bits(minus[j]) != math.Float64bits(dm[j]) {
							t.Errorf("row %d entry %d: %v/%v by the margins, %v/%v whole", i, j, full[j], minus[j], df[j], dm[j])
						}
						if e := want.At(i, j); math.Abs(full[j]-e) > 1e-12*(1+math.Abs(e)) {
							t.Errorf("row %d entry %d: %v, gonum %v", i, j, full[j], e)
						}
					}
					r++
				})
			}
		}
	}
}

// rotatedPanels (the vector lanes of rotated_amd64.s) must give the bits
// of the Go loops of rotatedRows: every entry the sum over l ascending from
// +0 of the rounded products x_il·v_lj (IEEE 754 addition and
// multiplication, each rounded; no fused multiply–add), its clipped part
// where the sign bit is set in a non-negative column, and each row's word
// of clipped columns. Signs are random, a sixth of the entries exactly 0
// (so that +0 and −0 products meet), and k runs over 1 … 16, the widths
// the lanes take; skipped where there is no vector path. Past the whole
// panels (rows beyond the last four, and four rows more) out, minus and
// clipped must keep what they held: the lanes write only the panels asked.
func TestRotatedPanelsSameAsRows(t *testing.T) {
	if !havePanels {
		t.Skip("no vector path on this processor or build")
	}
	rng := rand.New(rand.NewPCG(5, 6))
	for k := 1; k <= 16; k++ {
		for _, rows := range []int{4, 7, 9, 64} {
			x, vt := make([]float64, rows*k), make([]float64, k*k)
			for i := range x {
				if rng.IntN(6) > 0 {
					x[i] = rng.NormFloat64() * math.Exp2(float64(rng.IntN(20)-10))
				}
			}
			for i := range vt {
				vt[i] = rng.NormFloat64()
			}
			nn := make([]uint64, k)
			nnm := make([]uint64, k)
			for j := range nn {
				nn[j] = uint64(rng.IntN(4)/3 ^ 1) // three in four non-negative
				nnm[j] = -nn[j]
			}
			want, wantMinus, wantClip := make([]float64, rows*k), make([]float64, rows*k), make([]uint64, rows)
			rotatedRows(want, wantMinus, wantClip, x, vt, nn, k)
			const mark = 0x7ff8_dead_beef_0001 // a NaN no sum gives
			got, gotMinus, gotClip := make([]float64, (rows+4)*k), make([]float64, (rows+4)*k), make([]uint64, rows+4)
			for i := range got {
				got[i], gotMinus[i] = math.Float64frombits(mark), math.Float64frombits(mark)
			}
			for i := range gotClip {
				gotClip[i] = mark
			}
			xp := rowPanels(x, k)
			rotatedPanels(&got[0], &gotMinus[0], &gotClip[0], &xp[0], &vt[0], &nnm[0], &spreadBits[0], k, rows/4)
			for i := rows / 4 * 4; i < rows+4; i++ {
				if gotClip[i] != mark {
					t.Errorf("k %d rows %d: clipped word of row %d written past the panels", k, rows, i)
				}
				for j := 0; j < k; j++ {
					if e := i*k + j; math.Float64bits(got[e]) != mark || math.Float64bits(gotMinus[e]) != mark {
						t.Errorf("k %d rows %d: entry (%d, %d) written past the panels", k, rows, i, j)
					}
				}
			}
			for i := 0; i < rows/4*4; i++ {
				if gotClip[i] != wantClip[i] {
					t.Errorf("k %d row %d: clipped %b, want %b", k, i, gotClip[i], wantClip[i])
				}
				for j := 0; j < k; j++ {
					e := i*k + j
					s := 0.0
					for l := 0; l < k; l++ {
						s += x[i*k+l] * vt[j*k+l]
					}
					if math.Float64bits(got[e]) != math.Float64bits(want[e]) || math.Float64bits(got[e]) != math.Float64bits(s) || math.Float64bits(gotMinus[e]) != math.Float64bits(wantMinus[e]) {
						t.Errorf("k %d entry (%d, %d): %v/%v, want %v/%v (sum %v)", k, i, j, got[e], gotMinus[e], want[e], wantMinus[e], s)
					}
				}
			}
		}
	}
}

// Every range end must be the bits a search from a freshly made problem
// gives (the project's rule: byte-identical outputs whatever GOMAXPROCS):
// allExtremes' workers keep their buffers and reset them between ends
// (bandWork.reset), so no state may pass from one end to the next, in
// whatever order a worker takes them. Checked within the noise (the
// allowance of a residual at 1 % lack of fit, as BenchmarkFeasibleBands),
// with and without zero windows, at GOMAXPROCS 1 (one worker, ends in
// order) and 2, and on one worker taking the ends in reverse order.
func TestRangeEndsSameAsFreshSearches(t *testing.T) {
	const n, m, k = 40, 60, 4
	c, s := bandsBenchPair(n, m, k)
	zs := make([][]bool, k)
	zs[1] = make([]bool, m)
	for i := 45; i < m; i++ {
		zs[1][i] = true
	}
	rss := 1e-4 * traceProd(gram(c), gram(s))
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, o := range []BandOptions{
		{Mode: Species, ResidualSS: rss},
		{Mode: Species, ResidualSS: rss, ZeroSpectra: zs},
	} {
		o.Tolerance, o.MaxEvaluations, o.Alpha = 1e-3, 4000, 0.05
		p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
		if err := p.setup(); err != nil {
			t.Fatal(err)
		}
		p.newWork()
		p.allow = noiseAllowance(rss, n, m, k, o.Alpha)
		fresh := make([]bandEnd, 2*k)
		for e := range fresh {
			q := *p
			q.newWork()
			fresh[e] = q.end(e/2, 1-2*float64(e%2))
		}
		check := func(how string, got []bandEnd) {
			for e, g := range got {
				w := fresh[e]
				if g.err != nil || w.err != nil || !sameEnd(g, w) {
					t.Errorf("windows %v, %s: end %d: f %v ok %v (%d evaluations), fresh %v ok %v (%d)", o.ZeroSpectra != nil, how, e, g.f, g.ok, g.evals, w.f, w.ok, w.evals)
				}
			}
		}
		for _, procs := range []int{1, 2} {
			runtime.GOMAXPROCS(procs)
			got, err := p.allExtremes(nil)
			if err != nil {
				t.Fatal(err)
			}
			check(fmt.Sprintf("GOMAXPROCS %d", procs), got)
		}
		q := *p
		q.newWork()
		rev := make([]bandEnd, 2*k)
		for e := len(rev) - 1; e >= 0; e-- {
			q.work.reset()
			rev[e] = q.end(e/2, 1-2*float64(e%2))
		}
		check("reverse order", rev)
	}
}

// sameEnd says whether two range ends hold the same bits.
func sameEnd(a, b bandEnd) bool {
	return math.Float64bits(a.f) == math.Float64bits(b.f) && a.ok == b.ok && a.evals == b.evals &&
		vecmath.SameBits(a.profile, b.profile) && vecmath.SameBits(a.spectrum, b.spectrum)
}

// The entries of X·V that break a constraint are found either through the
// margin test or by forming X·V whole (marginSide.collect, whichever
// formedCount says is cheaper), and from the reference at the identity
// either shared by the searches (bandBase) or the side's own. All ways
// must list the same entries in the same order with the same bits (each
// entry summed in entry's order), and those the constraints define
// (FeasibleBands: in a non-negative column below zero, or in a zero
// window), with values equal to gonum's product to rounding. The pair has
// exact zeros, as a non-negative least-squares solution has at its active
// constraints (Lawson & Hanson 1974, ch. 23), so the identity's margins
// hold entries at zero; the rotations walk in steps from 10⁻³ to 0.4, so
// the reference moves and both ways are taken; the row counts leave rows
// past the last panel of four. The shared reference must come out of the
// walk unchanged (a rebase writes the side's own storage).
func TestCollectWholeSameAsMargins(t *testing.T) {
	const n, m, k = 50, 70, 4
	c, s := bandsBenchPair(n, m, k)
	for i := 0; i < 8; i++ {
		c.Set(i, 1, 0)
		s.Set(60+i, 0, 0)
		s.Set(3*i, 3, 0)
	}
	zp := make([][]bool, k)
	zp[2] = make([]bool, n)
	for i := 20; i < 26; i++ {
		zp[2][i] = true
	}
	zs := make([][]bool, k)
	zs[0] = make([]bool, m)
	for i := 0; i < 5; i++ {
		zs[0][i] = true
	}
	rng := rand.New(rand.NewPCG(7, 8))
	ways := map[bool]int{}
	for _, o := range []BandOptions{
		{Mode: Species},
		{Mode: Species, ZeroProfiles: zp, ZeroSpectra: zs},
		{Mode: Reactions, NonNegProfiles: []bool{true, false, true, true}},
		{Mode: Species, Closure: true},
	} {
		p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
		if err := p.setup(); err != nil {
			t.Fatal(err)
		}
		p.newWork()
		w, b := p.work, p.base
		idRatio := [2][]float64{append([]float64(nil), b.idC.ratio...), append([]float64(nil), b.idS.ratio...)}
		idRows := [2][]int32{append([]int32(nil), b.idC.rows...), append([]int32(nil), b.idS.rows...)}
		type side struct {
			x    *mat.Dense
			ways [3]*marginSide // margins alone, whole alone, as the search runs
		}
		sides := [2]side{{x: c}, {x: s}}
		for q, src := range []*marginSide{b.idC, b.idS} {
			for r := range sides[q].ways {
				ms := newMarginSide(src.x, src.norm, src.xp, k, src.nn, src.zero)
				switch r {
				case 0:
					ms.denseAbove = math.Inf(1)
				case 1:
					ms.denseAbove = 0
				default:
					ms.id = src
				}
				sides[q].ways[r] = ms
			}
		}
		th := make([]float64, len(p.free))
		for step := 0; step < 40; step++ {
			if step > 0 {
				size := []float64{1e-3, 1e-2, 0.1, 0.4}[step%4]
				for i := range th {
					th[i] += size * rng.NormFloat64()
				}
			}
			if !p.rotateWork(th) {
				continue
			}
			for q, v := range [][]float64{w.t, w.tinvT} {
				sd := sides[q]
				var lists [3][]clipped
				wt := []float64{1, 0.5, 3, 1e-3}
				for r, ms := range sd.ways {
					ms.collect(v)
					pen := ms.penalty(wt)
					lists[r] = append([]clipped(nil), ms.entries()...)
					sum := 0.0
					for _, e := range lists[r] {
						sum += wt[e.j] * e.val * e.val
					}
					if math.Float64bits(pen) != math.Float64bits(sum) {
						t.Fatalf("%+v step %d side %d way %d: penalty %v, over the list %v", o.Mode, step, q, r, pen, sum)
					}
				}
				ways[sd.ways[2].dense]++
				var want mat.Dense
				want.Mul(sd.x, mat.NewDense(k, k, append([]float64(nil), v...)))
				rows, _ := sd.x.Dims()
				var def []clipped
				for i := 0; i < rows; i++ {
					for j := 0; j < k; j++ {
						if sd.ways[0].zeroAt(i, j) || sd.ways[0].nn[j] && want.At(i, j) < 0 {
							def = append(def, clipped{i, j, want.At(i, j)})
						}
					}
				}
				for r, l := range lists {
					if len(l) != len(def) {
						t.Fatalf("%+v step %d side %d way %d: %d entries, %d by definition", o.Mode, step, q, r, len(l), len(def))
					}
					for e := range l {
						g, d, z := l[e], def[e], lists[0][e]
						if g.i != d.i || g.j != d.j || math.Float64bits(g.val) != math.Float64bits(z.val) {
							t.Fatalf("%+v step %d side %d way %d entry %d: (%d, %d) %v, margins (%d, %d) %v, definition (%d, %d)", o.Mode, step, q, r, e, g.i, g.j, g.val, z.i, z.j, z.val, d.i, d.j)
						}
						if math.Abs(g.val-d.val) > 1e-12*(1+math.Abs(d.val)) {
							t.Errorf("entry (%d, %d): %v, gonum %v", g.i, g.j, g.val, d.val)
						}
					}
				}
			}
		}
		for q, id := range []*marginSide{b.idC, b.idS} {
			if !vecmath.SameBits(id.ratio, idRatio[q]) || fmt.Sprint(id.rows) != fmt.Sprint(idRows[q]) {
				t.Errorf("%+v side %d: the shared reference at the identity was written", o.Mode, q)
			}
		}
	}
	if ways[true] == 0 || ways[false] == 0 {
		t.Errorf("the search's own choice took the margins %d times and the whole product %d times: both ways must be checked", ways[false], ways[true])
	}
}

// The stage ends' products (rowsTimes, crossGram, riseGram) must give the
// bits of the gonum products that formed them before: X·V, XᵀY and
// Σ (XᵀX)∘(YᵀY) with X = [A − A₊, A₊], Y = [B, B − B₊] built and
// multiplied by gonum (mat.Dense.Mul, Sub; the rise's definition in
// FeasibleBands). Random entries over twenty binary orders of magnitude,
// a sixth of them exactly 0 and some −0 (so that zero factors and signed
// zeros meet), k from 1 to 7, row counts around gonum's 64-row blocks,
// and views whose stride is not k.
func TestStageEndProductsSameAsGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	fill := func(r, c int) *mat.Dense {
		x := mat.NewDense(r, c+2, nil)
		for i := 0; i < r; i++ {
			for j := 0; j < c+2; j++ {
				switch rng.IntN(12) {
				case 0, 1:
				case 2:
					x.Set(i, j, math.Copysign(0, -1))
				default:
					x.Set(i, j, rng.NormFloat64()*math.Exp2(float64(rng.IntN(20)-10)))
				}
			}
		}
		return x.Slice(0, r, 1, c+1).(*mat.Dense) // stride c + 2
	}
	same := func(a, b []float64) bool { return vecmath.SameBits(a, b) }
	for k := 1; k <= 7; k++ {
		for _, rows := range []int{1, 5, 63, 64, 130} {
			x, y, v := fill(rows, k), fill(rows, k), fill(k, k)
			var want, cross mat.Dense
			want.Mul(x, v)
			if got := rowsTimes(x, v); !same(got.RawMatrix().Data, mat.DenseCopyOf(&want).RawMatrix().Data) {
				t.Errorf("k %d rows %d: rowsTimes differs from gonum's X·V", k, rows)
			}
			cross.Mul(x.T(), y)
			if got := crossGram(x.RawMatrix(), y.RawMatrix()); !same(got, mat.DenseCopyOf(&cross).RawMatrix().Data) {
				t.Errorf("k %d rows %d: crossGram differs from gonum's XᵀY", k, rows)
			}
			p := &bandProblem{k: k, nnC: make([]bool, k), nnS: make([]bool, k)}
			for j := range p.nnC {
				p.nnC[j], p.nnS[j] = j%3 != 1, j%2 == 0
			}
			a, b := mat.DenseCopyOf(x), mat.DenseCopyOf(y)
			ap, _ := p.clip(a, p.nnC, nil)
			bp, _ := p.clip(b, p.nnS, nil)
			var am, bm, gx, gy mat.Dense
			am.Sub(a, ap)
			bm.Sub(b, bp)
			xs, ys := mat.NewDense(rows, 2*k, nil), mat.NewDense(rows, 2*k, nil)
			xs.Slice(0, rows, 0, k).(*mat.Dense).Copy(&am)
			xs.Slice(0, rows, k, 2*k).(*mat.Dense).Copy(ap)
			ys.Slice(0, rows, 0, k).(*mat.Dense).Copy(b)
			ys.Slice(0, rows, k, 2*k).(*mat.Dense).Copy(&bm)
			gx.Mul(xs.T(), xs)
			gy.Mul(ys.T(), ys)
			d := 0.0
			for i := 0; i < 2*k; i++ {
				for j := 0; j < 2*k; j++ {
					d += gx.At(i, j) * gy.At(i, j)
				}
			}
			if got := riseGram(a, b, ap, bp); math.Float64bits(got) != math.Float64bits(d) {
				t.Errorf("k %d rows %d: riseGram %v, gonum's Gram matrices %v", k, rows, got, d)
			}
			if cp := p.clipped(x, p.nnC, nil); !same(mat.DenseCopyOf(cp).RawMatrix().Data, ap.RawMatrix().Data) {
				t.Errorf("k %d rows %d: clipped differs from clip", k, rows)
			}
		}
	}
}

// The stage ends form C T and S T⁻ᵀ in the vector lanes (timesPanels)
// where the processor has them: the bits of rowsTimes, which the test
// above holds to gonum's X·V. Entries as there (zeros, −0, twenty binary
// orders of magnitude), k up to the lanes' 16, and row counts that leave
// 0 to 3 rows past the last panel.
func TestStageEndPanelsSameAsRows(t *testing.T) {
	if !havePanels {
		t.Skip("no vector rows on this processor")
	}
	rng := rand.New(rand.NewPCG(13, 14))
	entry := func() float64 {
		switch rng.IntN(12) {
		case 0, 1:
			return 0
		case 2:
			return math.Copysign(0, -1)
		}
		return rng.NormFloat64() * math.Exp2(float64(rng.IntN(20)-10))
	}
	for k := 1; k <= 16; k++ {
		w := &bandWork{noClip: make([]uint64, k), panelVT: make([]float64, k*k)}
		for _, rows := range []int{4, 5, 6, 7, 64, 130, 2001} {
			x, v := mat.NewDense(rows, k, nil), mat.NewDense(k, k, nil)
			for _, m := range []*mat.Dense{x, v} {
				raw := m.RawMatrix().Data
				for i := range raw {
					raw[i] = entry()
				}
			}
			xr := x.RawMatrix().Data
			got, want := w.timesPanels(x, xr, rowPanels(xr, k), v), rowsTimes(x, v)
			if !vecmath.SameBits(got.RawMatrix().Data, want.RawMatrix().Data) {
				t.Errorf("k %d rows %d: timesPanels differs from rowsTimes", k, rows)
			}
		}
	}
}

// riseGradient forms the differences of YᵀY's blocks and each clipped
// row's A₊ once instead of once per clipped entry: its gradient must be
// the bits of the per-entry formula (riseGradientPerEntry, the form it
// had) at rotations across the search's range, with zero windows.
func TestRiseGradientSameAsPerEntry(t *testing.T) {
	const n, m, k = 50, 70, 4
	c, s := bandsBenchPair(n, m, k)
	zp := make([][]bool, k)
	zp[3] = make([]bool, n)
	for i := 30; i < 38; i++ {
		zp[3][i] = true
	}
	rng := rand.New(rand.NewPCG(11, 12))
	for _, o := range []BandOptions{{Mode: Species}, {Mode: Species, ZeroProfiles: zp}} {
		p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
		if err := p.setup(); err != nil {
			t.Fatal(err)
		}
		p.newWork()
		p.allow = 1e-6
		w := p.work
		checked := 0
		for trial := 0; trial < 30; trial++ {
			th := make([]float64, len(p.free))
			for i := range th {
				th[i] = 0.01 * float64(1+trial%5*8) * rng.NormFloat64()
			}
			p.valueWork(trial%k, 1, 1e4, th)
			if !w.at.smooth || len(w.rowsC.idx)+len(w.rowsS.idx) == 0 {
				continue
			}
			checked++
			clear(w.gt)
			clear(w.gbB)
			p.riseGradient(0.7)
			gt, gb := append([]float64(nil), w.gt...), append([]float64(nil), w.gbB...)
			clear(w.gt)
			clear(w.gbB)
			p.riseGradientPerEntry(0.7)
			if !vecmath.SameBits(gt, w.gt) || !vecmath.SameBits(gb, w.gbB) {
				t.Errorf("windows %v trial %d: gradient differs from the per-entry formula", o.ZeroProfiles != nil, trial)
			}
		}
		if checked < 10 {
			t.Errorf("windows %v: only %d rotations with clipped rows", o.ZeroProfiles != nil, checked)
		}
	}
}

// riseGradientPerEntry is riseGradient as it was written before its
// differences were formed once: the reference for the test above.
func (p *bandProblem) riseGradientPerEntry(f float64) {
	w, k := p.work, p.k
	k2 := 2 * k
	gx, gy := w.gx, w.gy
	ctam, btb := w.sq[0], w.sq[3]
	ctap := congruenceLeft(w.sq[4], w.gc, w.t, k)
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			ctap[r*k+c] -= ctam[r*k+c]
		}
	}
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += ctam[r*k+l]*gy[l*k2+k+c] + ctap[r*k+l]*gy[(k+l)*k2+k+c]
			}
			w.gt[r*k+c] += f * s
		}
	}
	w.rowsC.each(k, func(i int, cols uint64, full, minus []float64) {
		cr := w.c[i*k : i*k+k]
		for ; cols != 0; cols &= cols - 1 {
			j := bits.TrailingZeros64(cols)
			d := 0.0
			for l := 0; l < k; l++ {
				d += minus[l]*(gy[l*k2+j]-gy[l*k2+k+j]) + (full[l]-minus[l])*(gy[(k+l)*k2+j]-gy[(k+l)*k2+k+j])
			}
			for r := 0; r < k; r++ {
				w.gt[r*k+j] += f * cr[r] * d
			}
		}
	})
	for j := 0; j < k; j++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += gx[l*k2+j]*btb[l*k+c] + gx[(k+l)*k2+j]*gy[(k+l)*k2+c]
			}
			w.gbB[j*k+c] += f * s
		}
	}
	w.rowsS.each(k, func(i int, cols uint64, full, minus []float64) {
		for ; cols != 0; cols &= cols - 1 {
			j := bits.TrailingZeros64(cols)
			d := 0.0
			for l := 0; l < k; l++ {
				d += full[l]*gx[l*k2+k+j] + minus[l]*gx[(k+l)*k2+k+j]
			}
			for c := 0; c < k; c++ {
				w.gbB[j*k+c] += f * d * full[c]
			}
		}
	})
}
