package svd

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// SIMPLISMA definitions (Windig & Guilment, Anal. Chem. 1991; from memory) evaluated by brute
// force: the full scaled matrix, its correlation-about-the-origin matrix and mat.Det of
// every candidate set.
func bruteSimplisma(d *mat.Dense, k int, f float64, signed bool) []int {
	n, m := d.Dims()
	mu, sd, mean := make([]float64, m), make([]float64, m), make([]float64, m)
	var muMax float64
	for j := 0; j < m; j++ {
		col := mat.Col(nil, j, d)
		for _, v := range col {
			mean[j] += v / float64(n)
			if signed {
				mu[j] += math.Abs(v) / float64(n)
			}
		}
		if !signed {
			mu[j] = mean[j]
		}
		for _, v := range col {
			sd[j] += (v - mean[j]) * (v - mean[j]) / float64(n)
		}
		sd[j] = math.Sqrt(sd[j])
		muMax = math.Max(muMax, mu[j])
	}
	alpha := f / 100 * muMax
	y := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			y.Set(i, j, d.At(i, j)/math.Sqrt(mu[j]*mu[j]+(sd[j]+alpha)*(sd[j]+alpha)))
		}
	}
	var r mat.Dense
	r.Mul(y.T(), y)
	r.Scale(1/float64(n), &r)
	var chosen []int
	for len(chosen) < k {
		best, bestV := -1, -1.0
		for j := 0; j < m; j++ {
			skip := false
			for _, c := range chosen {
				skip = skip || c == j
			}
			if skip {
				continue
			}
			set := append(append([]int(nil), chosen...), j)
			sub := mat.NewDense(len(set), len(set), nil)
			for a, p := range set {
				for b, q := range set {
					sub.Set(a, b, r.At(p, q))
				}
			}
			v := mat.Det(sub) * sd[j] / (mu[j] + alpha)
			if v > bestV {
				best, bestV = j, v
			}
		}
		chosen = append(chosen, best)
	}
	return chosen
}

func TestPurestDefinition(t *testing.T) {
	rng := newRNG(1991)
	d := noisyBilinear(rng, 25, 40, 3, 1e-3)
	for _, signed := range []bool{false, true} {
		for _, f := range []float64{1, 5, 20} {
			got, err := Purest(d, 3, f, signed)
			if err != nil {
				t.Fatal(err)
			}
			want := bruteSimplisma(d, 3, f, signed)
			for l := range want {
				if got[l] != want[l] {
					t.Errorf("signed %v f %v: picks %v, brute-force definition %v", signed, f, got, want)
					break
				}
			}
		}
	}
}

// Each species owns one band no other species has (selective channels, by construction);
// the purest channels must fall one in each selective band.
func TestPurestFindsSelectiveChannels(t *testing.T) {
	rng := newRNG(7)
	n, m := 40, 300
	s := mat.NewDense(m, 3, nil)
	own := []float64{40, 150, 260}
	shared := gaussBand(m, 200, 40)
	for k := 0; k < 3; k++ {
		b := gaussBand(m, own[k], 6)
		for j := 0; j < m; j++ {
			s.Set(j, k, b[j]+0.5*shared[j])
		}
	}
	c := randomProfiles(rng, n, 3, 0)
	for _, signed := range []bool{false, true} {
		d := product(c, s)
		if signed {
			// Difference data: subtract the first row, bands of consumed species go negative.
			first := mat.Row(nil, 0, d)
			for i := 0; i < n; i++ {
				for j := 0; j < m; j++ {
					d.Set(i, j, d.At(i, j)-first[j])
				}
			}
		}
		addNoise(rng, d, 1e-3)
		got, err := Purest(d, 3, 5, signed)
		if err != nil {
			t.Fatal(err)
		}
		hit := make([]bool, 3)
		for _, j := range got {
			for k, o := range own {
				if math.Abs(float64(j)-o) <= 12 {
					hit[k] = true
				}
			}
		}
		if !hit[0] || !hit[1] || !hit[2] {
			t.Errorf("signed %v: purest channels %v, want one near each of %v", signed, got, own)
		}
	}
}

func TestPurestTiesAndErrors(t *testing.T) {
	// Two identical columns: the lower index wins (deterministic tie-breaking).
	d := mat.NewDense(4, 3, []float64{
		1, 5, 1,
		2, 5, 2,
		3, 5, 3,
		4, 6, 4,
	})
	got, err := Purest(d, 1, 5, false)
	if err != nil {
		t.Fatal(err)
	}
	if want := bruteSimplisma(d, 1, 5, false); got[0] != want[0] || got[0] != 0 {
		t.Errorf("pick %v, definition %v", got, want)
	}
	// Column 2 duplicates column 0: after picking it, column 2 has zero weight and cannot
	// make a third independent channel.
	if got, err := Purest(d, 3, 5, false); err == nil {
		t.Errorf("three picks from rank-2 data: %v, want an error", got)
	}
	for name, c := range map[string]struct {
		d      *mat.Dense
		k      int
		offset float64
	}{
		"k0":     {d, 0, 5},
		"kbig":   {d, 4, 5},
		"offset": {d, 1, -1},
		"zero":   {mat.NewDense(3, 3, nil), 1, 5},
		"nil":    {nil, 1, 5},
	} {
		if _, err := Purest(c.d, c.k, c.offset, false); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// PurestLowRank on the factors P, Q picks the channels Purest picks on the
// matrix P Qᵀ itself (the same SIMPLISMA definitions, Windig & Guilment
// 1991, formed as quadratic forms instead of sums over rows), for absorbance
// (unsigned) and difference (signed) data.
func TestPurestLowRankEqualsDense(t *testing.T) {
	rng := newRNG(1991)
	n, m, r := 50, 120, 3
	for _, signed := range []bool{false, true} {
		p, q := mat.NewDense(n, r, nil), mat.NewDense(m, r, nil)
		for i := 0; i < n; i++ {
			for l := 0; l < r; l++ {
				p.Set(i, l, rng.Float64())
			}
		}
		for j := 0; j < m; j++ {
			for l := 0; l < r; l++ {
				v := math.Exp(-0.5 * math.Pow((float64(j)-30*float64(l+1))/8, 2))
				if signed && l == 1 {
					v = -v
				}
				q.Set(j, l, v+0.01*rng.Float64())
			}
		}
		var d mat.Dense
		d.Mul(p, q.T())
		want, err := Purest(&d, r, 5, signed)
		if err != nil {
			t.Fatal(err)
		}
		got, err := PurestLowRank(p, q, r, 5, signed)
		if err != nil {
			t.Fatal(err)
		}
		for i := range want {
			if got[i] != want[i] {
				t.Errorf("signed %v: low-rank picks %v, dense %v", signed, got, want)
				break
			}
		}
	}
}
