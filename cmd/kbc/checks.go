package main

import (
	"fmt"
	"strconv"
	"strings"
)

// exitCheck is the exit code when a check fails.
const exitCheck = 3

// docLimit is a check on a count of documents (--max-stale, --max-unknown):
// a number of documents, or a share of them when percent is set.
type docLimit struct {
	name    string // the flag without dashes, e.g. "max-stale"
	what    string // what the counted documents are, e.g. "stale or expired"
	set     bool
	n       float64
	percent bool
}

// parseLimit reads "N" or "N%" for the check name; "" is no check.
func parseLimit(name, what, s string) (docLimit, error) {
	l := docLimit{name: name, what: what}
	if s == "" {
		return l, nil
	}
	t := strings.TrimSpace(s)
	l.set = true
	if strings.HasSuffix(t, "%") {
		l.percent = true
		t = strings.TrimSpace(strings.TrimSuffix(t, "%"))
	}
	n, err := strconv.ParseFloat(t, 64)
	if err != nil || n < 0 || (!l.percent && n != float64(int(n))) || (l.percent && n > 100) {
		return docLimit{}, fmt.Errorf("bad --%s %q: want a whole number of documents or a percentage such as 10%%", name, s)
	}
	l.n = n
	return l, nil
}

// parseStaleLimit reads the --max-stale check.
func parseStaleLimit(s string) (docLimit, error) {
	return parseLimit("max-stale", "stale or expired", s)
}

// parseUnknownLimit reads the --max-unknown check.
func parseUnknownLimit(s string) (docLimit, error) {
	return parseLimit("max-unknown", "undated", s)
}

// check returns a one-line failure when count of total documents crosses
// the limit, or "" when the check holds. Crossing means more than the
// limit: a limit of 5 allows 5.
func (l docLimit) check(count, total int) string {
	if !l.set {
		return ""
	}
	share := 0.0
	if total > 0 {
		share = 100 * float64(count) / float64(total)
	}
	if l.percent {
		if share > l.n {
			return fmt.Sprintf("check %s failed: %d of %d documents %s (%.1f%%), limit %g%% (over by %.1f points)", l.name, count, total, l.what, share, l.n, share-l.n)
		}
		return ""
	}
	if float64(count) > l.n {
		return fmt.Sprintf("check %s failed: %d of %d documents %s (%.1f%%), limit %g (over by %d)", l.name, count, total, l.what, share, l.n, count-int(l.n))
	}
	return ""
}

// checkDivergent returns a one-line failure when the divergent-copy check is
// on and any divergent pair was found.
func checkDivergent(on bool, pairs int) string {
	if !on || pairs == 0 {
		return ""
	}
	return fmt.Sprintf("check fail-on-divergent failed: %d near-duplicate pair(s) differ in numbers, versions, dates or units", pairs)
}

// checkSecrets returns a one-line failure when the secrets check is on and
// any credential was found.
func checkSecrets(on bool, found int) string {
	if !on || found == 0 {
		return ""
	}
	return fmt.Sprintf("check fail-on-secrets failed: %d credential(s) found in the sources and redacted (see reports/secrets.md); rotate them", found)
}
