package report

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// transforms must give plot.Plot.Transforms' lengths to the bit (the
// reference: gonum/plot's own maps) on linear, inverted linear, log and
// inverted log axes, over canvases of several sizes and origins and values
// inside and outside each axis's range.
func TestTransformsAreGonumPlots(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	scales := []plot.Normalizer{plot.LinearScale{}, plot.InvertedScale{Normalizer: plot.LinearScale{}}, plot.LogScale{}, plot.InvertedScale{Normalizer: plot.LogScale{}}}
	for trial := 0; trial < 200; trial++ {
		p := plot.New()
		p.X.Scale, p.Y.Scale = scales[trial%4], scales[(trial/4)%4]
		p.X.Min, p.X.Max = 0.5+rng.Float64()*100, 200+rng.Float64()*4000
		p.Y.Min, p.Y.Max = 1e-3+rng.Float64(), 2+rng.Float64()*1e3
		w, h := vg.Length(100+rng.Float64()*500), vg.Length(80+rng.Float64()*400)
		c := draw.New(vgimg.New(w, h))
		c.Min = vg.Point{X: vg.Length(rng.Float64() * 40), Y: vg.Length(rng.Float64() * 30)}
		wantX, wantY := p.Transforms(&c)
		gotX, gotY := transforms(&c, p)
		for k := 0; k < 50; k++ {
			// Beyond the range on both sides, and positive (log axes).
			x := 0.9*p.X.Min + (1.1*p.X.Max-0.9*p.X.Min)*rng.Float64()
			y := 0.9*p.Y.Min + (1.1*p.Y.Max-0.9*p.Y.Min)*rng.Float64()
			if a, b := gotX.at(x), wantX(x); math.Float64bits(float64(a)) != math.Float64bits(float64(b)) {
				t.Fatalf("trial %d, x = %v: %v, Transforms %v", trial, x, a, b)
			}
			if a, b := gotY.at(y), wantY(y); math.Float64bits(float64(a)) != math.Float64bits(float64(b)) {
				t.Fatalf("trial %d, y = %v: %v, Transforms %v", trial, y, a, b)
			}
		}
	}
}

// BenchmarkTransforms maps a 3001-point line (a spectrum on an inverted
// wavenumber axis) to the canvas, by plot.Plot.Transforms' closures and
// by transforms.
func BenchmarkTransforms(b *testing.B) {
	p := plot.New()
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 1000, 4000, -0.1, 1.2
	c := draw.New(vgimg.New(400, 300))
	xs, ys := make([]float64, 3001), make([]float64, 3001)
	for i := range xs {
		xs[i], ys[i] = 4000-float64(i), math.Sin(float64(i)/100)
	}
	ps := make([]vg.Point, len(xs))
	b.Run("gonum", func(b *testing.B) {
		for b.Loop() {
			trX, trY := p.Transforms(&c)
			for i := range xs {
				ps[i] = vg.Point{X: trX(xs[i]), Y: trY(ys[i])}
			}
		}
	})
	b.Run("axisMap", func(b *testing.B) {
		for b.Loop() {
			trX, trY := transforms(&c, p)
			for i := range xs {
				ps[i] = vg.Point{X: trX.at(xs[i]), Y: trY.at(ys[i])}
			}
		}
	})
}
