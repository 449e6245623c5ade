package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchWeightedCompressed is invented data of the default run's shape and
// form (2000 × 3001, k species, noise weights, a truncated SVD of the scaled
// matrix with three noise directions beside the species): M = P Qᵀ with
// P = [√A C | N₁] and Q = [√B S | N₂], whose exact SVD comes from the thin
// QR factors of P and Q and the SVD of the small R_P R_Qᵀ. C holds the
// profiles of consecutive first-order steps normalised to sum to one
// (closure), S Gaussian bands; it also returns a start away from C.
func benchWeightedCompressed(n, m, k int) (WeightedCompressed, *mat.Dense) {
	rng := rand.New(rand.NewPCG(7, 8))
	r := k + 3
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1e4 * (1 + 0.5*math.Sin(float64(i)/300))
	}
	for j := range col {
		col[j] = 1 + 0.8*math.Cos(float64(j)/500)
	}
	p, q := mat.NewDense(n, r, nil), mat.NewDense(m, r, nil)
	c0 := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n) * 8
		sum := 0.0
		prof := make([]float64, k)
		for j := range prof {
			prof[j] = math.Pow(t, float64(j)) * math.Exp(-t) / math.Gamma(float64(j)+1)
			sum += prof[j]
		}
		for j, v := range prof {
			p.Set(i, j, math.Sqrt(row[i])*v/sum)
			c0.Set(i, j, v/sum+0.2*rng.Float64())
		}
		for j := k; j < r; j++ {
			p.Set(i, j, 1e-2*rng.NormFloat64())
		}
	}
	for i := 0; i < m; i++ {
		for j := 0; j < k; j++ {
			x := (float64(i) - float64(m)*(float64(j)+0.7)/float64(k+1)) / 150
			q.Set(i, j, math.Sqrt(col[i])*math.Exp(-x*x))
		}
		for j := k; j < r; j++ {
			q.Set(i, j, 1e-2*rng.NormFloat64())
		}
	}
	qp, rp := thinQR(p)
	qq, rq := thinQR(q)
	var small mat.Dense
	small.Mul(rp, rq.T())
	var svd mat.SVD
	if !svd.Factorize(&small, mat.SVDThin) {
		panic("bench data: SVD failed")
	}
	var w, z mat.Dense
	svd.UTo(&w)
	svd.VTo(&z)
	var u, v mat.Dense
	u.Mul(qp, &w)
	v.Mul(qq, &z)
	sigma := svd.Values(nil)
	frob := 0.0
	for _, s := range sigma {
		frob += s * s
	}
	return WeightedCompressed{U: &u, Sigma: sigma, V: &v, FrobSq: 1.0001 * frob, Row: row, Col: col}, c0
}

func benchResolveOptions() Options {
	return Options{Mode: Species, Closure: true, Total: []float64{1}, MaxIter: 40}
}

// BenchmarkResolveWeightedCompressed2000x3001k5: one resolution of the
// default run's form (40 iterations at most).
func BenchmarkResolveWeightedCompressed2000x3001k5(b *testing.B) {
	d, c0 := benchWeightedCompressed(2000, 3001, 5)
	opt := benchResolveOptions()
	b.ReportAllocs()
	for b.Loop() {
		res, err := Resolve(d, c0, opt)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(res.Iterations), "iterations")
	}
}

// BenchmarkCheckConstraintsWeightedCompressed2000x3001k5: the constraint
// checks' refits from that resolution (closure, non-negative spectra and
// profiles), without restarts.
func BenchmarkCheckConstraintsWeightedCompressed2000x3001k5(b *testing.B) {
	d, c0 := benchWeightedCompressed(2000, 3001, 5)
	opt := benchResolveOptions()
	fit, err := Resolve(d, c0, opt)
	if err != nil {
		b.Fatal(err)
	}
	co := CheckOptions{MaxIter: 200, Restart: func(ConstraintCheck) bool { return false }}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := CheckConstraintsWith(d, fit, opt, co); err != nil {
			b.Fatal(err)
		}
	}
}
