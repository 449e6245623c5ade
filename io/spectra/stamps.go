package spectra

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"
	"time"

	"github.com/bandsolve/bandsolve/io/jcamp"
)

// Acquisition times from date-time stamps. Instruments name each export
// after the moment it was taken, in one of a few layouts; a series' times
// are then the stamps' differences from the first spectrum, in seconds.
//
//	ISO 8601 date and time     2019-07-29T13:20:49, 2019-07-29 13-20-49 (file
//	                           names cannot hold ':'), optional .fff and
//	                           Z or ±hh:mm
//	compact ISO 8601           20190729_132049, 20190729T132049
//	weekday month day time     Mon Jul 29 13-20-49 2019 (GMT-04-00), the
//	year (C's asctime order)   zone optional
//
// A stamp's weekday must agree with its date: that catches a day and a
// month read the wrong way round.

var (
	isoStamp     = regexp.MustCompile(`(?:^|[^0-9])([0-9]{4})-([0-9]{2})-([0-9]{2})[T _]([0-9]{2})[:.\-]([0-9]{2})[:.\-]([0-9]{2})(?:[.,]([0-9]{1,9}))?(Z|[+-][0-9]{2}:?[0-9]{2})?(?:[^0-9]|$)`)
	compactStamp = regexp.MustCompile(`(?:^|[^0-9])([0-9]{4})([0-9]{2})([0-9]{2})[T_\-]([0-9]{2})([0-9]{2})([0-9]{2})(?:[^0-9]|$)`)
	wordStamp    = regexp.MustCompile(`(?i)(?:^|[^a-z])(mon|tue|wed|thu|fri|sat|sun)[a-z]*[ _]+(jan|feb|mar|apr|may|jun|jul|aug|sep|oct|nov|dec)[a-z]*[ _]+([0-9]{1,2})[ _]+([0-9]{1,2})[:.\-]([0-9]{2})[:.\-]([0-9]{2})[ _]+([0-9]{4})(?:[ _]*\(?(?:GMT|UTC)([+-])([0-9]{1,2})(?:[:\-]?([0-9]{2}))?\)?)?`)
)

var monthAbbr = map[string]time.Month{"jan": 1, "feb": 2, "mar": 3, "apr": 4, "may": 5, "jun": 6,
	"jul": 7, "aug": 8, "sep": 9, "oct": 10, "nov": 11, "dec": 12}

// stampIn finds a date-time stamp in text. ok is false when there is none;
// err is set when a stamp is there but is not a real moment (month 13, a
// weekday that does not fit the date).
func stampIn(text string) (t time.Time, ok bool, err error) {
	if m := isoStamp.FindStringSubmatch(text); m != nil {
		t, err = stampTime(m[1:7], m[7], zoneOffset(m[8]))
		return t, true, err
	}
	if m := compactStamp.FindStringSubmatch(text); m != nil {
		// Fourteen digits could be a counter: only a real moment counts.
		if t, err := stampTime(m[1:7], "", 0); err == nil && t.Year() >= 1900 {
			return t, true, nil
		}
	}
	if m := wordStamp.FindStringSubmatch(text); m != nil {
		mon := strconv.Itoa(int(monthAbbr[strings.ToLower(m[2])]))
		off := 0
		if m[8] != "" {
			h, _ := strconv.Atoi(m[9])
			mm, _ := strconv.Atoi(m[10])
			off = (h*60 + mm) * 60
			if m[8] == "-" {
				off = -off
			}
		}
		t, err = stampTime([]string{m[7], mon, m[3], m[4], m[5], m[6]}, "", off)
		if err == nil {
			if wd := t.Weekday().String()[:3]; !strings.EqualFold(wd, m[1]) {
				err = fmt.Errorf("date-time stamp %q: %s was a %s, not a %s", strings.TrimSpace(m[0]), t.Format("2006-01-02"), t.Weekday(), m[1])
			}
		}
		return t, true, err
	}
	return time.Time{}, false, nil
}

// stampTime builds the moment from year, month, day, hour, minute, second
// and a fraction of a second, refusing fields out of range.
func stampTime(f []string, frac string, offset int) (time.Time, error) {
	var v [6]int
	for i, s := range f {
		v[i], _ = strconv.Atoi(s)
	}
	ns := 0
	if frac != "" {
		ns, _ = strconv.Atoi((frac + "000000000")[:9])
	}
	t := time.Date(v[0], time.Month(v[1]), v[2], v[3], v[4], v[5], ns, time.FixedZone("", offset))
	// time.Date normalises 31 June to 1 July: a stamp must survive unchanged.
	if t.Year() != v[0] || int(t.Month()) != v[1] || t.Day() != v[2] || t.Hour() != v[3] || t.Minute() != v[4] || t.Second() != v[5] {
		return time.Time{}, fmt.Errorf("date-time stamp %04d-%02d-%02d %02d:%02d:%02d is not a real date and time", v[0], v[1], v[2], v[3], v[4], v[5])
	}
	return t, nil
}

// zoneOffset reads Z, ±hh:mm or ±hhmm as seconds east of UTC.
func zoneOffset(z string) int {
	if z == "" || z == "Z" {
		return 0
	}
	d := strings.ReplaceAll(z[1:], ":", "")
	h, _ := strconv.Atoi(d[:2])
	m, _ := strconv.Atoi(d[2:])
	off := (h*60 + m) * 60
	if z[0] == '-' {
		return -off
	}
	return off
}

// jcampAcquired reads the moment a JCAMP-DX block was measured:
// ##LONGDATE=YYYY/MM/DD HH:MM:SS (JCAMP-DX 5.01, from memory), else ##DATE
// (YY/MM/DD or YYYY/MM/DD) with ##TIME=HH:MM:SS (JCAMP-DX 4.24, from
// memory). A ##TIME without a date is a time of day and is not used: a
// series that runs past midnight would be put out of order.
func jcampAcquired(b jcamp.Block) (time.Time, bool) {
	if v, ok := b.Value("LONGDATE"); ok {
		if t, ok := parseJCAMPDate(v); ok {
			return t, true
		}
	}
	d, okd := b.Value("DATE")
	tm, okt := b.Value("TIME")
	if okd && okt {
		return parseJCAMPDate(strings.TrimSpace(d) + " " + strings.TrimSpace(tm))
	}
	return time.Time{}, false
}

// jcampDateFault says why a block whose header gives a date has no
// acquisition time (jcampAcquired found none), and the line of the label:
// a date that is no real one (##LONGDATE=2019/02/30 …) or one not written
// as the standard writes it. "" when the header gives no date at all.
func jcampDateFault(b jcamp.Block) (fault string, line int) {
	for _, l := range b.Labels {
		if l.Name != "LONGDATE" && l.Name != "DATE" {
			continue
		}
		v := strings.TrimSpace(l.Value)
		if l.Name == "DATE" {
			tm, ok := b.Value("TIME")
			if !ok {
				return fmt.Sprintf("its ##DATE=%s has no ##TIME beside it", clipValue(v)), l.Line
			}
			v += " " + strings.TrimSpace(tm)
		}
		m := jcampDate.FindStringSubmatch(v)
		if m == nil {
			return fmt.Sprintf("its ##%s=%s is not a date and time of the form YYYY/MM/DD HH:MM:SS", l.Name, clipValue(v)), l.Line
		}
		if _, ok := parseJCAMPDate(v); !ok {
			return fmt.Sprintf("its ##%s=%s is not a real date and time", l.Name, clipValue(v)), l.Line
		}
	}
	return "", 0
}

// clipValue quotes a header value for a message as a cell is (quoteCell).
func clipValue(v string) string { return quoteCell([]byte(v)) }

var jcampDate = regexp.MustCompile(`^\s*([0-9]{2}|[0-9]{4})[/\-.]([0-9]{1,2})[/\-.]([0-9]{1,2})[ T]+([0-9]{1,2}):([0-9]{2})(?::([0-9]{2}))?(?:[.,]([0-9]{1,9}))?\s*([+-][0-9]{2}:?[0-9]{2}|Z)?\s*$`)

func parseJCAMPDate(v string) (time.Time, bool) {
	m := jcampDate.FindStringSubmatch(v)
	if m == nil {
		return time.Time{}, false
	}
	if len(m[1]) == 2 {
		// Two-digit years of ##DATE: 00–69 are 20xx (common practice, as POSIX strptime %y).
		y, _ := strconv.Atoi(m[1])
		if y < 70 {
			y += 2000
		} else {
			y += 1900
		}
		m[1] = strconv.Itoa(y)
	}
	if m[6] == "" {
		m[6] = "0"
	}
	t, err := stampTime(m[1:7], m[7], zoneOffset(m[8]))
	return t, err == nil
}

// relativeSeconds turns moments into seconds after the earliest of them.
func relativeSeconds(ts []time.Time) []float64 {
	first := ts[0]
	for _, t := range ts[1:] {
		if t.Before(first) {
			first = t
		}
	}
	out := make([]float64, len(ts))
	for i, t := range ts {
		out[i] = t.Sub(first).Seconds()
	}
	return out
}

// timesFromLabels gives each spectrum its time from its label (file name
// without extension, or ##TITLE). When every label holds a date-time stamp
// the times are seconds after the earliest stamp; when none does, each is
// the label's last number in unit. what(i) names label i for messages; on
// error bad is the index of the spectrum at fault.
func timesFromLabels(labels []string, unit string, what func(i int) string) (times []float64, bad int, err error) {
	stamps := make([]time.Time, len(labels))
	stamped, plain := -1, -1
	for i, l := range labels {
		t, ok, err := stampIn(l)
		if err != nil {
			return nil, i, err
		}
		if ok {
			stamps[i], stamped = t, i
		} else if plain < 0 {
			plain = i
		}
	}
	if stamped >= 0 && plain >= 0 {
		return nil, plain, fmt.Errorf("no date-time stamp in %s, but %s has one", what(plain), what(stamped))
	}
	if stamped >= 0 {
		return relativeSeconds(stamps), 0, nil
	}
	times = make([]float64, len(labels))
	for i, l := range labels {
		if times[i], err = lastNumberTime(l, unit, what(i)); err != nil {
			return nil, i, err
		}
	}
	if i, err := nameMarks(labels, what); err != nil {
		return nil, i, err
	}
	if i, j := mixedUnits(labels); i >= 0 {
		return nil, i, fmt.Errorf("%s and %s give their times in different units (%s)", what(i), what(j), unitPair(labels[i], labels[j]))
	}
	return times, 0, nil
}

// nameMarks checks the decimal marks of the labels' last numbers, as
// fileMarks does a file's: "0,35" is a decimal comma (no digit grouping
// starts with 0), and then "1,500" is one too; names whose commas could
// all be digit grouping ("1,500": 1.5 or 1500), or that mix decimal
// commas and points, are refused, naming the label at fault and, for a
// mix, one of the other mark.
func nameMarks(labels []string, what func(i int) string) (int, error) {
	first := map[markKind]int{}
	for i, l := range labels {
		num, _, _ := nameNumber(l)
		if k := cellMark([]byte(num)); k != markNone {
			if _, seen := first[k]; !seen {
				first[k] = i
			}
		}
	}
	c, comma := first[markComma]
	e, either := first[markEither]
	p, point := first[markPoint]
	if either && !comma {
		c, comma = e, true
		if !point {
			num, _, _ := nameNumber(labels[e])
			return e, fmt.Errorf("the number %q in %s is a decimal comma or digit grouping, and no other name tells which", num, what(e))
		}
	}
	if comma && point {
		return max(c, p), fmt.Errorf("%s and %s write their numbers with different decimal marks (comma against point)", what(c), what(p))
	}
	return -1, nil
}

// mixedUnits finds two labels whose last numbers carry different written
// units (one may have none): a series named partly in minutes and partly
// in seconds, or partly without a unit, is more likely two series, or
// stray files, than one. The first is a label of the rarer unit (the odd
// file out, most likely a stray), the second one of the commonest; -1 when
// all agree.
func mixedUnits(labels []string) (int, int) {
	units := make([]float64, len(labels)) // seconds per unit, 0 for none
	count := map[float64]int{}
	for i, l := range labels {
		_, u, _ := nameNumber(l)
		units[i] = nameUnits[u]
		count[units[i]]++
	}
	if len(count) < 2 {
		return -1, -1
	}
	rare, common := 0, 0
	for i, u := range units {
		if count[u] < count[units[rare]] {
			rare = i
		}
		if count[u] > count[units[common]] {
			common = i
		}
	}
	if units[rare] == units[common] { // a tie: the first file against the first of another unit
		for i, u := range units {
			if u != units[0] {
				return i, 0
			}
		}
	}
	return rare, common
}

// unitPair says the two labels' written units, "none" for a plain number.
func unitPair(a, b string) string {
	name := func(l string) string {
		if _, u, _ := nameNumber(l); u != "" {
			return u
		}
		return "none"
	}
	return name(a) + " against " + name(b)
}
