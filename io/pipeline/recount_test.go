package pipeline

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
)

// The advice comparing the two counts agrees with the count reported once
// a minor factor is counted as a species after it was written: absolute
// absorbance of k species in kd < k independent reactions (the mass balance
// of a closed system, common practice) is said with the new k, and a count
// that comes to exceed the differences' gains the line. A trial's opaque
// band read "rank 3" above "advice: … has 2 chemical component(s)".
func TestAdviceFollowsARecount(t *testing.T) {
	for _, c := range []struct {
		k, kd, newK int
		before      bool // the advice line was there
		want        string
	}{
		{2, 1, 3, true, "has 3 chemical component(s) and the differences 1: at least 3 species take part in 1 independent"},
		{2, 2, 3, false, "has 3 chemical component(s) and the differences 2"},
	} {
		r := &Result{Rank: &svd.RankReport{Estimate: c.k}, DiffRank: &svd.RankReport{Estimate: c.kd}}
		r.Advice = []string{"factor 3 is a band shift"}
		if c.before {
			r.Advice = append(r.Advice, countsAdvice(c.kd, c.k))
		}
		r.Rank.Estimate = c.newK
		recountAdvice(r)
		n := 0
		for _, a := range r.Advice {
			if strings.HasPrefix(a, rankAdvicePrefix) {
				n++
				if !strings.Contains(a, c.want) {
					t.Errorf("%+v: advice %q, want %q", c, a, c.want)
				}
			}
		}
		if n != 1 || len(r.Advice) != 2 {
			t.Errorf("%+v: %d count line(s) in %q", c, n, r.Advice)
		}
	}
}
