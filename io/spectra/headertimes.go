package spectra

import (
	"fmt"
	"math"
	"sort"
)

// Which acquisition time a spectrum gets when its JCAMP-DX header carries
// one (##LONGDATE, or ##DATE with ##TIME) and the user asked for another
// source as well:
//
//   - --times-from-name: the header wins. The instrument stamps the moment
//     it measured; a number in a file name is as often a scan counter
//     (scan_001, scan_002 …) as a time, and taking it for seconds silently
//     rescales every rate constant.
//   - --times FILE: the table wins. It is the one way to overrule a header
//     (a clock set wrong, times to count from a mixing that the instrument
//     did not see), and the user wrote it file by file.
//
// Either way a disagreement is one warning line naming the first file at
// odds and what to do; an agreement is silent.

// headerTimeSlack is how far two sources' intervals may differ and still
// agree: ##LONGDATE keeps whole seconds, and a table or a name rounded to
// whole seconds adds up to one more (common practice), or 1 % of the
// typical interval between spectra for slow series written in coarser
// steps.
func headerTimeSlack(header []float64) float64 {
	s := append([]float64(nil), header...)
	sort.Float64s(s)
	var steps []float64
	for i := 1; i < len(s); i++ {
		steps = append(steps, s[i]-s[i-1])
	}
	if len(steps) == 0 {
		return 1
	}
	return math.Max(1, 0.01*median(steps))
}

// headerTimesOf gives the spectra's acquisition times from their headers
// when every spectrum has one of its own (ok false otherwise: a missing
// or repeated stamp cannot order the series).
func headerTimesOf(files []string, specs []*Spectrum, errs []error) ([]float64, bool) {
	for i := range specs {
		if (errs != nil && errs[i] != nil) || specs[i] == nil {
			return nil, false
		}
	}
	if !allAcquired(specs) {
		return nil, false
	}
	t := acquiredSeconds(specs)
	if i, _ := repeatedTime(t, files); i >= 0 {
		return nil, false
	}
	return t, true
}

// timeSource names the times the user asked for, for weighHeaderTimes.
type timeSource struct {
	table string // the --times file; "" for times from the names
	label string // what a name is: "name" or "##TITLE"
	// short names spectrum i again within a message that named it once.
	short func(i int) string
}

// weighHeaderTimes settles given times (from a table or the names) against
// the headers' (see the rule above) and says so when they disagree. Both
// are compared as intervals from the spectrum the headers put first, so a
// table counting from the mixing agrees with headers counting from the
// first spectrum.
func weighHeaderTimes(names []string, given, header []float64, src timeSource) (times []float64, warning string) {
	ref := 0
	for i, t := range header {
		if t < header[ref] {
			ref = i
		}
	}
	slack := headerTimeSlack(header)
	first, count := -1, 0
	order := make([]int, len(header))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return header[order[a]] < header[order[b]] })
	for _, i := range order {
		if math.Abs((given[i]-given[ref])-(header[i]-header[ref])) > slack {
			if first < 0 {
				first = i
			}
			count++
		}
	}
	times = header
	if src.table != "" {
		times = given
	}
	if first < 0 {
		return times, ""
	}
	what := fmt.Sprintf("its %s puts it %g s after %s", src.label, given[first]-given[ref], src.short(ref))
	if src.table != "" {
		what = fmt.Sprintf("--times %s puts it %g s after %s", src.table, given[first]-given[ref], src.short(ref))
	}
	tail := "the acquisition times in the JCAMP-DX headers were used, not --times-from-name; if the " + src.label + "s are right, give those times in --times FILE"
	if src.table != "" {
		tail = "the table's times were used; correct the table, or leave --times out to use the headers' times"
	}
	return times, fmt.Sprintf("%s: %s, its JCAMP-DX acquisition time %g s (%d of %d spectra disagree by more than %g s); %s",
		names[first], what, header[first]-header[ref], count, len(header), slack, tail)
}
