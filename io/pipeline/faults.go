package pipeline

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// inputContext names the experiment in an error unless the error already
// names its own file (an InputError), so messages never say a path twice.
func inputContext(source string, err error) error {
	var ie *spectra.InputError
	if errors.As(err, &ie) {
		return err
	}
	return fmt.Errorf("%s: %w", source, err)
}

// needTimes refuses a folder of spectra without a source of acquisition
// times before any file is read: the fix is an option, so it is a usage error.
// A folder of JCAMP-DX files alone may carry the times in its headers;
// reading it tells, and names a file without one.
// checkTimesSource refuses, before any spectrum is read, a --times table
// that is not there (naming the flag: the message had come from the
// manifest's hashing, "manifest: stat t.csv", or named the path alone),
// and --times or --times-from-name when no --data takes times from them:
// a matrix CSV's header gives each spectrum's time, and a table beside it
// was ignored without a word, however wrong.
func checkTimesSource(s *Settings) error {
	if s.Times == "" && !s.TimesFromName {
		return nil
	}
	flag := "--times-from-name"
	if s.Times != "" {
		flag = "--times " + s.Times
		if _, err := os.Stat(s.Path(s.Times)); err != nil {
			var pe *fs.PathError
			if errors.As(err, &pe) {
				err = pe.Err
			}
			return fmt.Errorf("%s: cannot read: %v; check the path of the times table (a CSV with columns file,time_s)", flag, err)
		}
	}
	for _, p := range s.Data {
		st, err := os.Stat(s.Path(p))
		if p == "" || err != nil || st.IsDir() || spectra.IsJCAMP(p) {
			return nil // read by a folder or a JCAMP-DX file, or refused when read
		}
	}
	return usage("%s: --data %s is a matrix CSV, whose header row gives each spectrum's time, so %s would not be used: leave it out, and correct the header's times if they are wrong", flag, s.Data[0], flag)
}

func needTimes(s *Settings, data string, folder spectra.FolderOptions) error {
	if s.Times != "" || s.TimesFromName {
		return nil
	}
	dir := s.Path(data)
	if st, err := os.Stat(dir); err == nil && st.IsDir() && !spectra.MayCarryTimes(dir, folder) {
		if name, n := spectra.NotJCAMP(dir, folder); name != "" {
			return usage("--data %s: %s is not JCAMP-DX, so the acquisition times in the headers of the other %d files are not used: move it out of the folder or give --drop %s, or give --times FILE (columns file,time_s) or --times-from-name", data, name, n, name)
		}
		return usage("--data %s is a folder of spectra: give --times FILE (columns file,time_s) or --times-from-name", data)
	}
	return nil
}

// closableRows refuses closure when the profiles held at zero (by flag,
// for the reason why) hold every component at zero at one time: the
// concentrations there cannot sum to the closure total, and ALS had
// stopped at its first step with "closure cannot hold: every component
// is fixed in column 0", naming neither the time nor the settings.
func closableRows(r *Result, opt mcr.Options, flag, why string) error {
	k := r.Components
	if !opt.Closure || len(opt.ZeroProfiles) < k || k == 0 {
		return nil
	}
	n, _ := r.D.Dims()
	for i := 0; i < n; i++ {
		all := true
		for j := 0; j < k && all; j++ {
			z := opt.ZeroProfiles[j]
			all = i < len(z) && z[i]
		}
		if !all {
			continue
		}
		e := r.Experiments[r.ExpOfRow[i]]
		if why != "" {
			why = ", where " + why
		}
		return usage("%s with --closure %s: every one of the %d components is held at zero at %g s (spectrum %d of %s)%s, so their concentrations cannot sum to %s there; ask for fewer components (--components N; the rank estimate is %d), or leave out %s, or give --closure off",
			flag, r.Settings.Closure, k, r.Times[i], i-e.FirstRow+1, e.Source, why, r.Settings.Closure, r.Rank.Estimate, flag)
	}
	return nil
}

// checkClosureRows refuses closure when a spectrum is all zero: its
// concentrations cannot sum to a positive total while every species has a
// non-negative spectrum, so the constraint contradicts the data.
func checkClosureRows(r *Result) error {
	n, m := r.D.Dims()
	// One pass: each row's largest |value| (vecmath.MaxAbs, four points
	// at a time: the loop of a compare and a branch per point took 3–4 ms
	// of CPU at 2000 × 3001, now a read of the matrix), then the largest
	// of them (the data are finite here, so plain comparisons do what
	// math.Max does).
	rowMax := make([]float64, n)
	big := 0.0
	for i := 0; i < n; i++ {
		mx := vecmath.MaxAbs(r.D.RawRowView(i)[:m])
		rowMax[i] = mx
		big = max(big, mx)
	}
	// Rows below 1e-12 of the largest value are zero to working precision
	// of absorbance values written with ~10 digits.
	tiny := 1e-12 * big
	for i := 0; i < n; i++ {
		mx := rowMax[i]
		if mx <= tiny {
			e := r.Experiments[r.ExpOfRow[i]]
			return usage("--closure %s: the spectrum at %g s in %s is zero at every point, so its concentrations cannot sum to %s; use --closure off, or leave that spectrum out of the data", r.Settings.Closure, r.Times[i], e.Source, r.Settings.Closure)
		}
	}
	return nil
}

// checkAssembledFinite refuses absorbance that double precision cannot
// hold: single beams near 1e-307 (or 1e308) give −log10(I/I0) of ±Inf or
// NaN, which would otherwise surface later as "non-finite value at row 0"
// with no file named.
func checkAssembledFinite(source string, sub *spectra.Series, as *spectra.Assembled) error {
	if as.Finite {
		return nil // checked as the absorbances were formed
	}
	for _, x := range []*mat.Dense{as.Absolute, as.Difference} {
		if x == nil {
			continue
		}
		_, c := x.Dims()
		i := firstNonFiniteRow(x)
		if i < 0 {
			continue
		}
		for j, v := range x.RawRowView(i)[:c] {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%s: the absorbance of the spectrum at %g s, %s %g, is %v: the intensities are too close to zero (or too large) for −log10(I/I0) in double precision; rescale them (e.g. multiply the file by 1e6) or check the export", source, sub.Times[i], sub.AxisName, sub.Axis[j], v)
			}
		}
	}
	return nil
}

// firstNonFiniteRow is the first row of x that holds a NaN or ±Inf (−1 when
// none), its rows tested in blocks on the workers: a data-sized scan that
// otherwise ran on one core alone.
func firstNonFiniteRow(x *mat.Dense) int {
	r, c := x.Dims()
	bad := make([]bool, r)
	product.FixedBlocks(r, max(1, (1<<16)/max(c, 1)), func(r0, r1 int) {
		for i := r0; i < r1; i++ {
			bad[i] = !spectra.AllFinite(x.RawRowView(i)[:c])
		}
	})
	return slices.Index(bad, true)
}

// checkFinite stops a run whose resolution produced a non-number rather
// than writing it: output files never hold NaN or Inf.
func checkFinite(res *mcr.Result) error {
	for _, x := range []*mat.Dense{res.C, res.S} {
		if x == nil {
			continue
		}
		r, c := x.Dims()
		for i := 0; i < r; i++ {
			for _, v := range x.RawRowView(i)[:c] {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return errors.New("resolution failed numerically (a non-finite value appeared); try fewer components, --init efa, or --exclude the noisiest region")
				}
			}
		}
	}
	return nil
}

// Thresholds for collinear components. A cosine of 0.999 between two
// spectra or two profiles means they differ by less than 2.6° — one
// component split in two (common practice; the exact figure is a choice).
// A Gram matrix whose condition number exceeds 1e10 loses more than ten of
// the sixteen digits in the least-squares steps (Golub & Van Loan, Matrix
// Computations, §2.6: relative error ≈ κ·ε), so the split between those
// components is arbitrary.
const (
	collinearCosine = 0.999
	singularGram    = 1e10
)

// componentWarnings reports numerical faults of a finished resolution:
// components with (nearly) the same spectrum or profile, and singular Gram
// matrices CᵀC or SᵀS. The components skip marks (nil: none) are held at
// zero by the settings (zeroEverywhereWarnings says so) and left out: a
// zero column makes either Gram matrix singular whatever the data support.
func componentWarnings(res *mcr.Result, skip []bool) []string {
	var out []string
	_, k := res.C.Dims()
	fewer := fmt.Sprintf("the data supports fewer components: try --components %d", max(k-1, 1))
	skipped := func(j int) bool { return j < len(skip) && skip[j] }
	if slices.Contains(skip, true) {
		res = liveColumns(res, skipped)
		_, k = res.C.Dims()
	}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			cs := Cosine(mat.Col(nil, a, res.S), mat.Col(nil, b, res.S))
			cp := Cosine(mat.Col(nil, a, res.C), mat.Col(nil, b, res.C))
			switch {
			case math.Abs(cs) > collinearCosine:
				out = append(out, fmt.Sprintf("components %d and %d have nearly the same spectrum (cosine %.5f): %s", a+1, b+1, cs, fewer))
			case math.Abs(cp) > collinearCosine:
				out = append(out, fmt.Sprintf("components %d and %d have nearly the same time profile (cosine %.5f): %s, or a known spectrum to tell them apart", a+1, b+1, cp, fewer))
			}
		}
	}
	if k > 1 {
		var bad []string
		for _, x := range []struct {
			name string
			m    *mat.Dense
		}{{"profiles (CᵀC)", res.C}, {"spectra (SᵀS)", res.S}} {
			if c := conditionNumber(x.m); c > singularGram {
				if math.IsInf(c, 1) {
					bad = append(bad, x.name+" exactly singular")
				} else {
					bad = append(bad, fmt.Sprintf("%s condition %.2g", x.name, c))
				}
			}
		}
		if len(bad) > 0 {
			out = append(out, fmt.Sprintf("singular Gram matrix: %s; the components are linearly dependent and their split is arbitrary: %s", strings.Join(bad, ", "), fewer))
		}
	}
	return out
}

// liveColumns is res with only the components skipped says no to.
func liveColumns(res *mcr.Result, skipped func(int) bool) *mcr.Result {
	_, k := res.C.Dims()
	var keep []int
	for j := 0; j < k; j++ {
		if !skipped(j) {
			keep = append(keep, j)
		}
	}
	pick := func(x *mat.Dense) *mat.Dense {
		n, _ := x.Dims()
		out := mat.NewDense(n, max(len(keep), 1), nil)
		for q, j := range keep {
			out.SetCol(q, mat.Col(nil, j, x))
		}
		return out
	}
	return &mcr.Result{C: pick(res.C), S: pick(res.S)}
}

// conditionNumber of XᵀX, from the singular values of X (squared): the SVD
// of the tall thin X avoids forming XᵀX, which would square the condition
// before it is measured.
func conditionNumber(x *mat.Dense) float64 {
	var svd mat.SVD
	if !svd.Factorize(x, mat.SVDNone) {
		return math.Inf(1)
	}
	s := svd.Values(nil)
	if len(s) == 0 || s[0] == 0 {
		return math.Inf(1)
	}
	lo := s[len(s)-1]
	if lo == 0 {
		return math.Inf(1)
	}
	return (s[0] / lo) * (s[0] / lo)
}

// checkInitColumns refuses initial profiles that make the first
// least-squares step singular: a column that is zero at every time, or two
// columns with the same shape.
func checkInitColumns(path string, names []string, c *mat.Dense) error {
	_, k := c.Dims()
	for j := 0; j < k; j++ {
		col := mat.Col(nil, j, c)
		if mat.Norm(mat.NewVecDense(len(col), col), math.Inf(1)) == 0 {
			return fmt.Errorf("%s: profile column %d (%q) is zero at every time: ALS cannot start from an absent component; give it a non-zero guess, or resolve one component fewer", path, j+2, names[j])
		}
		for b := 0; b < j; b++ {
			if cs := Cosine(mat.Col(nil, b, c), col); cs > 1-1e-9 {
				return fmt.Errorf("%s: profile columns %d (%q) and %d (%q) have the same shape: the components could not be told apart; give distinct guesses, or resolve one component fewer", path, b+2, names[b], j+2, names[j])
			}
		}
	}
	return nil
}

// explainResolveError turns a singular least-squares step inside ALS into
// what the user can do about it.
func explainResolveError(r *Result, err error) error {
	var cond mat.Condition
	if errors.As(err, &cond) || strings.Contains(err.Error(), "singular") {
		return fmt.Errorf("%v: the %d components became linearly dependent (one vanished or two coincide); ask for fewer with --components (the rank estimate is %d), or try --init efa", err, r.Components, r.Rank.Estimate)
	}
	return err
}
