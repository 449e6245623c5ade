package pipeline

import (
	"bytes"
	"encoding/csv"
	"math"
	"reflect"
	"slices"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// uniquenessResult is a made-up result of k components on m axis points
// and n times with ranges to write (invented data: what is checked is the
// file's layout, not the ranges).
func uniquenessResult(names []string, m, n int) *Result {
	k := len(names)
	r := &Result{Names: names, Components: k, ALS: &mcr.Result{S: mat.NewDense(m, k, nil), C: mat.NewDense(n, k, nil)},
		Constraints: &ConstraintReport{Bands: &mcr.BandsResult{}}}
	for i := 0; i < m; i++ {
		r.Axis = append(r.Axis, 400+1.5*float64(i))
	}
	for i := 0; i < n; i++ {
		r.Times = append(r.Times, 30*float64(i))
		r.ExpOfRow = append(r.ExpOfRow, 0)
	}
	wave := func(i, j int, f float64) float64 { return f * math.Sin(float64(i*(j+2))/7) }
	for j := 0; j < k; j++ {
		b := mcr.Band{MinConverged: j%2 == 0, MaxConverged: true}
		for i := 0; i < m; i++ {
			r.ALS.S.Set(i, j, wave(i, j, 1))
			b.MinSpectrum, b.MaxSpectrum = append(b.MinSpectrum, wave(i, j, 0.9)), append(b.MaxSpectrum, wave(i, j, 1.1))
		}
		for i := 0; i < n; i++ {
			r.ALS.C.Set(i, j, wave(i, j, 2))
			b.MinProfile, b.MaxProfile = append(b.MinProfile, wave(i, j, 1.8)), append(b.MaxProfile, wave(i, j, 2.2))
		}
		r.Constraints.Bands.Bands = append(r.Constraints.Bands.Bands, b)
	}
	return r
}

// uniqueness.csv made in two halves is the file made in one, row for row
// as docs/constraints.md lays it out (per component its spectrum rows,
// then its profile rows), and its table is the file's records as
// encoding/csv reads them (RFC 4180, the standard library's reader): the
// table the figures are drawn from is the one the report reads; also with
// names the file quotes (a comma, a quote, a line break) in either half or
// both.
func TestBandsInHalvesAreTheFile(t *testing.T) {
	for _, c := range []struct {
		names []string
		m, n  int
	}{
		{[]string{"A", "B", "C", "D", "E"}, 301, 200},
		{[]string{"A"}, 7, 5},
		{[]string{"A", "B"}, 3, 40},
		{[]string{"A", "B, hydrolysed"}, 11, 9},
		{[]string{"A, wet", "B", "C"}, 11, 9},
		{[]string{"A \"dry\"", "B\nsecond line"}, 6, 4},
	} {
		r := uniquenessResult(c.names, c.m, c.n)
		got := formatBands(r, true)
		want := bandsCSV(r)
		if !bytes.Equal(got.csv, want) {
			t.Errorf("%v: the halves' file differs from the file made in one", c.names)
		}
		recs, err := csv.NewReader(bytes.NewReader(want)).ReadAll()
		if err != nil {
			t.Fatalf("%v: %v", c.names, err)
		}
		if len(recs) != 1+len(c.names)*(c.m+c.n) {
			t.Fatalf("%v: %d records, want the header and %d rows", c.names, len(recs), len(c.names)*(c.m+c.n))
		}
		for j, name := range c.names {
			first := 1 + j*(c.m+c.n)
			spec, prof := recs[first], recs[first+c.m]
			if spec[0] != name || spec[1] != "spectrum" || prof[0] != name || prof[1] != "profile" {
				t.Errorf("%v: component %d's blocks begin %q and %q", c.names, j, spec, prof)
			}
			if v, _ := strconv.ParseFloat(prof[4], 64); v != r.ALS.C.At(0, j) {
				t.Errorf("%v: component %d's first profile value %s, want %v", c.names, j, prof[4], r.ALS.C.At(0, j))
			}
		}
		if got.table == nil {
			t.Fatalf("%v: no table", c.names)
		}
		if !reflect.DeepEqual(got.table.Header, recs[0]) || !reflect.DeepEqual(got.table.Text, recs[1:]) {
			t.Errorf("%v: the halves' table is not the file's records", c.names)
		}
	}
}

// uniqueness.csv joined from the row blocks formatted as each component's
// range is found (bandBlocks), in whatever order the components come, is
// the file made in one, and its table the file's records as encoding/csv
// reads them (RFC 4180, the standard library's reader); with two
// experiments too. A value, name, time or convergence flag changed after a
// block was formatted makes the join refuse the blocks, and the file is
// then the one the changed values give.
func TestBandBlocksAreTheFile(t *testing.T) {
	for _, c := range []struct {
		names []string
		m, n  int
		exps  int
	}{
		{[]string{"A", "B", "C", "D", "E"}, 301, 200, 1},
		{[]string{"A"}, 7, 5, 1},
		{[]string{"A", "B, hydrolysed"}, 11, 9, 2},
		{[]string{"A \"dry\"", "B\nsecond line"}, 6, 4, 1},
	} {
		changes := map[string]func(r *Result){
			"nothing":    func(r *Result) {},
			"a profile":  func(r *Result) { r.ALS.C.Set(c.n-1, len(c.names)-1, 7) },
			"a spectrum": func(r *Result) { r.Constraints.Bands.Bands[0].MaxSpectrum[0] = -1 },
			"a name":     func(r *Result) { r.Names[0] = "Z" },
			"a time":     func(r *Result) { r.Times[1] = 31 },
			"a converged": func(r *Result) {
				r.Constraints.Bands.Bands[0].MinConverged = !r.Constraints.Bands.Bands[0].MinConverged
			},
		}
		for what, change := range changes {
			r := uniquenessResult(slices.Clone(c.names), c.m, c.n)
			if c.exps > 1 {
				r.Experiments = make([]*Experiment, c.exps)
				for i := range r.ExpOfRow {
					r.ExpOfRow[i] = i * c.exps / c.n
				}
			}
			bb := &bandBlocks{parse: true}
			found := bb.found(r)
			for j := len(c.names) - 1; j >= 0; j-- {
				found(j, r.Constraints.Bands.Bands[j])
			}
			bb.wait()
			change(r)
			got, ok := bb.join(r, true)
			if ok != (what == "nothing") {
				t.Fatalf("%v: %s changed, the blocks joined: %v", c.names, what, ok)
			}
			if !ok {
				continue
			}
			want := bandsCSV(r)
			if !bytes.Equal(got.csv, want) {
				t.Errorf("%v: the blocks' file differs from the file made in one", c.names)
			}
			recs, err := csv.NewReader(bytes.NewReader(want)).ReadAll()
			if err != nil {
				t.Fatalf("%v: %v", c.names, err)
			}
			if got.table == nil || !reflect.DeepEqual(got.table.Header, recs[0]) || !reflect.DeepEqual(got.table.Text, recs[1:]) {
				t.Errorf("%v: the blocks' table is not the file's records", c.names)
			}
			if exp := recs[len(recs)-1][2]; exp != strconv.Itoa(c.exps) {
				t.Errorf("%v: the last row's experiment %q, want %d", c.names, exp, c.exps)
			}
		}
	}
}

// BenchmarkUniquenessTable: uniqueness.csv of 5 components on 3001 points
// and 2000 times (the default run's size, invented values) and its table,
// made in one piece on one goroutine (as before formatBands) and in two
// halves on two: the wait of the spectra and profiles figures drawn beside
// the writers (aheadResults).
func BenchmarkUniquenessTable(b *testing.B) {
	r := uniquenessResult([]string{"A", "B", "C", "D", "E"}, 3001, 2000)
	b.Run("one", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			if _, err := report.ParseTable("uniqueness.csv", bandsCSV(r)); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("halves", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			if formatBands(r, true).table == nil {
				b.Fatal("no table")
			}
		}
	})
}
