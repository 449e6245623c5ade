package pipeline

import (
	"bytes"
	"fmt"
	"strings"

	"github.com/bandsolve/bandsolve/io/jcamp"
	"github.com/bandsolve/bandsolve/io/output"
)

// SpectraJCAMP is the resolved spectra as JCAMP-DX, for software that reads
// that open format rather than CSV.
const SpectraJCAMP = "spectra.jdx"

// writeSpectraJCAMP writes one block per component into a LINK file
// (JCAMP-DX 5.01: a ##DATA TYPE=LINK block holding ##BLOCKS= blocks, each
// with its ##BLOCK_ID; from memory of McDonald & Wilks 1988 and the 5.01
// revision), ordinates in AFFN as io/jcamp writes them.
func writeSpectraJCAMP(r *Result, stage *output.Stage) error {
	if r.ALS == nil || r.Components == 0 {
		return nil
	}
	dataType, xUnits := "INFRARED SPECTRUM", "1/CM"
	switch r.AxisName {
	case "wavenumber":
	case "wavelength":
		dataType, xUnits = "UV/VIS SPECTRUM", "NANOMETERS"
	default:
		xUnits = "ARBITRARY UNITS"
	}
	what := "spectrum of a species at unit concentration"
	if r.Mode.String() == "reactions" {
		what = "reaction spectrum: absorbance change at the largest extent"
	}
	var b bytes.Buffer
	fmt.Fprintf(&b, "##TITLE=bandsolve resolved spectra\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=%d\n", r.Components)
	s := writtenSpectra(r)
	for k, name := range r.Names {
		y := make([]float64, len(r.Axis))
		for i := range y {
			y[i] = s.At(i, k)
		}
		blk := jcamp.Block{Title: name, DataType: dataType, XUnits: xUnits, YUnits: "ABSORBANCE",
			X: r.Axis, Y: y, Labels: []jcamp.Label{
				{Name: "ORIGIN", Value: "bandsolve " + Version + ", resolved " + r.Mode.String() + " component"},
				{Name: "OWNER", Value: ""},
				{Name: "$COMPONENT", Value: fmt.Sprintf("%s (%s)", name, what)},
			}}
		var one bytes.Buffer
		if err := jcamp.Write(&one, blk); err != nil {
			return fmt.Errorf("%s: %w", SpectraJCAMP, err)
		}
		// A linked block carries its ##BLOCK_ID after the version line.
		text := strings.Replace(one.String(), "##JCAMP-DX=5.01\n", fmt.Sprintf("##JCAMP-DX=5.01\n##BLOCK_ID=%d\n", k+1), 1)
		b.WriteString(text)
	}
	b.WriteString("##END=\n")
	return stage.Write(SpectraJCAMP, b.Bytes())
}
