package build

import (
	"fmt"
	"strconv"
	"strings"
)

// Checks are the quality checks of a build: limits on the stale and the
// undated documents, and whether divergent copies or credentials found in
// the sources fail it. The zero value checks nothing. They come from the
// [checks] section of the config file and from flags, and are recorded in
// the bundle's manifest, so that a bundle is judged again with the checks
// it was built with.
type Checks struct {
	MaxStale        Limit `json:"max_stale,omitzero"`   // stale or expired documents
	MaxUnknown      Limit `json:"max_unknown,omitzero"` // documents with no usable date
	FailOnDivergent bool  `json:"fail_on_divergent,omitempty"`
	FailOnSecrets   bool  `json:"fail_on_secrets,omitempty"`
}

// Limit caps a count of documents: a number of them, or a share of all of
// them when Percent is set. The zero value is no limit. Its text form is
// "5" or "10%" (see ParseLimit).
type Limit struct {
	Set     bool
	N       float64
	Percent bool
}

// ParseLimit reads "N" (a whole number of documents) or "N%" (a share of
// them, 0 to 100); "" is no limit.
func ParseLimit(s string) (Limit, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return Limit{}, nil
	}
	l := Limit{Set: true}
	if strings.HasSuffix(t, "%") {
		l.Percent = true
		t = strings.TrimSpace(strings.TrimSuffix(t, "%"))
	}
	n, err := strconv.ParseFloat(t, 64)
	if err != nil || n < 0 || (!l.Percent && n != float64(int(n))) || (l.Percent && n > 100) {
		return Limit{}, fmt.Errorf("%q is not a count or a percentage, e.g. \"5\" or \"10%%\"", s)
	}
	l.N = n
	return l, nil
}

// String returns the text form ParseLimit reads: "5", "10%", or "" for no
// limit.
func (l Limit) String() string {
	if !l.Set {
		return ""
	}
	s := strconv.FormatFloat(l.N, 'f', -1, 64)
	if l.Percent {
		s += "%"
	}
	return s
}

// IsZero reports whether l is no limit.
func (l Limit) IsZero() bool { return !l.Set }

// MarshalText implements encoding.TextMarshaler with String's form.
func (l Limit) MarshalText() ([]byte, error) { return []byte(l.String()), nil }

// UnmarshalText implements encoding.TextUnmarshaler with ParseLimit.
func (l *Limit) UnmarshalText(b []byte) error {
	v, err := ParseLimit(string(b))
	if err != nil {
		return err
	}
	*l = v
	return nil
}

// exceeded returns a one-line failure when count of total documents
// crosses the limit, or "" when it holds. Crossing means more than the
// limit: a limit of 5 allows 5.
func (l Limit) exceeded(name, what string, count, total int) string {
	if !l.Set {
		return ""
	}
	share := 0.0
	if total > 0 {
		share = 100 * float64(count) / float64(total)
	}
	if l.Percent {
		if share > l.N {
			return fmt.Sprintf("check %s failed: %d of %d documents %s (%.1f%%), limit %g%% (over by %.1f points)", name, count, total, what, share, l.N, share-l.N)
		}
		return ""
	}
	if float64(count) > l.N {
		return fmt.Sprintf("check %s failed: %d of %d documents %s (%.1f%%), limit %g (over by %d)", name, count, total, what, share, l.N, count-int(l.N))
	}
	return ""
}

// CheckFailure is one failed check.
type CheckFailure struct {
	Check string // its name as a flag without dashes, e.g. "max-stale"
	Msg   string // one line, e.g. "check max-stale failed: 3 of 7 documents ..."
}

// CheckInput is what the checks judge: the staleness counts of a build or
// of a bundle's report judged again, the divergent copies and the
// credentials found (negative when unknown: a bundle from before the
// secrets report).
type CheckInput struct {
	Staleness StatusCounts
	Divergent int
	Secrets   int
}

// Evaluate runs the checks over in and returns the failures, in the
// order max-stale, max-unknown, fail-on-divergent, fail-on-secrets; none
// when every check holds.
func (c Checks) Evaluate(in CheckInput) []CheckFailure {
	var out []CheckFailure
	add := func(name, msg string) {
		if msg != "" {
			out = append(out, CheckFailure{Check: name, Msg: msg})
		}
	}
	add("max-stale", c.MaxStale.exceeded("max-stale", "stale or expired", in.Staleness.StaleOrExpired(), in.Staleness.Total))
	add("max-unknown", c.MaxUnknown.exceeded("max-unknown", "undated", in.Staleness.Unknown, in.Staleness.Total))
	if c.FailOnDivergent && in.Divergent > 0 {
		add("fail-on-divergent", fmt.Sprintf("check fail-on-divergent failed: %d near-duplicate pair(s) differ in numbers, versions, dates or units", in.Divergent))
	}
	if c.FailOnSecrets && in.Secrets > 0 {
		add("fail-on-secrets", fmt.Sprintf("check fail-on-secrets failed: %d credential(s) found in the sources and redacted (see reports/secrets.md); rotate them", in.Secrets))
	}
	return out
}
