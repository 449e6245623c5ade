package svd

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Test data generators. Everything is seeded; the scenarios are invented (smooth Gaussian
// bands over a channel axis, smooth concentration profiles over time).

func newRNG(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 0xbadc0ffee)) }

// gaussBand is exp(−((j−centre)/width)²/2) on channels 0..m−1.
func gaussBand(m int, centre, width float64) []float64 {
	b := make([]float64, m)
	for j := range b {
		z := (float64(j) - centre) / width
		b[j] = math.Exp(-0.5 * z * z)
	}
	return b
}

// randomSpectra returns m x k non-negative spectra of one to three Gaussian bands each.
func randomSpectra(rng *rand.Rand, m, k int) *mat.Dense {
	s := mat.NewDense(m, k, nil)
	for c := 0; c < k; c++ {
		nb := 1 + rng.IntN(3)
		for b := 0; b < nb; b++ {
			centre := (0.05 + 0.9*rng.Float64()) * float64(m)
			width := (0.015 + 0.035*rng.Float64()) * float64(m)
			h := 0.3 + 0.7*rng.Float64()
			band := gaussBand(m, centre, width)
			for j := 0; j < m; j++ {
				s.Set(j, c, s.At(j, c)+h*band[j])
			}
		}
	}
	return s
}

// randomProfiles returns n x k smooth non-negative profiles: Gaussian humps in time or
// sigmoidal rises, the first pre rows held at their value at row pre (before the reaction).
func randomProfiles(rng *rand.Rand, n, k, pre int) *mat.Dense {
	c := mat.NewDense(n, k, nil)
	for s := 0; s < k; s++ {
		centre := rng.Float64()
		width := 0.12 + 0.3*rng.Float64()
		rise := rng.IntN(2) == 0
		for i := 0; i < n; i++ {
			ii := max(i, pre)
			t := float64(ii-pre) / float64(max(n-1-pre, 1))
			var v float64
			if rise {
				v = 1 / (1 + math.Exp(-(t-centre)/(0.3*width)))
			} else {
				z := (t - centre) / width
				v = math.Exp(-0.5 * z * z)
			}
			c.Set(i, s, v)
		}
	}
	return c
}

// noisyBilinear is n × m data of k smooth species (random profiles and
// spectra) plus white noise of standard deviation sigma.
func noisyBilinear(rng *rand.Rand, n, m, k int, sigma float64) *mat.Dense {
	d := product(randomProfiles(rng, n, k, 0), randomSpectra(rng, m, k))
	addNoise(rng, d, sigma)
	return d
}

func product(c, s *mat.Dense) *mat.Dense {
	var d mat.Dense
	d.Mul(c, s.T())
	return &d
}

func addNoise(rng *rand.Rand, d *mat.Dense, sigma float64) {
	n, m := d.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sigma*rng.NormFloat64())
		}
	}
}

func noiseMatrix(rng *rand.Rand, n, m int, sigma float64) *mat.Dense {
	d := mat.NewDense(n, m, nil)
	addNoise(rng, d, sigma)
	return d
}

func singularValues(t *testing.T, d mat.Matrix) []float64 {
	t.Helper()
	var s mat.SVD
	if !s.Factorize(d, mat.SVDNone) {
		t.Fatal("reference SVD failed")
	}
	return s.Values(nil)
}

// formulaMatrix is the matrix of testdata/svd/make_reference.py formula(n, m).
func formulaMatrix(n, m int) *mat.Dense {
	g := func(x, c, w float64) float64 { return math.Exp(-0.5 * ((x - c) / w) * ((x - c) / w)) }
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		for j := 0; j < m; j++ {
			v := float64(j) / float64(m-1)
			fi, fj := float64(i+1), float64(j+1)
			d.Set(i, j, math.Exp(-3*t)*g(v, 0.30, 0.05)+
				(1-math.Exp(-3*t))*g(v, 0.60, 0.08)+
				0.3*math.Sin(math.Pi*t)*g(v, 0.45, 0.03)+
				1e-3*math.Sin(0.37*fi*fi+1.91*fj+0.13*fi*fj))
		}
	}
	return d
}

func readCSVMatrix(t *testing.T, name string) *mat.Dense {
	t.Helper()
	fh, err := os.Open(filepath.Join("..", "testdata", "svd", name))
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	d := mat.NewDense(len(recs), len(recs[0]), nil)
	for i, rec := range recs {
		for j, f := range rec {
			v, err := strconv.ParseFloat(f, 64)
			if err != nil {
				t.Fatal(err)
			}
			d.Set(i, j, v)
		}
	}
	return d
}

func readJSON(t *testing.T, name string, v any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "svd", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatal(err)
	}
}

// finiteReport fails on any NaN or Inf in a report.
func finiteReport(t *testing.T, r *RankReport) {
	t.Helper()
	bad := func(name string, v float64) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("%s = %v", name, v)
		}
	}
	bad("Sigma", r.Sigma)
	bad("NoiseEdge", r.NoiseEdge)
	bad("Threshold", r.Threshold)
	for _, row := range r.Table {
		for _, v := range []float64{row.SingularValue, row.RE, row.IND, row.FSignificance, row.AutocorrU, row.AutocorrV} {
			bad("table", v)
		}
	}
}
