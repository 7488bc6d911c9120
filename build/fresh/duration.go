package fresh

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// Duration is a span of whole days, the unit in which review periods and
// maximum ages are set. Its text form is a number and a unit, "90d",
// "12w", "6m" or "1y"; see ParseDuration. The zero value is zero days.
//
// A month is 30 days and a year 365 days, always: a review period does
// not need calendar arithmetic, and fixed lengths keep review-by dates
// the same whichever month a page was written in (common practice, no
// source).
type Duration struct {
	Days int
}

// Days per unit, fixed lengths (see Duration).
const (
	daysPerWeek  = 7
	daysPerMonth = 30
	daysPerYear  = 365
	maxDays      = 10000 * daysPerYear // far beyond any review period; keeps AddDate sane
)

// ParseDuration reads a span such as "90d", "12w", "6m" or "1y": a whole
// number of zero or more, then a unit, with or without a space between
// them. Units, in any letter case: d, day, days; w, week, weeks (7 days);
// m, mo, month, months (30 days); y, year, years (365 days). A number
// without a unit is refused ("90" could mean days or months), as are
// signs, fractions and spans over 10000 years. A whole number of years
// written in months ("12 months", "24m") is refused too: at 30 days a
// month it would be 360 days, not the year its writer meant, so "12
// months" and "1y" could not agree; the error says to write "1y". The
// same grammar is read in the config file and in front matter.
func ParseDuration(s string) (Duration, error) {
	t := strings.TrimSpace(s)
	i := 0
	for i < len(t) && '0' <= t[i] && t[i] <= '9' {
		i++
	}
	num, unit := t[:i], strings.ToLower(strings.TrimSpace(t[i:]))
	if num == "" {
		return Duration{}, fmt.Errorf("duration %q: want a whole number and a unit, as in 90d, 12w, 6m or 1y", s)
	}
	if unit == "" {
		return Duration{}, fmt.Errorf("duration %q: missing unit: d (days), w (weeks), m (30-day months) or y (365-day years)", s)
	}
	var per int
	switch unit {
	case "d", "day", "days":
		per = 1
	case "w", "week", "weeks":
		per = daysPerWeek
	case "m", "mo", "month", "months":
		per = daysPerMonth
	case "y", "year", "years":
		per = daysPerYear
	default:
		return Duration{}, fmt.Errorf("duration %q: unknown unit %q: want d, w, m or y", s, t[i:])
	}
	n, err := strconv.Atoi(num)
	if err != nil || n > maxDays/per {
		return Duration{}, fmt.Errorf("duration %q: longer than 10000 years", s)
	}
	if per == daysPerMonth && n > 0 && n%12 == 0 {
		return Duration{}, fmt.Errorf("duration %q: write %dy: a month counts 30 days here, so %d months would be %d days, not %d year(s)", s, n/12, n, n*per, n/12)
	}
	return Duration{Days: n * per}, nil
}

// String returns the span in the largest unit that holds it exactly among
// years and weeks, else in days: "1y", "12w", "90d". Months are never
// written back (a reader may take "3m" for minutes); ParseDuration reads
// the result back to the same span.
func (d Duration) String() string {
	switch {
	case d.Days != 0 && d.Days%daysPerYear == 0:
		return strconv.Itoa(d.Days/daysPerYear) + "y"
	case d.Days != 0 && d.Days%daysPerWeek == 0:
		return strconv.Itoa(d.Days/daysPerWeek) + "w"
	}
	return strconv.Itoa(d.Days) + "d"
}

// MarshalText implements encoding.TextMarshaler with String's form; JSON
// and TOML encoders use it, so a Duration is written as a string.
func (d Duration) MarshalText() ([]byte, error) {
	if d.Days < 0 {
		return nil, errors.New("negative duration")
	}
	return []byte(d.String()), nil
}

// UnmarshalText implements encoding.TextUnmarshaler with ParseDuration;
// JSON and TOML decoders use it, so a Duration is read from a string.
func (d *Duration) UnmarshalText(b []byte) error {
	v, err := ParseDuration(string(b))
	if err != nil {
		return err
	}
	*d = v
	return nil
}
