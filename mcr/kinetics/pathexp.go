package kinetics

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// pathExp is the exact solution of an acyclic first-order network (no
// species is re-formed from its own products: A → B → C, A → B; A → C,
// A → B → C; D → E), whose species rate matrix K is lower triangular in a
// topological order of the species. For a triangular matrix the entries of
// any matrix function are sums over increasing paths (Davis 1973; Higham,
// Functions of Matrices, 2008, Thm 4.11, from memory):
//
//	exp(Kt)_ij = Σ_{paths j = s0 → s1 → … → sL = i} K_{s1 s0} ⋯ K_{sL s(L−1)} · e_t[κ_s0, …, κ_sL],
//
// with κ_s = K_ss and e_t[x0, …, xL] the divided difference of x ↦ e^{xt}.
// The extents ξ = R ∫0^t c(s) ds take the same sums with the point 0 added,
// since ∫0^t e_s[x0..xL] ds = e_t[x0, …, xL, 0]. Off-diagonal rates are ≥ 0
// and divided differences of e^{xt} are > 0 (f[x0..xL] = f^(L)(ξ)/L!), so the
// sums never cancel and every concentration is accurate to a few ulps
// relative to itself at any k·t, also for equal or nearly equal rate
// constants (the Bateman limit k t e^{−kt}), where an eigendecomposition
// becomes defective and scaling and squaring loses 2^s ulps.
type pathExp struct {
	ns, nr int
	// paths from each starting species (c0 > 0) to each species.
	terms []pathTerm
	// rates of the steps (R: nr × ns) for the extents.
	r  *mat.Dense
	c0 []float64
	dd ddScratch
}

// pathTerm is one path: weight Π K along it times c0 of its start; pts are
// the diagonal entries along it, sorted ascending.
type pathTerm struct {
	to     int
	weight float64
	pts    []float64
	// path is the species along the path, from its start to `to`
	// (sensitivities differentiate the weight and the points along it).
	path []int
}

// newPathExp returns nil when the network has a cycle (a reversible step)
// or a negative off-diagonal rate.
func newPathExp(m *mat.Dense, ns int, y0 []float64) *pathExp {
	d, _ := m.Dims()
	k := m.Slice(0, ns, 0, ns)
	indeg := make([]int, ns)
	for i := 0; i < ns; i++ {
		for j := 0; j < ns; j++ {
			if i == j {
				continue
			}
			v := k.At(i, j)
			if v < 0 || math.IsNaN(v) {
				return nil
			}
			if v > 0 {
				indeg[i]++
			}
		}
	}
	// Kahn's algorithm: a cycle leaves species unordered.
	var order []int
	for i := 0; i < ns; i++ {
		if indeg[i] == 0 {
			order = append(order, i)
		}
	}
	for a := 0; a < len(order); a++ {
		j := order[a]
		for i := 0; i < ns; i++ {
			if i != j && k.At(i, j) > 0 {
				if indeg[i]--; indeg[i] == 0 {
					order = append(order, i)
				}
			}
		}
	}
	if len(order) < ns {
		return nil
	}
	pe := &pathExp{ns: ns, nr: d - ns, c0: append([]float64(nil), y0[:ns]...)}
	if pe.nr > 0 {
		pe.r = mat.DenseCopyOf(m.Slice(ns, d, 0, ns))
	}
	var walk func(s int, w float64, pts []float64, path []int)
	walk = func(s int, w float64, pts []float64, path []int) {
		pts = append(pts, k.At(s, s))
		path = append(path, s)
		sorted := append([]float64(nil), pts...)
		sort.Float64s(sorted)
		pe.terms = append(pe.terms, pathTerm{to: s, weight: w, pts: sorted, path: append([]int(nil), path...)})
		for i := 0; i < ns; i++ {
			if v := k.At(i, s); i != s && v > 0 {
				walk(i, w*v, pts, path)
			}
		}
	}
	for _, j := range order {
		if pe.c0[j] > 0 {
			walk(j, pe.c0[j], nil, nil)
		}
	}
	return pe
}

// at writes [c(t); ξ(t)] into y for t > 0.
func (pe *pathExp) at(t float64, y []float64) {
	for i := range y {
		y[i] = 0
	}
	c := y[:pe.ns]
	for _, p := range pe.terms {
		c[p.to] += p.weight * pe.dd.expDD(p.pts, t)
	}
	if pe.nr == 0 {
		return
	}
	// ∫0^t c_l(s) ds per species, the same sums with the point 0 added.
	integral := pe.dd.integral(pe.ns)
	for _, p := range pe.terms {
		integral[p.to] += p.weight * pe.dd.expDD(withZero(&pe.dd, p.pts), t)
	}
	for q := 0; q < pe.nr; q++ {
		var v float64
		for l := 0; l < pe.ns; l++ {
			v += pe.r.At(q, l) * integral[l]
		}
		y[pe.ns+q] = v
	}
}

// withZero returns pts with 0 inserted in order (in scratch space).
func withZero(s *ddScratch, pts []float64) []float64 {
	out := s.pts[:0]
	done := false
	for _, x := range pts {
		if !done && x >= 0 {
			out = append(out, 0)
			done = true
		}
		out = append(out, x)
	}
	if !done {
		out = append(out, 0)
	}
	s.pts = out
	return out
}

// ddScratch holds the buffers of expDD so that a simulation allocates once.
type ddScratch struct {
	table []float64
	done  []bool
	x     []float64 // the points and time of the expDD under way
	t     float64
	n     int
	h     []float64
	pts   []float64
	integ []float64
	// facts[L] holds the factors of taylor's sum for L + 1 points (see
	// taylorFactors), formed once per L instead of once per call.
	facts [][]float64
}

func (s *ddScratch) integral(n int) []float64 {
	if cap(s.integ) < n {
		s.integ = make([]float64, n)
	}
	s.integ = s.integ[:n]
	for i := range s.integ {
		s.integ[i] = 0
	}
	return s.integ
}

// ddTaylorTerms bounds the Taylor series of a cluster: with |x − μ|·t ≤ 1/2
// its terms fall below 0.5^m/m!, under 1e-33 for m = 30.
const ddTaylorTerms = 30

// expDD is the divided difference e_t[x0, …, xL] of x ↦ e^{xt} at points
// sorted ascending, t > 0. Over a range of points spread by at most 1/t it
// is the Taylor series about the midpoint μ (McCurdy, Ng & Parlett, Math.
// Comp. 1984, from memory),
//
//	e_t[x0..xL] = e^{μt} t^L Σ_m h_m(u) / (L+m)!,   u_i = (x_i − μ) t,
//
// with h_m the complete homogeneous symmetric polynomials (the terms'
// absolute sum is at most e^{1/2}·e^{μt}t^L/L!, so no cancellation), and
// otherwise the recurrence (e[x1..xL] − e[x0..x(L−1)])/(xL − x0), whose two
// terms are positive and ordered, so that a spread of more than 1/t keeps
// the difference from cancelling. Ranges are tabulated as the recurrence
// reaches them, O(L²) at most.
func (s *ddScratch) expDD(x []float64, t float64) float64 {
	n := len(x)
	if n == 1 {
		return math.Exp(x[0] * t)
	}
	if cap(s.table) < n*n {
		s.table = make([]float64, n*n)
		s.done = make([]bool, n*n)
	}
	s.x, s.t, s.n = x, t, n
	done := s.done[:n*n]
	for i := range done {
		done[i] = false
	}
	return s.entry(0, n-1)
}

// entry is e_t[x_a..x_b], tabulated on demand: a range spread by at most
// 1/t is summed as a cluster and needs none of its sub-ranges, so only the
// ranges the recurrence reaches are formed (at small t only the whole one).
// Each is the same expression as in a table filled by increasing length.
func (s *ddScratch) entry(a, b int) float64 {
	k := a*s.n + b
	if s.done[k] {
		return s.table[k]
	}
	var v float64
	x, t := s.x, s.t
	switch {
	case a == b:
		v = math.Exp(x[a] * t)
	case (x[b]-x[a])*t <= 1:
		v = s.taylor(x[a:b+1], t)
	default:
		v = (s.entry(a+1, b) - s.entry(a, b-1)) / (x[b] - x[a])
	}
	s.table[k], s.done[k] = v, true
	return v
}

// taylorFactors returns 1/(L+m)! for m = 0 … ddTaylorTerms as taylor's sum
// takes them: 1/(L+ddTaylorTerms)! by dividing 1 by 2, 3, … in turn, then
// each next one down multiplied by L + m. They depend on L alone, and a
// simulation sums thousands of clusters: the 2(L + ddTaylorTerms) divisions
// and multiplications per cluster, each waiting for the one before, were
// a third of the sum's time. The same operations in the same order give the
// same bits as forming them in the sum.
func (s *ddScratch) taylorFactors(L int) []float64 {
	for len(s.facts) <= L {
		s.facts = append(s.facts, nil)
	}
	if f := s.facts[L]; f != nil {
		return f
	}
	f := make([]float64, ddTaylorTerms+1)
	fact := 1.0
	for i := 2; i <= L+ddTaylorTerms; i++ {
		fact /= float64(i)
	}
	for m := ddTaylorTerms; m >= 0; m-- {
		f[m] = fact
		fact *= float64(L + m)
	}
	s.facts[L] = f
	return f
}

// taylor sums the series of expDD for a cluster of points.
func (s *ddScratch) taylor(x []float64, t float64) float64 {
	L := len(x) - 1
	mu := 0.5 * (x[0] + x[L])
	if cap(s.h) < ddTaylorTerms+1 {
		s.h = make([]float64, ddTaylorTerms+1)
	}
	h := s.h[:ddTaylorTerms+1]
	h[0] = 1
	for m := 1; m <= ddTaylorTerms; m++ {
		h[m] = 0
	}
	for _, xi := range x {
		u := (xi - mu) * t
		for m := 1; m <= ddTaylorTerms; m++ {
			h[m] += u * h[m-1]
		}
	}
	// Σ h_m/(L+m)!, summed from the smallest term up.
	fact := s.taylorFactors(L)
	var sum float64
	for m := ddTaylorTerms; m >= 0; m-- {
		sum += h[m] * fact[m]
	}
	// e^{μt} t^L without overflow: in logs.
	return math.Exp(mu*t+float64(L)*math.Log(t)) * sum
}
