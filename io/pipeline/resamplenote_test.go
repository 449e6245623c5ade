package pipeline

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/spectra"
)

// The demo's single beams as a folder of files whose second half lies half
// a point spacing off (an instrument restarted mid-run): with --resample
// the run says in one note, in the terminal and in summary.json, how many
// spectra were interpolated, from which one, and that linear interpolation
// halfway leaves √0.5 ≈ 0.71 of their noise (variance of (y_k+y_{k+1})/2
// for independent y: σ²/2).
func TestResampleNoteReachesSummary(t *testing.T) {
	tr := demo.Make(1)
	dir := t.TempDir()
	n, m := tr.Beams.Dims()
	h := tr.Axis[0] - tr.Axis[1]
	shifted := make([]float64, m-1) // half a spacing lower, inside the first axis
	for j := range shifted {
		shifted[j] = tr.Axis[j] - h/2
	}
	from := n / 2
	for i := 0; i < n; i++ {
		x, y := tr.Axis, tr.Beams.RawRowView(i)
		if i >= from {
			v, err := spectra.Resample(tr.Axis, y, shifted)
			if err != nil {
				t.Fatal(err)
			}
			x, y = shifted, v
		}
		writeFile(t, filepath.Join(dir, "scans", fmt.Sprintf("scan_%05.0f.csv", tr.Times[i])), csvSpectrum(x, y, "intensity"))
	}
	writeFile(t, filepath.Join(dir, "blank.csv"), csvSpectrum(tr.Axis, tr.Blank, "intensity"))
	s := NewSettings()
	s.Dir, s.Data, s.Kind, s.Blanks = dir, []string{"scans"}, "single-beam", []string{"blank.csv"}
	s.TimesFromName, s.Resample, s.Pre = true, true, tr.Pre
	s.Report, s.Bands, s.Checks, s.Out = "off", "off", "off", "out"
	var log bytes.Buffer
	if _, err := Execute(s, Streams{Out: &log, Err: &bytes.Buffer{}}); err != nil {
		t.Fatal(err)
	}
	want := fmt.Sprintf("--resample: %d of %d spectra were interpolated (linearly) onto the axis of scan_%05.0f.csv, the first scan_%05.0f.csv at %s s; interpolation averages neighbouring points, so their noise is lower, 0.71×",
		n-from, n, tr.Times[0], tr.Times[from], strconv.FormatFloat(tr.Times[from], 'g', -1, 64))
	if !strings.Contains(log.String(), want) {
		t.Errorf("terminal lacks %q:\n%s", want, log.String())
	}
	b, err := os.ReadFile(filepath.Join(dir, "out", "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum struct {
		Notes []string `json:"notes"`
	}
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	found := 0
	for _, note := range sum.Notes {
		if strings.Contains(note, want) {
			found++
		}
	}
	if found != 1 {
		t.Errorf("summary.json holds the note %d times, want once: %q", found, sum.Notes)
	}
}
