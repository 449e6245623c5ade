package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"github.com/bandsolve/bandsolve/internal/decimal"
	"github.com/bandsolve/bandsolve/io/output"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// Folder is what an output folder holds, read back from its files. Every
// file but summary.json is optional: a figure whose file is missing or
// unreadable is left out and the reason is listed in Problems.
type Folder struct {
	Files      []string // names in the folder, sorted (report.html excluded)
	Summary    *Summary
	SummaryRaw map[string]json.RawMessage // every key, for the ones Summary does not know
	Spectra    *Table                     // spectra.csv
	Profiles   *Table                     // profiles.csv
	Singular   *Table                     // singular_values.csv
	Rank       *Table                     // rank.csv
	Iterations *Table                     // iterations.csv
	EFA        *Table                     // efa.csv
	Bands      *Table                     // uniqueness.csv (bands.csv in folders before its rename)
	Kinetics   *Table                     // kinetics.csv
	Intervals  *Table                     // intervals.csv (bootstrap), if a run wrote one
	DemoCheck  *Table                     // demo_check.csv
	Vapour     *Table                     // vapour.csv, when water-vapour lines changed
	Maps       *Maps                      // maps.csv
	AsRun      *Text                      // as-run.*
	Manifest   *Text                      // manifest.*
	Problems   []string
}

// Text is a text file shown as it is.
type Text struct {
	Name string
	Body string
}

// The summary's types are the ones the run writes summary.json with
// (io/output), so the report and the writer cannot drift apart.
type (
	Summary   = output.Summary
	Criterion = output.CriterionJSON
	Band      = output.BandJSON
	Kinetics  = output.KineticsJSON
)

// knownKeys are the summary keys the report presents in its own words;
// any other key is listed as it is so new results still show.
var knownKeys = map[string]bool{}

func init() {
	for _, k := range []string{"tool", "rank_estimate", "components", "mode", "mode_reason", "lack_of_fit_percent",
		"explained_variance_percent", "noise_lack_of_fit_percent", "iterations", "converged", "noise_sigma",
		"noise_source", "noise_edge", "rank_reason", "rank_criteria", "difference_rank_estimate", "difference_rank_reason", "svd_method",
		"compressed_iterations", "initial_estimate", "closure", "spectra", "points", "axis", "experiments",
		"component_names", "uniqueness_ranges", "feasible_bands", "feasible_bands_note", "kinetics", "kinetics_not_done", "advice", "notes", "warnings", "constraints", "constraint_checks"} {
		knownKeys[k] = true
	}
}

// Table is a CSV file: its header and each column, parsed as numbers where
// the cell is one (NaN otherwise) and kept as text.
type Table struct {
	Name   string
	Header []string
	Text   [][]string // rows of cells
}

// Rows is the number of data rows.
func (t *Table) Rows() int { return len(t.Text) }

// Index returns the column named name (case-insensitive), −1 if none.
func (t *Table) Index(name string) int {
	for i, h := range t.Header {
		if strings.EqualFold(strings.TrimSpace(h), name) {
			return i
		}
	}
	return -1
}

// Col returns column j as numbers; cells that are not numbers are NaN.
func (t *Table) Col(j int) []float64 {
	out := make([]float64, len(t.Text))
	for i, r := range t.Text {
		out[i] = cell(r, j)
	}
	return out
}

// cell is cell j of row r as a number, NaN when it is not one (or infinite).
func cell(r []string, j int) float64 {
	if j >= 0 && j < len(r) {
		s := strings.TrimSpace(r[j])
		// The plain decimals the run writes are read by decimal.Parse's
		// exact shortcut, strconv.ParseFloat's bits (a finite number).
		if v, ok := decimal.Parse([]byte(s)); ok {
			return v
		}
		if v, err := strconv.ParseFloat(s, 64); err == nil && !math.IsInf(v, 0) {
			return v
		}
	}
	return math.NaN()
}

// Numeric says whether every cell of column j is a number.
func (t *Table) Numeric(j int) bool {
	if len(t.Text) == 0 {
		return false
	}
	for _, v := range t.Col(j) {
		if math.IsNaN(v) {
			return false
		}
	}
	return true
}

// Maps is maps.csv: a downsampled copy of the matrices the figures need
// (the data matrix, the difference spectra, the residuals), one row per
// kept time.
type Maps struct {
	Axis     []float64
	Matrices map[string]*Matrix
}

// maxFileBytes bounds one file of an output folder read for the report.
const maxFileBytes = 1 << 30

// readInFolder reads the regular file path through an os.Root opened on
// its folder: nothing in an output folder is trusted (docs/security.md),
// so a result file that is a link leading out of the folder, a device or a
// FIFO is refused rather than copied into the report.
func readInFolder(path string) ([]byte, error) {
	root, err := os.OpenRoot(filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	defer root.Close()
	name := filepath.Base(path)
	st, err := root.Stat(name)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, err
		}
		return nil, fmt.Errorf("%s: refused: it leads outside the folder (%v)", name, err)
	}
	if !st.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: refused: not a regular file", name)
	}
	if st.Size() > maxFileBytes {
		return nil, fmt.Errorf("%s: refused: %d bytes, more than the %d accepted", name, st.Size(), maxFileBytes)
	}
	return root.ReadFile(name)
}

// Matrix is one matrix of maps.csv.
type Matrix struct {
	Experiment []int
	Times      []float64
	Rows       [][]float64
}

// Load reads an output folder. Only a missing or unreadable summary.json is
// an error: without it there is no result to report.
func Load(dir string) (*Folder, error) { return LoadStaged(dir, nil, nil) }

// LoadStaged is Load for a folder being written by this process. maps,
// when not nil, is what readMaps gives for the folder's maps.csv
// (FormatMaps returns it beside the file's bytes), so a run that has just
// written the file need not read and parse it again. staged, when not nil,
// gives the bytes a file of the folder was written with
// (output.Stage.Written), which are read instead of the file, so the run's
// report does not read back, into new memory, what it holds already. The
// Folder is the same (the bytes are the file's).
func LoadStaged(dir string, maps *Maps, staged func(name string) ([]byte, bool)) (*Folder, error) {
	return LoadParsed(dir, maps, staged, nil)
}

// Parsed is a table parsed from the bytes of a file (ParseTable), kept
// with them.
type Parsed struct {
	Bytes []byte
	Table *Table
}

// LoadParsed is LoadStaged taking, for a file whose bytes are those a
// table of parsed was parsed from (compared byte for byte), that table
// rather than parsing them again: the same Table, which figures drawn
// ahead from it then share (their views compare at once). The tables are
// read, never changed, by the report.
func LoadParsed(dir string, maps *Maps, staged func(name string) ([]byte, bool), parsed map[string]Parsed) (*Folder, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("reading output folder: %w", err)
	}
	f := &Folder{}
	for _, e := range ents {
		if e.Type().IsRegular() && e.Name() != "report.html" && !strings.HasPrefix(e.Name(), ".") {
			f.Files = append(f.Files, e.Name())
		}
	}
	sort.Strings(f.Files)
	read := func(name string) ([]byte, error) {
		if staged != nil {
			if _, found := slices.BinarySearch(f.Files, name); found {
				if b, ok := staged(name); ok {
					return b, nil
				}
			}
		}
		return readInFolder(filepath.Join(dir, name))
	}
	b, err := read("summary.json")
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s: has no summary.json, so it holds no bandsolve results to report", dir)
		}
		return nil, fmt.Errorf("reading summary: %w", err)
	}
	f.Summary = &Summary{}
	if err := json.Unmarshal(b, f.Summary); err != nil {
		return nil, fmt.Errorf("%s: summary.json is not valid: %s; run the analysis again into a new --out", dir, output.JSONFault(err))
	}
	if err := json.Unmarshal(b, &f.SummaryRaw); err != nil {
		return nil, fmt.Errorf("%s: summary.json is not valid: %s; run the analysis again into a new --out", dir, output.JSONFault(err))
	}
	table := func(name string) *Table {
		b, err := read(name)
		if p, ok := parsed[name]; err == nil && ok && p.Table != nil && bytes.Equal(p.Bytes, b) {
			return p.Table
		}
		var t *Table
		if err == nil {
			t, err = tableOf(b)
		}
		if err != nil {
			if !errors.Is(err, os.ErrNotExist) {
				f.Problems = append(f.Problems, fmt.Sprintf("%s left out: %v", name, err))
			}
			return nil
		}
		t.Name = name
		return t
	}
	f.Spectra = table("spectra.csv")
	f.Profiles = table("profiles.csv")
	f.Singular = table("singular_values.csv")
	f.Rank = table("rank.csv")
	f.Iterations = table("iterations.csv")
	f.EFA = table("efa.csv")
	if f.Bands = table("uniqueness.csv"); f.Bands == nil {
		f.Bands = table("bands.csv")
	}
	f.Kinetics = table("kinetics.csv")
	f.Intervals = table("intervals.csv")
	f.DemoCheck = table("demo_check.csv")
	f.Vapour = table("vapour.csv")
	if maps != nil {
		f.Maps = maps
	} else if m, err := readMaps(filepath.Join(dir, MapsFile)); err == nil {
		f.Maps = m
	} else if !errors.Is(err, os.ErrNotExist) {
		f.Problems = append(f.Problems, fmt.Sprintf("%s left out: %v", MapsFile, err))
	}
	for _, name := range f.Files {
		switch {
		case f.AsRun == nil && strings.HasPrefix(name, "as-run."):
			f.AsRun = readText(read, name)
		case f.Manifest == nil && strings.HasPrefix(name, "manifest."):
			f.Manifest = readText(read, name)
		}
	}
	return f, nil
}

func readText(read func(name string) ([]byte, error), name string) *Text {
	b, err := read(name)
	if err != nil {
		return nil
	}
	return &Text{Name: name, Body: strings.ToValidUTF8(string(b), "\uFFFD")}
}

func readTable(path string) (*Table, error) {
	b, err := readInFolder(path)
	if err != nil {
		return nil, err
	}
	return tableOf(b)
}

// ParseTable is the table Load reads from a file name holding b.
func ParseTable(name string, b []byte) (*Table, error) {
	t, err := tableOf(b)
	if err != nil {
		return nil, err
	}
	t.Name = name
	return t, nil
}

// tableOf is a CSV file's table.
func tableOf(b []byte) (*Table, error) {
	recs, err := parseCSV(b)
	if err != nil {
		return nil, fmt.Errorf("not a CSV table: %w", err)
	}
	if len(recs) == 0 {
		return nil, fmt.Errorf("empty")
	}
	return &Table{Header: recs[0], Text: recs[1:]}, nil
}

// parseCSV reads CSV records (RFC 4180) with '#' comment lines and any
// number of fields per line, as encoding/csv does. Text without quotes or
// carriage returns — every file bandsolve writes but for names with
// commas — is split on commas and line feeds directly, into cells that
// share one string: the same records without a string allocated per cell
// (maps.csv has a quarter of a million).
func parseCSV(b []byte) ([][]string, error) {
	if bytes.ContainsAny(b, "\"\r") {
		r := csv.NewReader(bytes.NewReader(b))
		r.FieldsPerRecord = -1
		r.Comment = '#'
		return r.ReadAll()
	}
	// Every record's cells are cut from one string and held in one slice of
	// cells (each record capped at its own, so an append to one never
	// reaches the next): the tables read back for the figures are formatted
	// moments before, with thousands of rows, and a slice per line was most
	// of their reading.
	text := string(b)
	lines := strings.Count(text, "\n") + 1
	cells := make([]string, 0, lines+strings.Count(text, ","))
	recs := make([][]string, 0, lines)
	for len(text) > 0 {
		line, rest, _ := strings.Cut(text, "\n")
		text = rest
		if line == "" || line[0] == '#' {
			continue // as encoding/csv: empty lines and comments are skipped
		}
		first := len(cells)
		for {
			cell, more, found := strings.Cut(line, ",")
			cells = append(cells, cell)
			if !found {
				break
			}
			line = more
		}
		recs = append(recs, cells[first:len(cells):len(cells)])
	}
	return recs, nil
}

// MapsFile is the name of the downsampled matrices file.
const MapsFile = "maps.csv"

// readMaps reads maps.csv: header matrix,experiment,time,<axis values…>.
func readMaps(path string) (*Maps, error) {
	t, err := readTable(path)
	if err != nil {
		return nil, err
	}
	if len(t.Header) < 4 || t.Header[0] != "matrix" || t.Header[1] != "experiment" || t.Header[2] != "time" {
		return nil, fmt.Errorf("header should start matrix,experiment,time")
	}
	m := &Maps{Matrices: map[string]*Matrix{}}
	for _, h := range t.Header[3:] {
		v, err := strconv.ParseFloat(h, 64)
		if err != nil {
			return nil, fmt.Errorf("axis value %q in the header is not a number", h)
		}
		m.Axis = append(m.Axis, v)
	}
	for i, r := range t.Text {
		if len(r) != len(t.Header) {
			return nil, fmt.Errorf("line %d has %d cells, the header %d", i+2, len(r), len(t.Header))
		}
		mx := m.Matrices[r[0]]
		if mx == nil {
			mx = &Matrix{}
			m.Matrices[r[0]] = mx
		}
		e, err1 := strconv.Atoi(r[1])
		tm, err2 := strconv.ParseFloat(r[2], 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("line %d: experiment or time is not a number", i+2)
		}
		row := make([]float64, len(m.Axis))
		for j := range row {
			v, err := strconv.ParseFloat(r[3+j], 64)
			if err != nil || math.IsInf(v, 0) {
				v = math.NaN()
			}
			row[j] = v
		}
		mx.Experiment = append(mx.Experiment, e)
		mx.Times = append(mx.Times, tm)
		mx.Rows = append(mx.Rows, row)
	}
	return m, nil
}
