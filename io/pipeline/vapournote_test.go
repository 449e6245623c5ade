package pipeline

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Water vapour has its bending lines at about 1300–2000 cm⁻¹ and its
// stretching lines at about 3500–4000 cm⁻¹ (common practice). A region of
// 2400–1510 cm⁻¹ holds part of the bending lines, too little of the range
// for the check: the terminal must say the check was skipped, not only
// summary.json. A region with none of the lines (2400–2000) has nothing to
// check, and says nothing.
func TestVapourNotCheckedIsSaid(t *testing.T) {
	note := func(hi, lo float64) string {
		var axis []float64
		for x := hi; x >= lo; x -= 1 {
			axis = append(axis, x)
		}
		d := mat.NewDense(6, len(axis), nil)
		v := svd.CheckVapour(d, axis, nil)
		return vapourNotChecked(&Result{Axis: axis}, &v)
	}
	if got := note(2400, 1510); !strings.Contains(got, "water vapour not checked") || !strings.Contains(got, "1510–1950") {
		t.Errorf("region 2400:1510: note %q, want one saying the check was skipped over 1510–1950 cm⁻¹", got)
	}
	if got := note(2400, 2000); got != "" {
		t.Errorf("region 2400:2000 holds no vapour line, yet the note %q", got)
	}
}
