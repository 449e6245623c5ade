package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A warm start from any passive sets must reach the same minimiser as a cold
// start: the problem is strictly convex, so its KKT point is unique
// (Lawson & Hanson 1974, ch. 23).
func TestWarmStartSameMinimiser(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	for trial := 0; trial < 10; trial++ {
		k := 2 + trial%5
		_, g, b := randomProblem(rng, 25, k, 200)
		for _, closure := range []bool{false, true} {
			p := Problem{G: g, B: b}
			if closure {
				p.Equality, p.Total = ones(k), []float64{1}
			}
			cold, err := SolveMany(p)
			if err != nil {
				t.Fatal(err)
			}
			p.Passive = make([]uint64, 200)
			for c := range p.Passive {
				p.Passive[c] = rng.Uint64() & (1<<uint(k) - 1) // arbitrary, often wrong
			}
			warm, err := SolveMany(p)
			if err != nil {
				t.Fatal(err)
			}
			for c := 0; c < 200; c++ {
				for j := 0; j < k; j++ {
					if d := math.Abs(cold.At(j, c) - warm.At(j, c)); d > 1e-9*math.Max(1, math.Abs(cold.At(j, c))) {
						t.Fatalf("trial %d column %d var %d: cold %v warm %v", trial, c, j, cold.At(j, c), warm.At(j, c))
					}
				}
				if p.Passive[c] == 0 && cold.At(0, c) != 0 {
					t.Fatalf("column %d: passive set not returned", c)
				}
			}
		}
	}
}

// Started from its own final passive sets, a column ends at the same bits:
// the active-set method's answer is the minimiser on the final passive set
// (Lawson & Hanson 1974, ch. 23, the solution is the unconstrained one on
// the passive variables), and the warm start solves that very system once
// instead of twice. Checked with and without closure and with variables
// pinned to non-zero values (the right-hand side then carries them).
func TestWarmStartFromFinalSetsSameBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 24))
	for trial := 0; trial < 12; trial++ {
		k := 2 + trial%6
		_, g, b := randomProblem(rng, 25, k, 300)
		for _, variant := range []string{"plain", "closure", "pinned"} {
			p := Problem{G: g, B: b, Passive: make([]uint64, 300)}
			switch variant {
			case "closure":
				p.Equality, p.Total = ones(k), []float64{1}
			case "pinned":
				p.FixMask, p.Fixed = make([][]bool, k), mat.NewDense(k, 300, nil)
				p.FixMask[0] = make([]bool, 300)
				for c := 0; c < 300; c += 3 {
					p.FixMask[0][c] = true
					p.Fixed.Set(0, c, 0.1+rng.Float64())
				}
			}
			cold, err := SolveMany(p)
			if err != nil {
				t.Fatal(err)
			}
			sets := append([]uint64(nil), p.Passive...)
			warm, err := SolveMany(p)
			if err != nil {
				t.Fatal(err)
			}
			for c := 0; c < 300; c++ {
				if p.Passive[c] != sets[c] {
					t.Fatalf("trial %d %s column %d: passive set %b after the warm start, %b before", trial, variant, c, p.Passive[c], sets[c])
				}
				for j := 0; j < k; j++ {
					if math.Float64bits(cold.At(j, c)) != math.Float64bits(warm.At(j, c)) {
						t.Fatalf("trial %d %s column %d var %d: cold %v warm %v", trial, variant, c, j, cold.At(j, c), warm.At(j, c))
					}
				}
			}
		}
	}
}

// LackOfFit streams the residual: it must equal, to the bit, the lack of
// fit of the stored residual matrix (definition 100‖D − CSᵀ‖/‖D‖).
func TestLackOfFitStreamsExactly(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	for _, n := range []int{1, 255, 256, 257, 700} {
		d := mat.NewDense(n, 40, nil)
		c := mat.NewDense(n, 3, nil)
		s := mat.NewDense(40, 3, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < 40; j++ {
				d.Set(i, j, rng.NormFloat64())
			}
			for k := 0; k < 3; k++ {
				c.Set(i, k, rng.Float64())
			}
		}
		for j := 0; j < 40; j++ {
			for k := 0; k < 3; k++ {
				s.Set(j, k, rng.Float64())
			}
		}
		_, want := Residuals(d, c, s)
		if got := LackOfFit(d, c, s); got != want {
			t.Errorf("n=%d: streamed %v, stored %v", n, got, want)
		}
	}
}
