package spectra

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// Profiles is a table of time profiles: one row per acquisition time, one
// column per component (an initial estimate given with --init FILE).
type Profiles struct {
	Names  []string   // column titles after the time column
	Times  []float64  // seconds, in file order
	Values *mat.Dense // len(Times) × len(Names)
	Source string
}

// ReadProfiles reads "time,c1,c2,…" with a title row whose cells need not
// be numbers, then one row per time. Times must be distinct. Numbers are
// read as in spectrum and matrix files (fileMarks): decimal commas with
// ';' or tab separators, and quoted in a comma-separated file.
func ReadProfiles(path string) (*Profiles, error) {
	raw, err := readAll(path)
	if err != nil {
		return nil, err
	}
	const hint = "a profiles file has a header 'time,NAME1,NAME2,…' and one row per acquisition time (seconds)"
	lines := splitLines(raw)
	if len(lines) == 0 {
		return nil, inputErr(path, 0, hint, "is empty")
	}
	head := lines[0]
	sep := detectSeparator(head.text)
	hf := fields(head.text, sep, nil)
	if len(hf) < 2 {
		return nil, inputErr(path, head.n, hint, "header has %d column(s)", len(hf))
	}
	mk, err := fileMarks(path, lines[1:], sep, -1)
	if err != nil {
		return nil, err
	}
	if _, err := mk.cell(hf[0]); err == nil {
		return nil, inputErr(path, head.n, hint, "first row is numbers, not a header")
	}
	k := len(hf) - 1
	p := &Profiles{Source: path}
	for _, h := range hf[1:] {
		p.Names = append(p.Names, string(h))
	}
	rows := lines[1:]
	if len(rows) == 0 {
		return nil, inputErr(path, head.n, hint, "has a header but no data rows")
	}
	p.Values = mat.NewDense(len(rows), k, nil)
	seen := map[float64]int{}
	var buf [][]byte
	for i, l := range rows {
		buf = fields(l.text, sep, buf)
		if len(buf) != k+1 {
			return nil, inputErr(path, l.n, fmt.Sprintf("every row needs %d cells (time + %d profiles) like the header", k+1, k), "row has %d cells, header has %d", len(buf), k+1)
		}
		t, err := mk.cell(buf[0])
		if err != nil {
			return nil, inputErr(path, l.n, mk.hint(buf[0], "the first column must be the time in seconds"), "time cell: %v", err)
		}
		if prev, dup := seen[t]; dup {
			return nil, inputErr(path, l.n, "each row needs its own time", "time %g s repeats line %d", t, prev)
		}
		seen[t] = l.n
		p.Times = append(p.Times, t)
		for j := 0; j < k; j++ {
			v, err := mk.cell(buf[j+1])
			if err != nil {
				return nil, inputErr(path, l.n, mk.hint(buf[j+1], "replace it with a number"), "column %d (%s): %v", j+2, quoteCell(hf[j+1]), err)
			}
			p.Values.Set(i, j, v)
		}
	}
	return p, nil
}
