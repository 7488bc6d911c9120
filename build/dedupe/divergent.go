package dedupe

import (
	"slices"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Difference is one run of words in which two texts differ, as written in
// each (original case and punctuation, white space collapsed to single
// spaces). When the change is a bare number or one side is empty, one word
// of context shared by both texts is included (the next word, else the one
// before), so "every 30 days" against "every 90 days" reads {"30 days",
// "90 days"} and a dropped "not" reads {"not available", "available"}; a
// change of one word of at most two characters on both sides (a unit
// symbol) takes the word before: {"30 °C", "30 °F"}.
type Difference struct {
	A string `json:"a"`
	B string `json:"b"`
	// Fact reports whether the changed words (not the context) carry a
	// fact: a number, version, date or unit (see Divergent).
	Fact bool `json:"fact"`
	// SentenceA and SentenceB are the sentences of each text around A and
	// B, for a reader to see the change in place: from the end of the
	// sentence or line before to the end of the sentence or line, at most
	// about maxAround bytes on either side of the run (cut at a space and
	// marked with "…"), white space collapsed. A and B are runs of words
	// within them.
	SentenceA string `json:"sentence_a,omitempty"`
	SentenceB string `json:"sentence_b,omitempty"`
}

// maxEdits bounds the word edit distance Divergent works out in full; past
// it the texts are no near duplicates and everything between their common
// start and end is reported as one run.
const maxEdits = 1000

// Divergent compares two texts, typically a near-duplicate pair, word by
// word and returns every run of differing words, and reports whether any of
// them carries a fact. Words are the normalised words Find compares (case,
// punctuation and markup do not count); the runs come from a shortest word
// edit script (Myers, "An O(ND) Difference Algorithm and Its Variations",
// 1986), always computed with the texts in one canonical order so that
// Divergent(b, a) gives the same runs with A and B swapped.
//
// A changed word carries a fact when it
//   - holds a digit: numbers, versions (v1.2, 1.2.3), dates (2026-01-04),
//     times (10:30), sizes (2,500, 4GB);
//   - names a month (january, ..., december) or a weekday (monday, ...,
//     sunday): a weekday is a date here, since "backups run every Tuesday"
//     against "every Thursday" is exactly the kind of change a reader must
//     not get wrong;
//   - is a number word (two ... twelve, twenty ... ninety, hundred,
//     thousand, million, billion, dozen, twice; not "one", which is
//     mostly a pronoun);
//   - is a unit or frequency word that is rarely anything else (days,
//     hours, minutes, seconds, weeks, months, years, day, hour, week,
//     month, year, daily, weekly, monthly, yearly, hourly, ms, kg, mg, lb,
//     km, cm, mm, percent, kb, mb, gb, tb, mib, gib, hz, mhz, ghz,
//     celsius, ...);
//   - or is a short word that is a unit or month only beside a number, when
//     the word before or after it holds a digit or is a number word: c, f,
//     k, g, m, s, h, b, l, v, w, in, ft, oz, mi, us, min, sec, hr, yr, am,
//     pm, minute, second, may, jan, feb, mar, apr, jun, jul, aug, sep,
//     sept, oct, nov, dec ("30 C" against "30 F", "4 May 2026").
//
// The word lists are a judgement, English only, not from a published
// source. Wording changes ("click" against "select") give ok == false.
func Divergent(a, b string) ([]Difference, bool) {
	ta, tb := tokens(a), tokens(b)
	c := slices.CompareFunc(ta, tb, func(x, y token) int { return strings.Compare(x.norm, y.norm) })
	if c == 0 {
		return nil, false
	}
	swapped := c > 0
	if swapped {
		a, b, ta, tb = b, a, tb, ta
	}
	diffs := runs(a, b, ta, tb)
	ok := false
	for i := range diffs {
		ok = ok || diffs[i].Fact
		if swapped {
			diffs[i].A, diffs[i].B = diffs[i].B, diffs[i].A
			diffs[i].SentenceA, diffs[i].SentenceB = diffs[i].SentenceB, diffs[i].SentenceA
		}
	}
	return diffs, ok
}

// token is a normalised word and where it stands in its text.
type token struct {
	norm       string
	start, end int
}

func tokens(s string) []token {
	var sc scanner
	sc.reset(s)
	var out []token
	for sc.next() {
		out = append(out, token{sc.text(), sc.start, sc.end})
	}
	return out
}

// runs lists the differing runs between a and b (tokens ta, tb).
func runs(a, b string, ta, tb []token) []Difference {
	matches := match(ta, tb)
	var diffs []Difference
	prev := [2]int{-1, -1}
	for x := 0; x <= len(matches); x++ {
		next := [2]int{len(ta), len(tb)}
		if x < len(matches) {
			next = matches[x]
		}
		ia, ib := prev[0]+1, prev[1]+1 // run is ta[ia:next[0]], tb[ib:next[1]]
		ea, eb := next[0], next[1]
		prev = next
		if ia == ea && ib == eb {
			continue
		}
		d := Difference{Fact: anyFact(ta, ia, ea) || anyFact(tb, ib, eb)}
		num := numeric(ta[ia:ea]) || numeric(tb[ib:eb])
		short := !num && terse(ta[ia:ea]) && terse(tb[ib:eb])
		if ia == ea || ib == eb || short || num {
			before, after := ia > 0, x < len(matches)
			switch {
			case short && before: // the shared word before: "30 °C"
				ia--
				ib--
			case after: // the shared word after: "30 days"
				ea++
				eb++
			case before:
				ia--
				ib--
			}
		}
		d.A, d.SentenceA = span(a, ta, ia, ea)
		d.B, d.SentenceB = span(b, tb, ib, eb)
		diffs = append(diffs, d)
	}
	return diffs
}

// numeric reports whether the words of a run are all without letters (bare
// numbers, dates, versions), so a word of context helps reading them.
func numeric(ts []token) bool {
	if len(ts) == 0 {
		return false
	}
	for _, t := range ts {
		for _, r := range t.norm {
			if unicode.IsLetter(r) {
				return false
			}
		}
	}
	return true
}

// terse reports whether a run is one word of at most two characters (a unit
// symbol such as C or F), which reads better with the word before it when
// it is no number.
func terse(ts []token) bool {
	return len(ts) == 1 && utf8.RuneCountInString(ts[0].norm) <= 2
}

// span returns the text of words ts[i:j] of s as written, with a currency
// sign just before and a '%' or '°' just after, white space collapsed, and
// the sentence around it (see Difference). An empty run has no text but
// still a sentence: the one where the other text's words would be.
func span(s string, ts []token, i, j int) (text, sentence string) {
	if i >= j {
		at := len(s)
		if i < len(ts) {
			at = ts[i].start
		}
		return "", around(s, at, at)
	}
	start, end := ts[i].start, ts[j-1].end
	if r, size := utf8.DecodeLastRuneInString(s[:start]); strings.ContainsRune("$€£¥", r) {
		start -= size
	}
	if r, size := utf8.DecodeRuneInString(s[end:]); r == '%' || r == '°' {
		end += size
	}
	return strings.Join(strings.Fields(s[start:end]), " "), around(s, start, end)
}

// maxAround bounds the context around a run on either side, in bytes: two
// lines of a report's table cell. Judgement, no source.
const maxAround = 160

// around returns the sentence of s that holds s[start:end]: back to just
// after a line break or a '.', '!' or '?' followed by white space, forward
// through the next such mark or to the next line break; each side cut at
// a space after maxAround bytes and marked with "…". White space is
// collapsed.
func around(s string, start, end int) string {
	from, cutFrom := start, false
	for from > 0 {
		c := s[from-1]
		if c == '\n' || (from >= 2 && asciiSpace(c) && strings.IndexByte(".!?", s[from-2]) >= 0) {
			break
		}
		if start-from >= maxAround && asciiSpace(c) {
			cutFrom = true
			break
		}
		from--
	}
	to, cutTo := end, false
	for to < len(s) {
		c := s[to]
		if c == '\n' {
			break
		}
		if strings.IndexByte(".!?", c) >= 0 && (to+1 == len(s) || asciiSpace(s[to+1])) {
			to++
			break
		}
		if to-end >= maxAround && asciiSpace(c) {
			cutTo = true
			break
		}
		to++
	}
	out := strings.Join(strings.Fields(s[from:to]), " ")
	if cutFrom {
		out = "… " + out
	}
	if cutTo {
		out += " …"
	}
	return out
}

func asciiSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v'
}

// match returns the index pairs of the words a shortest edit script keeps,
// in order: the common start and end, and a Myers diff of the middle.
func match(ta, tb []token) [][2]int {
	pre := 0
	for pre < len(ta) && pre < len(tb) && ta[pre].norm == tb[pre].norm {
		pre++
	}
	suf := 0
	for suf < len(ta)-pre && suf < len(tb)-pre && ta[len(ta)-1-suf].norm == tb[len(tb)-1-suf].norm {
		suf++
	}
	var out [][2]int
	for i := range pre {
		out = append(out, [2]int{i, i})
	}
	for _, m := range myers(ta[pre:len(ta)-suf], tb[pre:len(tb)-suf]) {
		out = append(out, [2]int{m[0] + pre, m[1] + pre})
	}
	for i := suf; i > 0; i-- {
		out = append(out, [2]int{len(ta) - i, len(tb) - i})
	}
	return out
}

// myers returns the matched index pairs of a shortest edit script from a to
// b (Myers 1986, the greedy forward algorithm with the furthest-reaching
// point of each diagonal kept per step, then traced back). Past maxEdits
// edits it gives up and matches nothing.
func myers(a, b []token) [][2]int {
	n, m := len(a), len(b)
	if n == 0 || m == 0 {
		return nil
	}
	off := n + m + 1
	v := make([]int, 2*off+1) // v[off+k]: furthest x on diagonal k = x - y
	var trace [][]int         // trace[d]: v[off-d-1 : off+d+2] before step d
	d := 0
search:
	for ; ; d++ {
		if d > maxEdits {
			return nil
		}
		trace = append(trace, slices.Clone(v[off-d-1:off+d+2]))
		for k := -d; k <= d; k += 2 {
			var x int
			if k == -d || (k != d && v[off+k-1] < v[off+k+1]) {
				x = v[off+k+1] // down: insert b[y]
			} else {
				x = v[off+k-1] + 1 // right: delete a[x]
			}
			y := x - k
			for x < n && y < m && a[x].norm == b[y].norm {
				x++
				y++
			}
			v[off+k] = x
			if x >= n && y >= m {
				break search
			}
		}
	}
	var out [][2]int
	x, y := n, m
	for ; d >= 0; d-- {
		w := trace[d] // w[k+d+1] is v[off+k]
		k := x - y
		var pk int
		if k == -d || (k != d && w[k-1+d+1] < w[k+1+d+1]) {
			pk = k + 1
		} else {
			pk = k - 1
		}
		px := w[pk+d+1]
		py := px - pk
		for x > px && y > py {
			x--
			y--
			out = append(out, [2]int{x, y})
		}
		x, y = px, py
	}
	slices.Reverse(out)
	return out
}

// anyFact reports whether any of ts[i:j] carries a fact.
func anyFact(ts []token, i, j int) bool {
	for x := i; x < j; x++ {
		if factWord(ts, x) {
			return true
		}
	}
	return false
}

// factWord reports whether ts[i] carries a fact (see Divergent).
func factWord(ts []token, i int) bool {
	w := ts[i].norm
	if hasDigit(w) {
		return true
	}
	switch factClass(w) {
	case factAlways:
		return true
	case factBesideNumber:
		return (i > 0 && isNumber(ts[i-1].norm)) || (i+1 < len(ts) && isNumber(ts[i+1].norm))
	}
	return false
}

func hasDigit(w string) bool {
	for _, r := range w {
		if unicode.IsDigit(r) {
			return true
		}
	}
	return false
}

func isNumber(w string) bool {
	return hasDigit(w) || isNumberWord(w)
}

// Classes of fact words.
const (
	factNone = iota
	factAlways
	factBesideNumber
)

// isNumberWord reports whether w is a number word that counts as a fact
// ("one" is left out: it is mostly a pronoun).
func isNumberWord(w string) bool {
	switch w {
	case "zero", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten", "eleven", "twelve":
		return true
	case "thirteen", "fourteen", "fifteen", "sixteen", "seventeen", "eighteen", "nineteen", "twenty", "thirty", "forty", "fifty":
		return true
	case "sixty", "seventy", "eighty", "ninety", "hundred", "thousand", "million", "billion", "trillion", "dozen", "twice":
		return true
	}
	return false
}

// factClass classifies the words that carry a fact without a digit: months,
// weekdays, units and frequencies always; short words that are units or
// months only beside a number.
func factClass(w string) int {
	if isNumberWord(w) {
		return factAlways
	}
	switch w {
	case "january", "february", "march", "april", "june", "july", "august", "september", "october", "november", "december":
		return factAlways
	case "monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday":
		return factAlways
	case "days", "hours", "minutes", "seconds", "weeks", "months", "years", "day", "hour", "week", "month", "year":
		return factAlways
	case "daily", "weekly", "monthly", "yearly", "hourly", "annually", "fortnightly":
		return factAlways
	case "milliseconds", "microseconds", "nanoseconds", "ms", "ns", "µs", "μs":
		return factAlways
	case "kg", "mg", "lb", "lbs", "km", "cm", "mm", "kilograms", "grams", "ounces", "tonnes":
		return factAlways
	case "percent", "percentage", "kb", "mb", "gb", "tb", "pb", "kib", "mib", "gib", "tib", "bytes", "kbps", "mbps", "gbps":
		return factAlways
	case "hz", "khz", "mhz", "ghz", "celsius", "fahrenheit", "kelvin", "ml", "litres", "liters":
		return factAlways
	case "meters", "metres", "kilometers", "kilometres", "miles", "feet", "inches":
		return factAlways
	case "c", "f", "k", "g", "m", "s", "h", "b", "l", "t", "v", "w", "in", "ft", "oz", "mi", "us", "min", "mins", "sec", "secs", "hr", "hrs", "yr", "yrs", "am", "pm":
		return factBesideNumber
	case "minute", "second", "kw", "px":
		return factBesideNumber
	case "may", "jan", "feb", "mar", "apr", "jun", "jul", "aug", "sep", "sept", "oct", "nov", "dec":
		return factBesideNumber
	}
	return factNone
}
