package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// BenchmarkGather: one channel's 1998 absolute second differences of
// normal noise, the window ±8 % around their median (the noise model's
// first look, io/spectra.middlePairNear).
func BenchmarkGather(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 2))
	c := make([]float64, 1998)
	for i := range c {
		c[i] = math.Abs(rng.NormFloat64())
	}
	pick := make([]float64, 256+GatherSpare)
	for b.Loop() {
		Gather(c, 0.674*0.92, 0.674*1.08, pick)
	}
}
