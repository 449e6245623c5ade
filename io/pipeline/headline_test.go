package pipeline

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// The terminal headline leads with the residual relative to the noise,
// recomputed here directly from its definition: √(‖D − C Sᵀ‖²_F / (σ² ν)) with
// ν = nm − k(n + m − k) degrees of freedom (common practice: a rank-k n × m
// matrix has k(n + m − k) free parameters). The demo's noise is constant in detector counts and its
// model is exact, so the ratio is near 1; explained variance stays off the
// terminal (it reads near 100 % for any fit).
func TestHeadlineResidualToNoise(t *testing.T) {
	_, r := demoSpecies(t)
	n, m := r.D.Dims()
	k := r.Components
	ss := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			fit := 0.0
			for c := 0; c < k; c++ {
				fit += r.ALS.C.At(i, c) * r.ALS.S.At(j, c)
			}
			ss += (r.D.At(i, j) - fit) * (r.D.At(i, j) - fit)
		}
	}
	nu := float64(n*m - k*(n+m-k))
	want := math.Sqrt(ss / (r.Rank.Sigma * r.Rank.Sigma * nu))
	if want < 0.8 || want > 1.25 {
		t.Errorf("demo residual / noise = %.3f, want about 1 (exact model, known noise)", want)
	}
	var b strings.Builder
	PrintTable(r, &b)
	out := b.String()
	head := fmt.Sprintf("residual %.3g × the noise", want)
	fitAt, lofAt := strings.Index(out, head), strings.Index(out, "lack of fit ")
	if fitAt < 0 || lofAt < 0 || fitAt > lofAt {
		t.Errorf("headline should show %q before the lack of fit:\n%s", head, out)
	}
	if strings.Contains(out, "explained") {
		t.Errorf("explained variance on the terminal:\n%s", out)
	}
}
