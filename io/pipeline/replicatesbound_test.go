package pipeline

import (
	"strings"
	"testing"
)

// --replicates is bounded by MaxReplicates, refused when set, so before
// anything is read (exit 2 for usage, one line saying the bound and why):
// 10⁸ replicates were accepted and ran until killed. The bound is ten times
// the about 1000 replicates percentile intervals need (Efron & Tibshirani
// 1993, §13.3, from memory; docs/constraints.md).
func TestReplicatesBounded(t *testing.T) {
	for _, c := range []struct {
		v  string
		ok bool
	}{{"0", true}, {"2", true}, {"10000", true}, {"10001", false}, {"100000000", false}} {
		err := NewSettings().Set("replicates", c.v)
		if c.ok != (err == nil) {
			t.Errorf("replicates %s: %v", c.v, err)
		}
		if err != nil && !strings.Contains(err.Error(), "at most 10000") {
			t.Errorf("replicates %s: %v, want the bound named", c.v, err)
		}
	}
}
