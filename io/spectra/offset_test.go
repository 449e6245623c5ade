package spectra

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// DifferenceRow is the point test |a_j − g_j − b_j| ≤ 2⁻⁴⁶ (1 + |a_j| + |g_j| +
// |b_j|) at every point (its definition, written out per point here), on rows of
// absorbance size and of 10⁶, with differences from none to a few hundred ulps of
// the bound, and with NaN and ±Inf among the values.
func TestDifferenceRowIsThePointTest(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1)}
	for trial := 0; trial < 20000; trial++ {
		m := 1 + rng.IntN(9)
		size := []float64{1, 1e6}[trial%2]
		a, b, g := make([]float64, m), make([]float64, m), make([]float64, m)
		for j := range a {
			a[j] = size * rng.NormFloat64()
			g[j] = size * rng.NormFloat64()
			b[j] = a[j] - g[j]
			if rng.IntN(3) == 0 {
				bound := 0x1p-46 * (1 + math.Abs(a[j]) + math.Abs(g[j]) + math.Abs(b[j]))
				b[j] += bound * (0.5 + rng.Float64()) * float64(1-2*rng.IntN(2))
			}
			if rng.IntN(50) == 0 {
				[][]float64{a, b, g}[rng.IntN(3)][j] = special[rng.IntN(len(special))]
			}
		}
		want := true
		for j := range a {
			if math.Abs(a[j]-g[j]-b[j]) > 0x1p-46*(1+math.Abs(a[j])+math.Abs(g[j])+math.Abs(b[j])) {
				want = false
			}
		}
		if got := DifferenceRow(a, b, g); got != want {
			t.Fatalf("a %v, b %v, g %v: DifferenceRow %v, the point test %v", a, b, g, got, want)
		}
	}
}

// absorbances' offset against its definition (Assembled.DifferenceOffset):
// g = A₀ − ΔA₀ from the formed matrices, returned exactly when every row of
// the differences is its absolute row less g to rounding (DifferenceRow,
// read again from the matrices here), else nil; nil without a blank and
// with blind points. The data: beams of ordinary size, and a first beam a
// thousand million million times weaker than the others with a blank close
// to the reference, whose large first absorbances (about 296) leave g small
// and their roundings can leave later rows outside the bound; at GOMAXPROCS 1 and 2, in
// place of the beams and not.
func TestAbsorbancesCheckTheOffset(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	rng := rand.New(rand.NewPCG(21, 22))
	const n, m = 150, 41
	outcomes := map[bool]int{}
	for trial := 0; trial < 24; trial++ {
		runtime.GOMAXPROCS(1 + trial%2)
		weak := trial%3 == 2
		beams := mat.NewDense(n, m, nil)
		ref, blank := make([]float64, m), make([]float64, m)
		for j := 0; j < m; j++ {
			blank[j] = 1e4 * (1 + 0.1*rng.Float64())
			for i := 0; i < n; i++ {
				beams.Set(i, j, 1e4*math.Pow(10, -rng.Float64()))
			}
			ref[j] = beams.At(0, j)
			if weak {
				beams.Set(0, j, 1e-296*beams.At(0, j))
				ref[j] = blank[j] * (1 + 1e-9*rng.NormFloat64())
			}
		}
		v := mat.DenseCopyOf(beams)
		diff := mat.NewDense(n, m, nil)
		abs := mat.NewDense(n, m, nil)
		if trial%4 == 1 {
			abs = v // in place of the beams, as Assemble's Consume has it
		}
		_, _, offset := absorbances(v, ref, blank, diff, abs, nil)
		g := make([]float64, m)
		for j := range g {
			g[j] = abs.At(0, j) - diff.At(0, j)
		}
		every := true
		for i := 0; i < n; i++ {
			every = every && DifferenceRow(abs.RawRowView(i), diff.RawRowView(i), g)
		}
		outcomes[every]++
		switch {
		case every && (offset == nil || !vecmath.SameBits(offset, g)):
			t.Fatalf("trial %d: every row is A less g, but the offset is %v", trial, offset)
		case !every && offset != nil:
			t.Fatalf("trial %d: a row is not A less g, but an offset was returned", trial)
		}
		// Without a blank there is no absolute matrix to check against;
		// with a blind point its filling comes after the check.
		if _, _, o := absorbances(mat.DenseCopyOf(beams), ref, nil, mat.NewDense(n, m, nil), nil, nil); o != nil {
			t.Fatalf("trial %d: an offset without a blank", trial)
		}
		blind := &Blind{Rows: make([][]int, n), Count: 1}
		blind.Rows[n/2] = []int{m / 3}
		if _, _, o := absorbances(mat.DenseCopyOf(beams), ref, blank, mat.NewDense(n, m, nil), mat.NewDense(n, m, nil), blind); o != nil {
			t.Fatalf("trial %d: an offset with a blind point", trial)
		}
	}
	if outcomes[true] == 0 || outcomes[false] == 0 {
		t.Fatalf("rows all A less g in %d trials, not in %d: both are to be tried", outcomes[true], outcomes[false])
	}
}
