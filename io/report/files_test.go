package report

import (
	"bytes"
	"image/png"
	"strings"
	"testing"
)

// Every figure of the report also exists as a stand-alone SVG and PNG file;
// the PNG decodes (PNG specification, ISO/IEC 15948) at FigureDPI and the
// files are the same bytes on a second rendering (determinism rule).
func TestFigureFiles(t *testing.T) {
	dir := fixture(t, true)
	f, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	figs, _ := Figures(f)
	files, problems := FigureFiles(f)
	if len(problems) > 0 {
		t.Fatalf("problems: %v", problems)
	}
	if len(figs) == 0 || len(files) != 2*len(figs) {
		t.Fatalf("%d figures but %d files", len(figs), len(files))
	}
	for _, fig := range figs {
		p := files["figures/"+fig.ID+".png"]
		img, err := png.Decode(bytes.NewReader(p))
		if err != nil {
			t.Fatalf("%s.png: %v", fig.ID, err)
		}
		// 16 cm at 150 dpi = 945 pixels (1 in = 2.54 cm, definition).
		if w := img.Bounds().Dx(); w < 940 || w > 950 {
			t.Errorf("%s.png is %d pixels wide, want about 945", fig.ID, w)
		}
		s := string(files["figures/"+fig.ID+".svg"])
		if !strings.HasPrefix(s, "<?xml") || !strings.Contains(s, "<svg") {
			t.Errorf("%s.svg is not a stand-alone SVG document", fig.ID)
		}
		for _, it := range fig.Legend {
			if !strings.Contains(s, it.Label) && !strings.Contains(s, strings.ReplaceAll(it.Label, " ", "")) {
				// vgsvg writes text as <text> elements: each legend label must be there.
				t.Errorf("%s.svg lacks its legend entry %q", fig.ID, it.Label)
			}
		}
	}
	again, _ := FigureFiles(f)
	for name, b := range files {
		if !bytes.Equal(b, again[name]) {
			t.Errorf("%s differs between two renderings", name)
		}
	}
}
