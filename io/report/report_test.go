package report

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// fixture writes an output folder for A → B, first order (k = 0.01 /s),
// on an infrared axis 1800 → 1000 cm⁻¹: concentrations from the analytic
// solution a = e^{−kt}, b = 1 − a (Harcourt & Esson 1866), two Gaussian
// bands, and a deterministic ±1e-4 residual pattern. With all is false
// only the files of a run without EFA, bands and kinetics are written.
func fixture(t testing.TB, all bool) string {
	t.Helper()
	dir := t.TempDir()
	write := func(name, body string) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	const k = 0.01
	var axis, times []float64
	for x := 1800.0; x >= 1000; x -= 4 {
		axis = append(axis, x)
	}
	for tm := 0.0; tm <= 600; tm += 10 {
		times = append(times, tm)
	}
	g := func(x, c, w float64) float64 { return math.Exp(-0.5 * (x - c) * (x - c) / (w * w)) }
	sa := func(x float64) float64 { return 0.8*g(x, 1720, 12) + 0.3*g(x, 1250, 20) }
	sb := func(x float64) float64 { return 0.6*g(x, 1650, 15) + 0.4*g(x, 1100, 18) }
	var sp strings.Builder
	sp.WriteString("wavenumber,species_1,species_2\n")
	for _, x := range axis {
		fmt.Fprintf(&sp, "%g,%g,%g\n", x, sa(x), sb(x))
	}
	write("spectra.csv", sp.String())
	var pr, kin strings.Builder
	pr.WriteString("time,species_1,species_2\n")
	kin.WriteString("time,species_1_fit,species_2_fit\n")
	for _, tm := range times {
		a := math.Exp(-k * tm)
		fmt.Fprintf(&pr, "%g,%g,%g\n", tm, a, 1-a)
		fmt.Fprintf(&kin, "%g,%g,%g\n", tm, a, 1-a)
	}
	write("profiles.csv", pr.String())
	write("singular_values.csv", "factor,singular_value,above_noise_edge\n1,20,yes\n2,4,yes\n3,0.003,no\n4,0.0028,no\n5,0.0027,no\n")
	write("rank.csv", "k,singular_value\n1,20\n2,4\n3,0.003\n")
	var it strings.Builder
	it.WriteString("iteration,lack_of_fit_percent\n")
	for i := 1; i <= 20; i++ {
		fmt.Fprintf(&it, "%d,%g\n", i, 0.1+30*math.Exp(-float64(i)))
	}
	write("iterations.csv", it.String())
	data := func(i, j int) float64 {
		a := math.Exp(-k * times[i])
		return a*sa(axis[j]) + (1-a)*sb(axis[j])
	}
	diff := func(i, j int) float64 { return data(i, j) - data(0, j) }
	res := func(i, j int) float64 { return 1e-4 * float64((i*7+j*13)%5-2) / 2 }
	write(MapsFile, string(MapsCSV(axis, times, nil, []MapMatrix{{"data", data}, {"difference", diff}, {"residual", res}})))
	summary := `{
  "tool": "bandsolve test", "rank_estimate": 2, "components": 2, "mode": "species",
  "mode_reason": "species: absolute absorbance", "lack_of_fit_percent": 0.1, "explained_variance_percent": 99.9999,
  "noise_lack_of_fit_percent": 0.098, "iterations": 20, "converged": true, "noise_sigma": 0.0001,
  "noise_source": "pre-reaction rows", "noise_edge": 0.0028, "rank_reason": "two above the edge",
  "rank_criteria": [{"name": "noise-floor", "estimate": 2, "source": "Geman 1980", "detail": "2 above"},
                    {"name": "ind", "estimate": 3, "source": "Malinowski 1977", "detail": "minimum at 3"}],
  "difference_rank_estimate": 1, "svd_method": "exact", "compressed_iterations": false,
  "initial_estimate": "purest", "closure": "1", "spectra": 61, "points": 201, "axis": "wavenumber",
  "experiments": ["input/series.csv"], "component_names": ["species_1", "species_2"],
  "feasible_bands": %s, %s
  "advice": ["one reaction"], "notes": [], "warnings": ["a <b>bold</b> warning"], "constraint_costs": {"closure": 0.001}
}
`
	bands, kinJSON := "[]", ""
	if all {
		bands = `[{"component": "species_1", "min": 0.5, "max": 0.52}, {"component": "species_2", "min": 0.3, "max": 0.6}]`
		kinJSON = `"kinetics": {"model": "A -> B", "rate_constants": [{"step": "A -> B", "k_per_s": 0.01, "stderr_per_s": 0.0002, "half_life_s": 69.31471806}]},`
		write("kinetics.csv", kin.String())
		var efa strings.Builder
		efa.WriteString("time,forward_1,forward_2,backward_1,backward_2\n")
		for i, tm := range times {
			f2 := math.Log10(1e-4 + 0.01*float64(i))
			fmt.Fprintf(&efa, "%g,%g,%g,%g,%g\n", tm, 1+0.01*float64(i), f2, 1.5, -3.0)
		}
		write("efa.csv", efa.String())
		// bands.csv and intervals.csv in the long layout the pipeline writes.
		var bb, iv strings.Builder
		bb.WriteString("component,side,experiment,position,solution,at_min,at_max\n")
		iv.WriteString("component,side,experiment,position,estimate,low,high,sd\n")
		for ci, s := range []func(float64) float64{sa, sb} {
			name := fmt.Sprintf("species_%d", ci+1)
			for _, x := range axis {
				fmt.Fprintf(&bb, "%s,spectrum,,%g,%g,%g,%g\n", name, x, s(x), 0.95*s(x), 1.05*s(x))
				fmt.Fprintf(&iv, "%s,spectrum,,%g,%g,%g,%g,0\n", name, x, s(x), 0.99*s(x), 1.01*s(x))
			}
			for _, tm := range times {
				a := math.Exp(-k * tm)
				if ci == 1 {
					a = 1 - a
				}
				fmt.Fprintf(&bb, "%s,profile,1,%g,%g,%g,%g\n", name, tm, a, 0.97*a, 1.03*a)
			}
		}
		write("bands.csv", bb.String())
		write("intervals.csv", iv.String())
		write("as-run.bsr", "# as run\ndata input/series.csv\nkind single-beam\n")
		write("manifest.json", `{"tool": "bandsolve test", "started": "2030-01-02T03:04:05Z", "inputs": [{"file": "input/series.csv", "sha256": "abc"}]}`)
	}
	write("summary.json", fmt.Sprintf(summary, bands, kinJSON))
	return dir
}

func parse(t *testing.T, b []byte) *html.Node {
	t.Helper()
	doc, err := html.Parse(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("report.html does not parse as HTML: %v", err)
	}
	return doc
}

func walk(n *html.Node, f func(*html.Node)) {
	f(n)
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		walk(c, f)
	}
}

func attr(n *html.Node, key string) (string, bool) {
	for _, a := range n.Attr {
		if a.Key == key || (a.Namespace != "" && a.Namespace+":"+a.Key == key) {
			return a.Val, true
		}
	}
	return "", false
}

// figures returns each <figure>'s id and the number of <path>, <image>
// and <text> elements inside its drawing.
func figures(doc *html.Node) map[string][3]int {
	out := map[string][3]int{}
	walk(doc, func(n *html.Node) {
		if n.Type != html.ElementNode || n.Data != "figure" {
			return
		}
		id, _ := attr(n, "id")
		var c [3]int
		walk(n, func(m *html.Node) {
			if m.Type != html.ElementNode {
				return
			}
			switch m.Data {
			case "path":
				if d, _ := attr(m, "d"); len(d) > 10 {
					c[0]++
				}
			case "image":
				c[1]++
			case "text":
				c[2]++
			}
		})
		out[id] = c
	})
	return out
}

// noExternal fails on anything that would make the browser fetch: a
// <link> or <script>, or a src/href that is not inline data or a link
// within the page.
func noExternal(t *testing.T, doc *html.Node) {
	t.Helper()
	walk(doc, func(n *html.Node) {
		if n.Type != html.ElementNode {
			return
		}
		if n.Data == "link" || n.Data == "script" || n.Data == "iframe" || n.Data == "object" || n.Data == "embed" {
			t.Errorf("report has a <%s> element", n.Data)
		}
		for _, a := range n.Attr {
			k := strings.ToLower(a.Key)
			if k == "src" || k == "href" || k == "xlink:href" || strings.HasSuffix(k, "href") {
				if !strings.HasPrefix(a.Val, "data:") && !strings.HasPrefix(a.Val, "#") {
					t.Errorf("<%s %s=%q> refers outside the page", n.Data, a.Key, a.Val)
				}
			}
			if k == "style" && strings.Contains(a.Val, "url(") {
				t.Errorf("<%s> style refers to a url: %q", n.Data, a.Val)
			}
		}
		if n.Data == "style" && n.FirstChild != nil && (strings.Contains(n.FirstChild.Data, "url(") || strings.Contains(n.FirstChild.Data, "@import")) {
			t.Errorf("the style sheet refers to a url")
		}
	})
}

func TestReportFiguresForEverythingComputed(t *testing.T) {
	for _, all := range []bool{true, false} {
		dir := fixture(t, all)
		b, err := BuildDir(dir)
		if err != nil {
			t.Fatal(err)
		}
		doc := parse(t, b)
		noExternal(t, doc)
		figs := figures(doc)
		want := []string{"fig-absorbance", "fig-input", "fig-map", "fig-singular", "fig-spectra", "fig-profiles", "fig-iterations", "fig-residual-map", "fig-residual-spectrum"}
		if all {
			want = append(want, "fig-efa")
		} else if _, ok := figs["fig-efa"]; ok {
			t.Errorf("without efa.csv the report still has an EFA figure")
		}
		for _, id := range want {
			c, ok := figs[id]
			if !ok {
				t.Errorf("all=%v: no figure %s; have %v", all, id, figs)
				continue
			}
			// Non-empty: axes alone are a handful of paths; data adds more,
			// maps add an image; every figure has tick labels.
			if c[0] < 8 || c[2] < 4 {
				t.Errorf("%s looks empty: %d paths, %d texts", id, c[0], c[2])
			}
			if strings.Contains(id, "map") && c[1] != 2 {
				t.Errorf("%s: want the map image and its colour bar, got %d images", id, c[1])
			}
		}
		if len(figs) != len(want) {
			t.Errorf("all=%v: %d figures, want %d: %v", all, len(figs), len(want), figs)
		}
		s := string(b)
		for _, w := range []string{"lack of fit", "explained variance", "rank estimate", "noise-floor", "differs", "closure 1", "a &lt;b&gt;bold&lt;/b&gt; warning", "constraint_costs"} {
			if !strings.Contains(s, w) {
				t.Errorf("all=%v: report lacks %q", all, w)
			}
		}
		if all {
			for _, w := range []string{"A -&gt; B", "half-life 69.3 s", "species_2 is not unique", "species_1 is essentially unique", "species_1 uniqueness range", "the uniqueness range", "resampling interval", "kind single-beam", "sha256", "inputs[0].file"} {
				if !strings.Contains(s, w) {
					t.Errorf("report lacks %q", w)
				}
			}
			// The start time changes on every rerun: left out so reruns
			// give the same report.
			if strings.Contains(s, "2030-01-02") {
				t.Errorf("the manifest's start time is in the report")
			}
		}
	}
}

func TestRebuildGivesTheSameBytes(t *testing.T) {
	dir := fixture(t, true)
	a, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if err := Rebuild(dir); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, b) {
		t.Fatalf("rebuilt report differs from the built one")
	}
	// The report itself is not an input of the report.
	c, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, c) {
		t.Fatalf("a second build, with report.html present, differs")
	}
}

// Infrared wavenumber axes run high → low from left to right (common
// practice): the tick label 1800 must lie left of 1000 in the spectra figure.
func TestWavenumberAxisRunsHighToLow(t *testing.T) {
	f, err := Load(fixture(t, false))
	if err != nil {
		t.Fatal(err)
	}
	fig, err := spectraFigure(f, spectralAxis("wavenumber"))
	if err != nil || fig == nil {
		t.Fatalf("no spectra figure: %v", err)
	}
	pos := map[string]float64{}
	re := regexp.MustCompile(`<text x="([-0-9.e]+)" y="[^"]*" transform="[^"]*"[^>]*>([^<]*)</text>`)
	for _, m := range re.FindAllStringSubmatch(fig.SVG, -1) {
		x, _ := strconv.ParseFloat(m[1], 64)
		pos[m[2]] = x
	}
	lx, ok1 := pos["1800"]
	rx, ok2 := pos["1000"]
	if !ok1 || !ok2 {
		t.Fatalf("tick labels 1800 and 1000 not found in %v", pos)
	}
	if !(lx < rx) {
		t.Errorf("1800 cm⁻¹ at x = %g, 1000 cm⁻¹ at x = %g: the axis runs low → high", lx, rx)
	}
	if !strings.Contains(fig.SVG, "wavenumber / cm⁻¹") {
		t.Errorf("the axis label does not name its unit")
	}
}

func TestMapsCSVDownsamplesAndReadsBack(t *testing.T) {
	const n, m = 450, 901
	axis := make([]float64, m)
	times := make([]float64, n)
	for j := range axis {
		axis[j] = 4000 - 3*float64(j)
	}
	for i := range times {
		times[i] = 2 * float64(i)
	}
	val := func(i, j int) float64 { return math.Sin(float64(i)/50) * math.Cos(float64(j)/70) * 1.234567891 }
	dir := t.TempDir()
	path := filepath.Join(dir, MapsFile)
	if err := os.WriteFile(path, MapsCSV(axis, times, nil, []MapMatrix{{"data", val}}), 0o644); err != nil {
		t.Fatal(err)
	}
	mp, err := readMaps(path)
	if err != nil {
		t.Fatal(err)
	}
	d := mp.Matrices["data"]
	if len(mp.Axis) != MapPoints || len(d.Rows) != MapTimes {
		t.Fatalf("kept %d times × %d points, want %d × %d", len(d.Rows), len(mp.Axis), MapTimes, MapPoints)
	}
	if mp.Axis[0] != axis[0] || mp.Axis[len(mp.Axis)-1] != axis[m-1] || d.Times[0] != 0 || d.Times[len(d.Times)-1] != times[n-1] {
		t.Errorf("first and last time and point must be kept")
	}
	for r, i := range pick(n, MapTimes) {
		if d.Times[r] != times[i] {
			t.Fatalf("row %d: time %g, want %g", r, d.Times[r], times[i])
		}
		for c, j := range pick(m, MapPoints) {
			if got, want := d.Rows[r][c], val(i, j); math.Abs(got-want) > 5e-6*math.Max(math.Abs(want), 1e-300) {
				t.Fatalf("(%d,%d): %g, want %g to 6 digits", i, j, got, want)
			}
		}
	}
	idx := pick(1000, 7)
	for k := 1; k < len(idx); k++ {
		if idx[k] <= idx[k-1] {
			t.Fatalf("pick is not increasing: %v", idx)
		}
	}
}

func TestMissingSummaryIsAnError(t *testing.T) {
	if _, err := BuildDir(t.TempDir()); err == nil || !strings.Contains(err.Error(), "summary.json") {
		t.Fatalf("want an error naming summary.json, got %v", err)
	}
}

func TestBadOptionalFileIsNamedNotFatal(t *testing.T) {
	dir := fixture(t, false)
	if err := os.WriteFile(filepath.Join(dir, "efa.csv"), []byte("time,nothing\n\"unclosed\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	b, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), "efa.csv left out") {
		t.Errorf("the unreadable efa.csv is not named in the report")
	}
}

// The closure check: rows of profiles.csv summing to 1.5 with closure 1
// must be reported as a violated closure, and a component that never rises
// above 1 % as vanished.
func TestDerivedWarnings(t *testing.T) {
	dir := fixture(t, false)
	var pr strings.Builder
	pr.WriteString("time,species_1,species_2\n")
	for i := 0; i < 10; i++ {
		fmt.Fprintf(&pr, "%d,1.5,0.001\n", i)
	}
	if err := os.WriteFile(filepath.Join(dir, "profiles.csv"), []byte(pr.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	b, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	if !strings.Contains(s, "Closure is violated") || !strings.Contains(s, "species_2 has vanished") {
		t.Errorf("closure and vanished-component warnings missing")
	}
}

// The figures are built several at once: the report and the figure files
// are the same bytes at GOMAXPROCS 1, 2 and 3, and the figures come in
// reading order.
func TestFiguresSameAtAnyGOMAXPROCS(t *testing.T) {
	dir := fixture(t, true)
	f, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var first []byte
	var firstFiles map[string][]byte
	for _, procs := range []int{1, 2, 3} {
		runtime.GOMAXPROCS(procs)
		b, files, err := BuildWithFiles(f)
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first, firstFiles = b, files
			figs, _ := Figures(f)
			var ids []string
			for _, fg := range figs {
				ids = append(ids, fg.ID)
			}
			want := "fig-absorbance fig-input fig-map fig-singular fig-efa fig-spectra fig-profiles fig-iterations fig-residual-map fig-residual-spectrum"
			if got := strings.Join(ids, " "); got != want {
				t.Errorf("figures in the order %s, want %s", got, want)
			}
			continue
		}
		if !bytes.Equal(b, first) || len(files) != len(firstFiles) {
			t.Fatalf("GOMAXPROCS %d: report differs from GOMAXPROCS 1's", procs)
		}
		for name, data := range files {
			if !bytes.Equal(data, firstFiles[name]) {
				t.Fatalf("GOMAXPROCS %d: %s differs from GOMAXPROCS 1's", procs, name)
			}
		}
	}
}
