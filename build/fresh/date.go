package fresh

import (
	"errors"
	"fmt"
	"strings"
	"time"
)

// dateForms lists what ParseDate accepts, for its error message.
const dateForms = "want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm"

// ParseDate reads a date as people write it in front matter and as git
// prints it, and returns the instant in UTC. It accepts:
//
//   - RFC 3339 date-times: 2026-09-02T08:30:00Z, 2026-09-02T10:30:00+02:00,
//     with a fraction of a second (1985-04-12T23:20:50.52Z), a lower-case
//     t or z (RFC 3339 section 5.6 allows them) and a space instead of the
//     T (the same section allows it "for the sake of readability");
//   - a date only, 2026-10-14, taken as 00:00 UTC;
//   - a date and time with a zone after a space, as git and YAML front
//     matter write it: 2026-08-19 14:05:00 +0200 or 2026-08-19 14:05:00 +02:00;
//   - a date and time with no zone, 2026-08-19 14:05:00 or
//     2026-08-19T14:05:00, taken as UTC.
//
// Month, day, hour, minute, second and offset must be two digits each and
// in range; seconds are required. A leap second (:60, allowed by RFC 3339
// section 5.7 only at the end of a minute) is accepted when the minute is
// 59 and counts as the first instant of the next minute, as POSIX time
// does (POSIX "Seconds Since the Epoch", from memory): Go's time package
// has no leap seconds and time.Parse rejects :60. The zero instant
// 0001-01-01T00:00:00Z is refused: it is what a failed conversion leaves
// behind, never a real page date; so is an instant outside the years
// 0000 to 9999 in UTC (such as 9999-12-31T23:00:00-02:00), which RFC 3339
// and JSON cannot write. ParseDate never returns a zero time
// without an error. Leading and trailing white space is ignored.
func ParseDate(s string) (time.Time, error) {
	t, err := parseDate(strings.TrimSpace(s))
	if err != nil {
		return time.Time{}, fmt.Errorf("date %q: %w", s, err)
	}
	if y := t.Year(); y < 0 || y > 9999 {
		// JSON and RFC 3339 cannot write such an instant.
		return time.Time{}, fmt.Errorf("date %q: outside the years 0000 to 9999 in UTC", s)
	}
	if t.IsZero() {
		return time.Time{}, fmt.Errorf("date %q: the zero date 0001-01-01T00:00:00Z is a placeholder, not a date", s)
	}
	return t, nil
}

var errForm = errors.New(dateForms)

func parseDate(s string) (time.Time, error) {
	// YYYY-MM-DD
	if len(s) < 10 || s[4] != '-' || s[7] != '-' {
		return time.Time{}, errForm
	}
	year, ok1 := digits(s[0:4])
	month, ok2 := digits(s[5:7])
	day, ok3 := digits(s[8:10])
	if !ok1 || !ok2 || !ok3 {
		return time.Time{}, errForm
	}
	if month < 1 || month > 12 {
		return time.Time{}, fmt.Errorf("month %02d out of range", month)
	}
	if day < 1 || day > daysIn(year, month) {
		return time.Time{}, fmt.Errorf("day %02d out of range for %04d-%02d", day, year, month)
	}
	if len(s) == 10 {
		return time.Date(year, time.Month(month), day, 0, 0, 0, 0, time.UTC), nil
	}
	// Separator, then hh:mm:ss.
	if c := s[10]; c != 'T' && c != 't' && c != ' ' {
		return time.Time{}, errForm
	}
	r := s[11:]
	if len(r) < 8 || r[2] != ':' || r[5] != ':' {
		return time.Time{}, errForm
	}
	hour, ok1 := digits(r[0:2])
	minute, ok2 := digits(r[3:5])
	sec, ok3 := digits(r[6:8])
	if !ok1 || !ok2 || !ok3 {
		return time.Time{}, errForm
	}
	switch {
	case hour > 23:
		return time.Time{}, fmt.Errorf("hour %02d out of range", hour)
	case minute > 59:
		return time.Time{}, fmt.Errorf("minute %02d out of range", minute)
	case sec > 60 || sec == 60 && minute != 59:
		return time.Time{}, fmt.Errorf("second %02d out of range", sec)
	}
	r = r[8:]
	// Fraction: any number of digits; nanoseconds keep the first nine.
	nsec := 0
	if len(r) > 0 && r[0] == '.' {
		n := 1
		for n < len(r) && '0' <= r[n] && r[n] <= '9' {
			n++
		}
		if n == 1 {
			return time.Time{}, errForm
		}
		for i, scale := 1, 100_000_000; i < n && scale > 0; i, scale = i+1, scale/10 {
			nsec += int(r[i]-'0') * scale
		}
		r = r[n:]
	}
	// Zone: none (UTC), Z, or an offset, after an optional space.
	offset := 0
	zone := strings.TrimPrefix(r, " ")
	switch {
	case r == "", zone == "Z", zone == "z":
	case len(zone) > 0 && (zone[0] == '+' || zone[0] == '-'):
		var hh, mm int
		var ok bool
		switch {
		case len(zone) == 6 && zone[3] == ':':
			hh, ok1 = digits(zone[1:3])
			mm, ok2 = digits(zone[4:6])
			ok = ok1 && ok2
		case len(zone) == 5:
			hh, ok1 = digits(zone[1:3])
			mm, ok2 = digits(zone[3:5])
			ok = ok1 && ok2
		}
		if !ok {
			return time.Time{}, errForm
		}
		if hh > 23 || mm > 59 {
			return time.Time{}, fmt.Errorf("zone offset %s out of range", zone)
		}
		offset = (hh*60 + mm) * 60
		if zone[0] == '-' {
			offset = -offset
		}
	default:
		return time.Time{}, errForm
	}
	leap := 0
	if sec == 60 {
		sec, leap = 59, 1
	}
	t := time.Date(year, time.Month(month), day, hour, minute, sec, nsec, time.UTC)
	return t.Add(time.Duration(leap-offset) * time.Second), nil
}

// digits reads s, which must be ASCII digits only.
func digits(s string) (int, bool) {
	n := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int(c-'0')
	}
	return n, true
}

// daysIn returns the number of days in month of year, proleptic
// Gregorian calendar (RFC 3339 Appendix C gives the same leap year rule).
func daysIn(year, month int) int {
	switch month {
	case 2:
		if year%4 == 0 && (year%100 != 0 || year%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}
