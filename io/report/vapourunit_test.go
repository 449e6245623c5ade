package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestVapourPlacesInWavenumbers: the water-vapour check reads a wavelength
// axis converted to wavenumber (ν̃/cm⁻¹ = 10⁷/(λ/nm), the definition), so
// summary.json's range and largest line are in cm⁻¹ and the report names
// them so, not in the axis's nm (catalyst-0.01 exported in nm: lines at
// 3550–3950 cm⁻¹, the largest at 3674.7 cm⁻¹).
func TestVapourPlacesInWavenumbers(t *testing.T) {
	w := &output.VapourJSON{Checked: true, Range: []float64{3550, 3950}, Detected: true, LargestAt: 3674.7}
	var text []string
	for _, r := range vapourRows(w, "wavelength") {
		text = append(text, r[0]+": "+r[1])
	}
	all := strings.Join(text, "; ")
	if !strings.Contains(all, "3550–3950 cm⁻¹") || !strings.Contains(all, "3674.7 cm⁻¹") || strings.Contains(all, "nm") {
		t.Errorf("rows: %s", all)
	}
}
