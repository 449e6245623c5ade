// The dqds singular values of this file follow gonum's Dlasq1–Dlasq6
// (gonum.org/v1/gonum/lapack/gonum, v0.17.0), which carry this notice:
//
// Copyright ©2015 The Gonum Authors. All rights reserved.
//
// Redistribution and use in source and binary forms, with or without
// modification, are permitted provided that the following conditions are met:
//     * Redistributions of source code must retain the above copyright
//       notice, this list of conditions and the following disclaimer.
//     * Redistributions in binary form must reproduce the above copyright
//       notice, this list of conditions and the following disclaimer in the
//       documentation and/or other materials provided with the distribution.
//     * Neither the name of the Gonum project nor the names of its authors and
//       contributors may be used to endorse or promote products derived from this
//       software without specific prior written permission.
//
// THIS SOFTWARE IS PROVIDED BY THE COPYRIGHT HOLDERS AND CONTRIBUTORS "AS IS" AND
// ANY EXPRESS OR IMPLIED WARRANTIES, INCLUDING, BUT NOT LIMITED TO, THE IMPLIED
// WARRANTIES OF MERCHANTABILITY AND FITNESS FOR A PARTICULAR PURPOSE ARE
// DISCLAIMED. IN NO EVENT SHALL THE COPYRIGHT HOLDER OR CONTRIBUTORS BE LIABLE
// FOR ANY DIRECT, INDIRECT, INCIDENTAL, SPECIAL, EXEMPLARY, OR CONSEQUENTIAL
// DAMAGES (INCLUDING, BUT NOT LIMITED TO, PROCUREMENT OF SUBSTITUTE GOODS OR
// SERVICES; LOSS OF USE, DATA, OR PROFITS; OR BUSINESS INTERRUPTION) HOWEVER
// CAUSED AND ON ANY THEORY OF LIABILITY, WHETHER IN CONTRACT, STRICT LIABILITY,
// OR TORT (INCLUDING NEGLIGENCE OR OTHERWISE) ARISING IN ANY WAY OUT OF THE USE
// OF THIS SOFTWARE, EVEN IF ADVISED OF THE POSSIBILITY OF SUCH DAMAGE.

package svd

import (
	"math"

	"gonum.org/v1/gonum/lapack"
	lapackgonum "gonum.org/v1/gonum/lapack/gonum"
)

// The dqds algorithm (Fernando & Parlett, Numer. Math. 1994; Parlett &
// Marques, Linear Algebra Appl. 2000) takes the singular values of a
// bidiagonal matrix to high relative accuracy. This is LAPACK's DLASQ1–6 as
// gonum writes them, step for step and operation for operation, so that the
// values are gonum's to the bit (TestBidiagonalValuesAreDlasq1s, and
// TestDqdsStepsAreGonums step by step). What differs is only what costs
// time in EFA, where it runs twice per row: the running minima are Go's
// min and max (the same IEEE rules as math.Min and math.Max, but inlined:
// math.Min is an assembly call on amd64 and took more than half of the
// transform's time), and the state DLASQ3 passes through eighteen
// arguments and results lives in one struct. Left out: DLASQ2's checks
// for negative data (its input here is squares) and its performance
// counts, and DLASQ1's hand-over to QR sweeps after the iteration limit.

const (
	qdEps    = 0x1p-52   // LAPACK's dlamch('P'): the relative spacing ε·β
	qdSafmin = 0x1p-1022 // dlamch('S'): the smallest normal number
	qdCbias  = 1.5       // DLASQ2's bias towards reversing the array
)

// bidiagonalValues puts the singular values of the n × n upper bidiagonal
// matrix with diagonal d and superdiagonal e (length n−1 at least) into d,
// descending, using work (length 4n at least). It returns DLASQ1's info:
// 0 on success, 2 when dqds stopped at its iteration limit, 1 or 3 on the
// failures LAPACK reports; d holds nothing of use then. (After info 2
// DLASQ1 leaves a bidiagonal with the same values for DBDSQR's QR sweeps to
// finish; the one caller, squareValues, hands the matrix to mat.SVD
// instead, which takes that path from the start, so that state is not
// kept.)
func bidiagonalValues(d, e, work []float64) int {
	var q qdRun
	if q.begin(d, e, work) {
		for q.s.next() {
			q.s.transform()
		}
	}
	return q.end()
}

// bidiagonalValuesPair is bidiagonalValues of two bidiagonals at once, each
// to the same bits as alone. Each dqds transform is one long chain of
// dependent operations (a division waits on the sum before it, the next
// sum on the division), so a core mostly waits on its divider; two
// independent transforms in one loop fill those waits (transformPair).
func bidiagonalValuesPair(d1, e1, work1, d2, e2, work2 []float64) (info1, info2 int) {
	var q1, q2 qdRun
	a := q1.begin(d1, e1, work1) && q1.s.next()
	b := q2.begin(d2, e2, work2) && q2.s.next()
	for a || b {
		switch {
		case a && b:
			transformPair(&q1.s, &q2.s)
		case a:
			q1.s.transform()
		default:
			q2.s.transform()
		}
		if a {
			a = q1.s.next()
		}
		if b {
			b = q2.s.next()
		}
	}
	return q1.end(), q2.end()
}

// qdRun is DLASQ1 around the qd machine: the bidiagonal scaled and squared
// into the qd array before, the square roots scaled back after.
type qdRun struct {
	d, work      []float64
	sigmx, scale float64
	running      bool // false: d was final without dqds (n ≤ 2 or diagonal)
	s            qdState
}

// begin is DLASQ1 up to DLASQ2; false when d is final already.
func (q *qdRun) begin(d, e, work []float64) bool {
	var impl lapackgonum.Implementation
	n := len(d)
	switch n {
	case 0:
		return false
	case 1:
		d[0] = math.Abs(d[0])
		return false
	case 2:
		d[1], d[0] = impl.Dlas2(d[0], e[0], d[1])
		return false
	}
	var sigmx float64
	for i := 0; i < n-1; i++ {
		d[i] = math.Abs(d[i])
		sigmx = max(sigmx, math.Abs(e[i]))
	}
	d[n-1] = math.Abs(d[n-1])
	if sigmx == 0 { // already diagonal
		impl.Dlasrt(lapack.SortDecreasing, n, d)
		return false
	}
	for i := 0; i < n; i++ {
		sigmx = max(sigmx, d[i])
	}
	// Scale into the z format and square (squaring makes scaling by a
	// power of the radix pointless).
	scale := math.Sqrt(qdEps / qdSafmin)
	for i := 0; i < n; i++ {
		work[2*i] = d[i]
	}
	for i := 0; i < n-1; i++ {
		work[2*i+1] = e[i]
	}
	impl.Dlascl(lapack.General, 0, 0, sigmx, scale, 2*n-1, 1, work, 1)
	for i := 0; i < 2*n-1; i++ {
		work[i] *= work[i]
	}
	work[2*n-1] = 0
	*q = qdRun{d: d, work: work, sigmx: sigmx, scale: scale, running: true}
	q.s.start(n, work)
	return true
}

// end is DLASQ1 after DLASQ2: the singular values from the eigenvalues.
func (q *qdRun) end() int {
	if !q.running {
		return 0
	}
	info := q.s.info
	if info == 0 {
		var impl lapackgonum.Implementation
		n := len(q.d)
		for i := 0; i < n; i++ {
			q.d[i] = math.Sqrt(q.work[i])
		}
		impl.Dlascl(lapack.General, 0, 0, q.scale, q.sigmx, n, 1, q.d, 1)
	}
	return info
}

// qdState is DLASQ2 as a machine that stops wherever a dqds transform is
// due (next), so that a caller can run two transforms side by side: the
// state DLASQ3 carries from one step to the next, and where DLASQ2's loops
// stand.
type qdState struct {
	z                    []float64
	n                    int
	i0, n0, pp           int
	dmin, sigma, desig   float64
	qmax                 float64
	nFail, iter, nDiv    int
	ttype                int
	dmin1, dmin2         float64
	dn, dn1, dn2, g, tau float64

	tol, tol2      float64 // 100ε and its square, as DLASQ2–3 take them
	phase          int
	iwhila, iwhilb int // DLASQ2's loop counters: blocks, steps on the block
	nbig           int // the step limit on the block
	n0in           int // n0 when the step began (DLASQ3)
	info           int
}

// Where next resumes.
const (
	qdOuter = iota // top of DLASQ2's loop over the unreduced blocks
	qdInner        // top of its loop of dqds steps on the block
	qdCheck        // a transform has just been done (DLASQ3)
	qdDone
)

// start is DLASQ2 for n ≥ 3 up to its main loop: the eigenvalues of the
// positive definite tridiagonal of the qd array z (q1, e1, q2, e2, …;
// length 4n, non-negative) will be in z[0:n], descending, when next says
// false, with s.info DLASQ2's.
func (s *qdState) start(n int, z []float64) {
	tol := qdEps * 100
	*s = qdState{z: z, n: n, n0: n - 1, tol: tol, tol2: tol * tol, phase: qdDone}
	z[2*n-1] = 0
	var d, e float64
	for k := 0; k < 2*(n-1); k += 2 {
		d += z[k]
		e += z[k+1]
	}
	d += z[2*(n-1)]
	if e == 0 { // diagonal
		for k := 1; k < n; k++ {
			z[k] = z[2*k]
		}
		var impl lapackgonum.Implementation
		impl.Dlasrt(lapack.SortDecreasing, n, z)
		z[2*(n-1)] = d
		return
	}
	if d+e == 0 { // zero
		z[2*(n-1)] = 0
		return
	}
	// Rearrange data for locality: z = (q1, qq1, e1, ee1, q2, qq2, e2, ee2, …).
	for k := 2 * n; k >= 2; k -= 2 {
		z[2*k-1] = 0
		z[2*k-2] = z[k-1]
		z[2*k-3] = 0
		z[2*k-4] = z[k-2]
	}
	if qdCbias*z[0] < z[4*s.n0] { // reverse the qd array, if warranted
		ipn4 := 4*(s.n0+2) - 1
		for i4loop := 4; i4loop <= 2*(s.n0+1); i4loop += 4 {
			i4 := i4loop - 1
			z[i4-3], z[ipn4-i4-4] = z[ipn4-i4-4], z[i4-3]
			z[i4-1], z[ipn4-i4-6] = z[ipn4-i4-6], z[i4-1]
		}
	}
	s.initialSplits(s.tol2)
	s.iter = 2
	s.nDiv = 2 * (s.n0 - s.i0)
	s.phase = qdOuter
}

// initialSplits is DLASQ2's initial split checking via dqd and Li's test.
func (s *qdState) initialSplits(tol2 float64) {
	z, i0, n0 := s.z, s.i0, s.n0
	pp := 0
	for k := 0; k < 2; k++ {
		d := z[4*n0+pp]
		for i4loop := 4*n0 + pp; i4loop >= 4*(i0+1)+pp; i4loop -= 4 {
			i4 := i4loop - 1
			if z[i4-1] <= tol2*d {
				z[i4-1] = math.Copysign(0, -1)
				d = z[i4-3]
			} else {
				d = z[i4-3] * (d / (d + z[i4-1]))
			}
		}
		// dqd maps z to zz plus Li's test.
		d = z[4*i0+pp]
		for i4loop := 4*(i0+1) + pp; i4loop <= 4*n0+pp; i4loop += 4 {
			i4 := i4loop - 1
			z[i4-2*pp-2] = d + z[i4-1]
			if z[i4-1] <= tol2*d {
				z[i4-1] = math.Copysign(0, -1)
				z[i4-2*pp-2] = d
				z[i4-2*pp] = 0
				d = z[i4+1]
			} else if qdSafmin*z[i4+1] < z[i4-2*pp-2] && qdSafmin*z[i4-2*pp-2] < z[i4+1] {
				tmp := z[i4+1] / z[i4-2*pp-2]
				z[i4-2*pp] = z[i4-1] * tmp
				d *= tmp
			} else {
				z[i4-2*pp] = z[i4+1] * (z[i4-1] / z[i4-2*pp-2])
				d = z[i4+1] * (d / z[i4-2*pp-2])
			}
		}
		z[4*(n0+1)-pp-3] = d
		s.qmax = z[4*(i0+1)-pp-3]
		for i4loop := 4*(i0+1) - pp + 2; i4loop <= 4*(n0+1)+pp-2; i4loop += 4 {
			s.qmax = max(s.qmax, z[i4loop-1])
		}
		pp = 1 - pp
	}
}

// next runs DLASQ2 on until the next dqds transform is due, with its
// shift in tau: true then, and the caller does s.transform() (or
// transformPair) before calling next again; false when DLASQ2 is done.
func (s *qdState) next() bool {
	for {
		switch s.phase {
		case qdOuter:
			s.outer()
		case qdInner:
			if s.inner() {
				s.phase = qdCheck
				return true
			}
		case qdCheck:
			if s.afterTransform() {
				return true
			}
			s.endStep()
		default:
			return false
		}
	}
}

// outer is the top of DLASQ2's loop over the unreduced blocks.
func (s *qdState) outer() {
	z, n := s.z, s.n
	s.iwhila++
	if s.iwhila > n+1 {
		s.info, s.phase = 3, qdDone
		return
	}
	if s.n0 < 0 { // done: move the q's to the front and sort
		for k := 1; k < n; k++ {
			z[k] = z[4*k]
		}
		var impl lapackgonum.Implementation
		impl.Dlasrt(lapack.SortDecreasing, n, z)
		s.info, s.phase = 0, qdDone
		return
	}
	// e[n0] holds, negated, the value of sigma when the block i0:n0
	// split from the rest of the array.
	s.desig, s.sigma = 0, 0
	if s.n0 != n-1 {
		s.sigma = -z[4*(s.n0+1)-2]
	}
	if s.sigma < 0 {
		s.info, s.phase = 1, qdDone
		return
	}
	s.findBlock()
	s.nbig = 100 * (s.n0 - s.i0 + 1)
	s.iwhilb = 0
	s.phase = qdInner
}

// inner is the top of DLASQ2's loop of steps on the block and DLASQ3 up
// to its first transform; true when that is due.
func (s *qdState) inner() bool {
	if s.iwhilb >= s.nbig { // the step limit on this block
		s.info, s.phase = 2, qdDone
		return false
	}
	if s.i0 > s.n0 {
		s.phase = qdOuter
		return false
	}
	if s.beginStep() {
		return true
	}
	s.endStep()
	return false
}

// endStep is DLASQ2 after each DLASQ3: flip ping and pong, check for
// splits when emin is very small.
func (s *qdState) endStep() {
	s.pp = 1 - s.pp
	if s.pp == 0 && s.n0-s.i0 >= 3 {
		s.splits(s.tol2)
	}
	s.iwhilb++
	s.phase = qdInner
}

// findBlock finds the last unreduced block's top index i0 and qmax, a
// Gershgorin-type bound when the q's are much greater than the e's, flips
// the block when that helps and puts −(initial shift) into dmin.
func (s *qdState) findBlock() {
	z, n0 := s.z, s.n0
	var emax float64
	qmin := z[4*(n0+1)-4]
	s.qmax = qmin
	i4 := 3
	for i4loop := 4 * (n0 + 1); i4loop >= 8; i4loop -= 4 {
		j := i4loop - 1
		if z[j-5] <= 0 {
			i4 = j
			break
		}
		if qmin >= 4*emax {
			qmin = min(qmin, z[j-3])
			emax = max(emax, z[j-5])
		}
		s.qmax = max(s.qmax, z[j-7]+z[j-5])
	}
	s.i0 = (i4+1)/4 - 1
	i0 := s.i0
	s.pp = 0
	if n0-i0 > 1 {
		dee := z[4*i0]
		deemin := dee
		kmin := i0
		for i4loop := 4*(i0+1) + 1; i4loop <= 4*(n0+1)-3; i4loop += 4 {
			j := i4loop - 1
			dee = z[j] * (dee / (dee + z[j-2]))
			if dee <= deemin {
				deemin = dee
				kmin = (j+4)/4 - 1
			}
		}
		if (kmin-i0)*2 < n0-kmin && deemin <= 0.5*z[4*n0] {
			s.pp = 2
			s.flip()
		}
	}
	s.dmin = -max(0, qmin-2*math.Sqrt(qmin)*math.Sqrt(emax))
}

// flip reverses the block i0:n0 of the qd array, ping and pong halves.
func (s *qdState) flip() {
	z := s.z
	ipn4 := 4*(s.i0+s.n0+2) - 1
	for i4loop := 4 * (s.i0 + 1); i4loop <= 2*(s.i0+s.n0+1); i4loop += 4 {
		i4 := i4loop - 1
		z[i4-3], z[ipn4-i4-4] = z[ipn4-i4-4], z[i4-3]
		z[i4-2], z[ipn4-i4-3] = z[ipn4-i4-3], z[i4-2]
		z[i4-1], z[ipn4-i4-6] = z[ipn4-i4-6], z[i4-1]
		z[i4], z[ipn4-i4-5] = z[ipn4-i4-5], z[i4]
	}
}

// splits is DLASQ2's check for splits when emin is very small.
func (s *qdState) splits(tol2 float64) {
	z, i0, n0 := s.z, s.i0, s.n0
	if !(z[4*(n0+1)-1] <= tol2*s.qmax || z[4*(n0+1)-2] <= tol2*s.sigma) {
		return
	}
	splt := i0 - 1
	s.qmax = z[4*i0]
	emin := z[4*(i0+1)-2]
	oldemn := z[4*(i0+1)-1]
	for i4loop := 4 * (i0 + 1); i4loop <= 4*(n0-2); i4loop += 4 {
		i4 := i4loop - 1
		if z[i4] <= tol2*z[i4-3] || z[i4-1] <= tol2*s.sigma {
			z[i4-1] = -s.sigma
			splt = i4 / 4
			s.qmax = 0
			emin = z[i4+3]
			oldemn = z[i4+4]
		} else {
			s.qmax = max(s.qmax, z[i4+1])
			emin = min(emin, z[i4-1])
			oldemn = min(oldemn, z[i4])
		}
	}
	z[4*(n0+1)-2] = emin
	z[4*(n0+1)-1] = oldemn
	s.i0 = splt + 1
}

// step is DLASQ3 in one call: deflate what has converged at the bottom of
// the block, flip the block when that helps, choose a shift and take dqds
// transforms, with smaller shifts until the result is positive. The
// machine (next) takes the same steps in two halves around each transform.
func (s *qdState) step() {
	if !s.beginStep() {
		return
	}
	s.transform()
	for s.afterTransform() {
		s.transform()
	}
}

// beginStep is DLASQ3 up to the first transform, whose shift it leaves in
// tau; false when the block is used up.
func (s *qdState) beginStep() bool {
	s.n0in = s.n0
	if !s.deflate(s.tol2) {
		return false
	}
	if s.pp == 2 {
		s.pp = 0
	}
	z := s.z
	if s.dmin <= 0 || s.n0 < s.n0in {
		i0, n0, pp := s.i0, s.n0, s.pp
		if qdCbias*z[4*(i0+1)+pp-4] < z[4*(n0+1)+pp-4] {
			s.flip()
			if n0-i0 <= 4 {
				z[4*(n0+1)+pp-2] = z[4*(i0+1)+pp-2]
				z[4*(n0+1)-pp-1] = z[4*(i0+1)-pp-1]
			}
			s.dmin2 = min(s.dmin2, z[4*(i0+1)-pp-2])
			z[4*(n0+1)+pp-2] = min(min(z[4*(n0+1)+pp-2], z[4*(i0+1)+pp-2]), z[4*(i0+1)+pp+2])
			z[4*(n0+1)-pp-1] = min(min(z[4*(n0+1)-pp-1], z[4*(i0+1)-pp-1]), z[4*(i0+1)-pp+3])
			s.qmax = max(max(s.qmax, z[4*(i0+1)+pp-4]), z[4*(i0+1)+pp])
			s.dmin = math.Copysign(0, -1)
		}
	}
	s.shift(s.n0in)
	return true
}

// afterTransform is DLASQ3 after a transform: true when the shift was too
// big and another transform is due with the smaller one now in tau; else
// the step is finished (by the protected transform when DLASQ3 falls back
// to it) and sigma takes the shift.
func (s *qdState) afterTransform() bool {
	z, tol := s.z, s.tol
	s.nDiv += s.n0 - s.i0 + 2
	s.iter++
	switch {
	case s.dmin >= 0 && s.dmin1 >= 0:
	case s.dmin < 0 && s.dmin1 > 0 && z[4*s.n0-s.pp-1] < tol*(s.sigma+s.dn1) && math.Abs(s.dn) < tol*s.sigma:
		// Convergence hidden by a negative dn.
		z[4*s.n0-s.pp+1] = 0
		s.dmin = 0
	case s.dmin < 0: // tau too big: select a new tau and try again
		s.nFail++
		switch {
		case s.ttype < -22: // failed twice: play it safe
			s.tau = 0
		case s.dmin1 > 0: // late failure: gives an excellent shift
			s.tau = (s.tau + s.dmin) * (1 - 2*qdEps)
			s.ttype -= 11
		default: // early failure: divide by 4
			s.tau = s.tau / 4
			s.ttype -= 12
		}
		return true
	case math.IsNaN(s.dmin) && s.tau != 0:
		s.tau = 0
		return true
	default: // NaN with no shift, or possible underflow
		s.transformSafe()
		s.nDiv += s.n0 - s.i0 + 2
		s.iter++
		s.tau = 0
	}
	// sigma += tau, with the rounding error kept in desig.
	var t float64
	if s.tau < s.sigma {
		s.desig += s.tau
		t = s.sigma + s.desig
		s.desig -= t - s.sigma
	} else {
		t = s.sigma + s.tau
		s.desig += s.sigma - (t - s.tau)
	}
	s.sigma = t
	return false
}

// deflate is DLASQ3's check for one or two negligible e's at the bottom of
// the block; false when the block is used up.
func (s *qdState) deflate(tol2 float64) bool {
	z, pp := s.z, s.pp
	for {
		i0, n0 := s.i0, s.n0
		if n0 < i0 {
			return false
		}
		if n0 == i0 {
			z[4*(n0+1)-4] = z[4*(n0+1)+pp-4] + s.sigma
			s.n0--
			continue
		}
		nn := 4*(n0+1) + pp - 1
		if n0 != i0+1 {
			// Is e[n0-1] negligible (one eigenvalue)?
			if z[nn-5] > tol2*(s.sigma+z[nn-3]) && z[nn-2*pp-4] > tol2*z[nn-7] {
				// Is e[n0-2] negligible (two eigenvalues)?
				if z[nn-9] > tol2*s.sigma && z[nn-2*pp-8] > tol2*z[nn-11] {
					return true
				}
			} else {
				z[4*(n0+1)-4] = z[4*(n0+1)+pp-4] + s.sigma
				s.n0--
				continue
			}
		}
		if z[nn-3] > z[nn-7] {
			z[nn-3], z[nn-7] = z[nn-7], z[nn-3]
		}
		t := 0.5 * (z[nn-7] - z[nn-3] + z[nn-5])
		if z[nn-5] > z[nn-3]*tol2 && t != 0 {
			sv := z[nn-3] * (z[nn-5] / t)
			if sv <= t {
				sv = z[nn-3] * (z[nn-5] / (t * (1 + math.Sqrt(1+sv/t))))
			} else {
				sv = z[nn-3] * (z[nn-5] / (t + math.Sqrt(t)*math.Sqrt(t+sv)))
			}
			t = z[nn-7] + (sv + z[nn-5])
			z[nn-3] *= z[nn-7] / t
			z[nn-7] = t
		}
		z[4*(n0+1)-8] = z[nn-7] + s.sigma
		z[4*(n0+1)-4] = z[nn-3] + s.sigma
		s.n0 -= 2
	}
}

// DLASQ4's constants.
const (
	qdCnst1     = 0.563
	qdCnst2     = 1.01
	qdCnst3     = 1.05
	qdCnstThird = 0.333
)

// shift is DLASQ4: an approximation to the smallest eigenvalue from the d's
// of the last transform, by what deflated since (n0in: n0 before).
func (s *qdState) shift(n0in int) {
	if s.dmin <= 0 { // a negative dmin forces the shift to take its absolute value
		s.tau = -s.dmin
		s.ttype = -1
		return
	}
	nn := 4*(s.n0+1) + s.pp - 1
	var sh float64
	ok := true
	switch {
	case n0in == s.n0:
		sh, ok = s.shiftNoneDeflated(nn)
	case n0in == s.n0+1:
		sh, ok = s.shiftOneDeflated(nn)
	case n0in == s.n0+2:
		sh, ok = s.shiftTwoDeflated(nn)
	case n0in > s.n0+2: // more than two deflated: no information
		sh = 0
		s.ttype = -12
	default:
		sh = math.NaN()
	}
	if ok { // DLASQ4 leaves tau as it was where it gives up early
		s.tau = sh
	}
}

// shiftNoneDeflated is DLASQ4 when no eigenvalue deflated (cases 1–6).
func (s *qdState) shiftNoneDeflated(nn int) (float64, bool) {
	z, dmin, dn, dn1 := s.z, s.dmin, s.dn, s.dn1
	if dmin == dn || dmin == dn1 {
		b1 := math.Sqrt(z[nn-3]) * math.Sqrt(z[nn-5])
		b2 := math.Sqrt(z[nn-7]) * math.Sqrt(z[nn-9])
		a2 := z[nn-7] + z[nn-5]
		if dmin == dn && s.dmin1 == dn1 { // cases 2 and 3
			gap2 := s.dmin2 - a2 - s.dmin2/4
			var gap1 float64
			if gap2 > 0 && gap2 > b2 {
				gap1 = a2 - dn - (b2/gap2)*b2
			} else {
				gap1 = a2 - dn - (b1 + b2)
			}
			if gap1 > 0 && gap1 > b1 {
				s.ttype = -2
				return max(dn-(b1/gap1)*b1, 0.5*dmin), true
			}
			var sh float64
			if dn > b1 {
				sh = dn - b1
			}
			if a2 > b1+b2 {
				sh = min(sh, a2-(b1+b2))
			}
			s.ttype = -3
			return max(sh, qdCnstThird*dmin), true
		}
		return s.shiftCase4(nn)
	}
	if dmin == s.dn2 {
		return s.shiftCase5(nn)
	}
	// Case 6: no information to guide us.
	switch s.ttype {
	case -6:
		s.g += qdCnstThird * (1 - s.g)
	case -18:
		s.g = qdCnstThird / 4
	default:
		s.g = 1.0 / 4
	}
	s.ttype = -6
	return s.g * dmin, true
}

// shiftCase4 is DLASQ4's case 4: dmin is dn or dn1 but not both as in
// cases 2–3; a Rayleigh quotient residual bound.
func (s *qdState) shiftCase4(nn int) (float64, bool) {
	z, pp, dmin := s.z, s.pp, s.dmin
	s.ttype = -4
	sh := dmin / 4
	var gam, a2, b2 float64
	var np int
	if dmin == s.dn {
		gam = s.dn
		a2 = 0
		if z[nn-5] > z[nn-7] {
			return 0, false
		}
		b2 = z[nn-5] / z[nn-7]
		np = nn - 9
	} else {
		np = nn - 2*pp
		gam = s.dn1
		if z[np-4] > z[np-2] {
			return 0, false
		}
		a2 = z[np-4] / z[np-2]
		if z[nn-9] > z[nn-11] {
			return 0, false
		}
		b2 = z[nn-9] / z[nn-11]
		np = nn - 13
	}
	// Approximate contribution to norm squared from i < nn-1.
	a2 += b2
	for i4loop := np + 1; i4loop >= 4*(s.i0+1)-1+pp; i4loop -= 4 {
		i4 := i4loop - 1
		if b2 == 0 {
			break
		}
		b1 := b2
		if z[i4] > z[i4-2] {
			return 0, false
		}
		b2 *= z[i4] / z[i4-2]
		a2 += b2
		if 100*max(b2, b1) < a2 || qdCnst1 < a2 {
			break
		}
	}
	a2 *= qdCnst3
	if a2 < qdCnst1 {
		sh = gam * (1 - math.Sqrt(a2)) / (1 + a2)
	}
	return sh, true
}

// shiftCase5 is DLASQ4's case 5: dmin is dn2.
func (s *qdState) shiftCase5(nn int) (float64, bool) {
	z, pp := s.z, s.pp
	s.ttype = -5
	sh := s.dmin / 4
	// Contribution to norm squared from i > nn-2.
	np := nn - 2*pp
	b1 := z[np-2]
	b2 := z[np-6]
	gam := s.dn2
	if z[np-8] > b2 || z[np-4] > b1 {
		return 0, false
	}
	a2 := (z[np-8] / b2) * (1 + z[np-4]/b1)
	// Approximate contribution to norm squared from i < nn-2.
	if s.n0-s.i0 > 2 {
		b2 = z[nn-13] / z[nn-15]
		a2 += b2
		for i4loop := (nn + 1) - 17; i4loop >= 4*(s.i0+1)-1+pp; i4loop -= 4 {
			i4 := i4loop - 1
			if b2 == 0 {
				break
			}
			b1 = b2
			if z[i4] > z[i4-2] {
				return 0, false
			}
			b2 *= z[i4] / z[i4-2]
			a2 += b2
			if 100*max(b2, b1) < a2 || qdCnst1 < a2 {
				break
			}
		}
		a2 *= qdCnst3
	}
	if a2 < qdCnst1 {
		sh = gam * (1 - math.Sqrt(a2)) / (1 + a2)
	}
	return sh, true
}

// shiftOneDeflated is DLASQ4 after one eigenvalue deflated (cases 7–9):
// dmin1 and dn1 stand for dmin and dn.
func (s *qdState) shiftOneDeflated(nn int) (float64, bool) {
	z, pp := s.z, s.pp
	if !(s.dmin1 == s.dn1 && s.dmin2 == s.dn2) {
		s.ttype = -9
		if s.dmin1 == s.dn1 {
			return 0.5 * s.dmin1, true
		}
		return s.dmin1 / 4, true
	}
	s.ttype = -7
	sh := qdCnstThird * s.dmin1
	if z[nn-5] > z[nn-7] {
		return 0, false
	}
	b1 := z[nn-5] / z[nn-7]
	b2 := b1
	if b2 != 0 {
		for i4loop := 4*(s.n0+1) - 9 + pp; i4loop >= 4*(s.i0+1)-1+pp; i4loop -= 4 {
			i4 := i4loop - 1
			a2 := b1
			if z[i4] > z[i4-2] {
				return 0, false
			}
			b1 *= z[i4] / z[i4-2]
			b2 += b1
			if 100*max(b1, a2) < b2 {
				break
			}
		}
	}
	b2 = math.Sqrt(qdCnst3 * b2)
	a2 := s.dmin1 / (1 + b2*b2)
	gap2 := 0.5*s.dmin2 - a2
	if gap2 > 0 && gap2 > b2*a2 {
		return max(sh, a2*(1-qdCnst2*a2*(b2/gap2)*b2)), true
	}
	s.ttype = -8
	return max(sh, a2*(1-qdCnst2*b2)), true
}

// shiftTwoDeflated is DLASQ4 after two eigenvalues deflated (cases 10–11):
// dmin2 and dn2 stand for dmin and dn.
func (s *qdState) shiftTwoDeflated(nn int) (float64, bool) {
	z, pp := s.z, s.pp
	if !(s.dmin2 == s.dn2 && 2*z[nn-5] < z[nn-7]) {
		s.ttype = -11
		return s.dmin2 / 4, true
	}
	s.ttype = -10
	sh := qdCnstThird * s.dmin2
	if z[nn-5] > z[nn-7] {
		return 0, false
	}
	b1 := z[nn-5] / z[nn-7]
	b2 := b1
	if b2 != 0 {
		for i4loop := 4*(s.n0+1) - 9 + pp; i4loop >= 4*(s.i0+1)-1+pp; i4loop -= 4 {
			i4 := i4loop - 1
			if z[i4] > z[i4-2] {
				return 0, false
			}
			b1 *= z[i4] / z[i4-2]
			b2 += b1
			if 100*b1 < b2 {
				break
			}
		}
	}
	b2 = math.Sqrt(qdCnst3 * b2)
	a2 := s.dmin2 / (1 + b2*b2)
	gap2 := z[nn-7] + z[nn-9] - math.Sqrt(z[nn-11])*math.Sqrt(z[nn-9]) - a2
	if gap2 > 0 && gap2 > b2*a2 {
		return max(sh, a2*(1-qdCnst2*a2*(b2/gap2)*b2)), true
	}
	return max(sh, a2*(1-qdCnst2*b2)), true
}

// transform is DLASQ5: one dqds transform with shift tau in ping-pong form
// (pp picks which half of z is read and which written). With a negligible
// shift (tau set to 0) d's below ε·sigma are set to zero.
func (s *qdState) transform() {
	d, dmin, emin, dthresh, o, ok := s.transformBegin()
	if !ok {
		return
	}
	d, dmin, emin = s.transformRun(d, dmin, emin, dthresh, o, s.n0-s.i0-2)
	s.transformEnd(d, dmin, emin)
}

// transformBegin is DLASQ5 up to its loop: the first d, dmin and emin, the
// threshold for zero d's and the offset o of the first step (see
// transformRun); false, with the zero results DLASQ5 returns, when the
// block is too short for a transform.
func (s *qdState) transformBegin() (d, dmin, emin, dthresh float64, o int, ok bool) {
	z, i0, n0, pp := s.z, s.i0, s.n0, s.pp
	s.dmin, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2 = 0, 0, 0, 0, 0, 0
	if n0-i0-1 <= 0 {
		return 0, 0, 0, 0, 0, false
	}
	tau := s.tau
	dthresh = qdEps * (s.sigma + tau)
	if tau < dthresh*0.5 {
		tau = 0
	}
	s.tau = tau
	j4 := 4*i0 + pp
	emin = z[j4+4]
	d = z[j4] - tau
	return d, d, emin, dthresh, 4*(i0+1) - 3 - pp, true
}

// transformRun is DLASQ5's loop, k steps from offset o: each writes the
// new q at o and the new e at o+2 from the e at o+1+2pp and the q at
// o+3+2pp.
func (s *qdState) transformRun(d, dmin, emin, dthresh float64, o, k int) (float64, float64, float64) {
	z, tau, r := s.z, s.tau, 2*s.pp
	zero := tau == 0
	for ; k > 0; k-- {
		z[o] = d + z[o+1+r]
		tmp := z[o+3+r] / z[o]
		d = d*tmp - tau
		if zero && d < dthresh {
			d = 0
		}
		dmin = min(dmin, d)
		z[o+2] = z[o+1+r] * tmp
		emin = min(z[o+2], emin)
		o += 4
	}
	return d, dmin, emin
}

// transformEnd is DLASQ5's last two steps, unrolled, and its results.
func (s *qdState) transformEnd(d, dmin, emin float64) {
	z, n0, pp, tau := s.z, s.n0, s.pp, s.tau
	dnm2 := d
	s.dmin2 = dmin
	j4 := 4*((n0+1)-2) - pp - 1
	j4p2 := j4 + 2*pp - 1
	z[j4-2] = dnm2 + z[j4p2]
	z[j4] = z[j4p2+2] * (z[j4p2] / z[j4-2])
	dnm1 := z[j4p2+2]*(dnm2/z[j4-2]) - tau
	dmin = min(dmin, dnm1)
	s.dmin1 = dmin
	j4 += 4
	j4p2 = j4 + 2*pp - 1
	z[j4-2] = dnm1 + z[j4p2]
	z[j4] = z[j4p2+2] * (z[j4p2] / z[j4-2])
	dn := z[j4p2+2]*(dnm1/z[j4-2]) - tau
	dmin = min(dmin, dn)
	z[j4+2] = dn
	z[4*(n0+1)-pp-1] = emin
	s.dmin, s.dn, s.dn1, s.dn2 = dmin, dn, dnm1, dnm2
}

// transformPair is a.transform() and b.transform() with the steps of their
// loops taken side by side while both last: two independent chains of
// dependent operations in one loop, which the processor overlaps. Each
// state sees the same operations in the same order as alone.
func transformPair(a, b *qdState) {
	da, dminA, eminA, thA, oa, okA := a.transformBegin()
	db, dminB, eminB, thB, ob, okB := b.transformBegin()
	ka, kb := 0, 0
	if okA {
		ka = a.n0 - a.i0 - 2
	}
	if okB {
		kb = b.n0 - b.i0 - 2
	}
	za, tauA, ra, zeroA := a.z, a.tau, 2*a.pp, a.tau == 0
	zb, tauB, rb, zeroB := b.z, b.tau, 2*b.pp, b.tau == 0
	for k := min(ka, kb); k > 0; k-- {
		za[oa] = da + za[oa+1+ra]
		zb[ob] = db + zb[ob+1+rb]
		tmpA := za[oa+3+ra] / za[oa]
		tmpB := zb[ob+3+rb] / zb[ob]
		da = da*tmpA - tauA
		db = db*tmpB - tauB
		if zeroA && da < thA {
			da = 0
		}
		if zeroB && db < thB {
			db = 0
		}
		dminA = min(dminA, da)
		dminB = min(dminB, db)
		za[oa+2] = za[oa+1+ra] * tmpA
		zb[ob+2] = zb[ob+1+rb] * tmpB
		eminA = min(za[oa+2], eminA)
		eminB = min(zb[ob+2], eminB)
		oa += 4
		ob += 4
	}
	common := min(ka, kb)
	if okA {
		da, dminA, eminA = a.transformRun(da, dminA, eminA, thA, oa, ka-common)
		a.transformEnd(da, dminA, eminA)
	}
	if okB {
		db, dminB, eminB = b.transformRun(db, dminB, eminB, thB, ob, kb-common)
		b.transformEnd(db, dminB, eminB)
	}
}

// transformSafe is DLASQ6: one dqd transform (no shift) in ping-pong form,
// guarded against underflow and overflow.
func (s *qdState) transformSafe() {
	z, i0, n0, pp := s.z, s.i0, s.n0, s.pp
	s.dmin, s.dmin1, s.dmin2, s.dn, s.dn1, s.dn2 = 0, 0, 0, 0, 0, 0
	if n0-i0-1 <= 0 {
		return
	}
	j4 := 4*(i0+1) + pp - 4
	emin := z[j4+4]
	d := z[j4]
	dmin := d
	r := 2 * pp
	for j4loop := 4 * (i0 + 1); j4loop <= 4*((n0+1)-3); j4loop += 4 {
		o := j4loop - 3 - pp // as in transform
		z[o] = d + z[o+1+r]
		if z[o] == 0 {
			z[o+2] = 0
			d = z[o+3+r]
			dmin = d
			emin = 0
		} else if qdSafmin*z[o+3+r] < z[o] && qdSafmin*z[o] < z[o+3+r] {
			tmp := z[o+3+r] / z[o]
			z[o+2] = z[o+1+r] * tmp
			d *= tmp
		} else {
			z[o+2] = z[o+3+r] * (z[o+1+r] / z[o])
			d = z[o+3+r] * (d / z[o])
		}
		dmin = min(dmin, d)
		emin = min(emin, z[o+2])
	}
	// The last two steps, unrolled.
	dnm2 := d
	s.dmin2 = dmin
	j4 = 4*(n0-1) - pp - 1
	dnm1, zeroed := qdSafeStep(z, j4, j4+2*pp-1, dnm2)
	if zeroed {
		dmin, emin = dnm1, 0
	}
	dmin = min(dmin, dnm1)
	s.dmin1 = dmin
	j4 += 4
	dn, zeroed := qdSafeStep(z, j4, j4+2*pp-1, dnm1)
	if zeroed {
		dmin, emin = dn, 0
	}
	dmin = min(dmin, dn)
	z[j4+2] = dn
	z[4*(n0+1)-pp-1] = emin
	s.dmin, s.dn, s.dn1, s.dn2 = dmin, dn, dnm1, dnm2
}

// qdSafeStep is one of DLASQ6's two unrolled last steps: the new q at
// j4−2, the new e at j4, the next d returned; zeroed when the new q is zero.
func qdSafeStep(z []float64, j4, j4p2 int, d float64) (float64, bool) {
	z[j4-2] = d + z[j4p2]
	switch {
	case z[j4-2] == 0:
		z[j4] = 0
		return z[j4p2+2], true
	case qdSafmin*z[j4p2+2] < z[j4-2] && qdSafmin*z[j4-2] < z[j4p2+2]:
		tmp := z[j4p2+2] / z[j4-2]
		z[j4] = z[j4p2] * tmp
		return d * tmp, false
	default:
		z[j4] = z[j4p2+2] * (z[j4p2] / z[j4-2])
		return z[j4p2+2] * (d / z[j4-2]), false
	}
}
