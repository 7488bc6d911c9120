package main

import (
	"fmt"
	"strconv"
	"strings"
)

// exitGate is the exit code when a quality gate fails.
const exitGate = 3

// staleLimit is the --max-stale gate: a count of documents, or a share of
// them when Percent is set.
type staleLimit struct {
	set     bool
	n       float64
	percent bool
}

// parseStaleLimit reads "N" or "N%".
func parseStaleLimit(s string) (staleLimit, error) {
	if s == "" {
		return staleLimit{}, nil
	}
	t := strings.TrimSpace(s)
	l := staleLimit{set: true}
	if strings.HasSuffix(t, "%") {
		l.percent = true
		t = strings.TrimSpace(strings.TrimSuffix(t, "%"))
	}
	n, err := strconv.ParseFloat(t, 64)
	if err != nil || n < 0 || (!l.percent && n != float64(int(n))) || (l.percent && n > 100) {
		return staleLimit{}, fmt.Errorf("bad --max-stale %q: want a whole number of documents or a percentage such as 10%%", s)
	}
	l.n = n
	return l, nil
}

// check returns a one-line failure when stale of total documents crosses
// the limit, or "" when the gate holds. Crossing means more than the
// limit: a limit of 5 allows 5.
func (l staleLimit) check(stale, total int) string {
	if !l.set {
		return ""
	}
	share := 0.0
	if total > 0 {
		share = 100 * float64(stale) / float64(total)
	}
	if l.percent {
		if share > l.n {
			return fmt.Sprintf("gate max-stale failed: %d of %d documents stale or expired (%.1f%%), limit %g%% (over by %.1f points)", stale, total, share, l.n, share-l.n)
		}
		return ""
	}
	if float64(stale) > l.n {
		return fmt.Sprintf("gate max-stale failed: %d of %d documents stale or expired (%.1f%%), limit %g (over by %d)", stale, total, share, l.n, stale-int(l.n))
	}
	return ""
}

// checkDivergent returns a one-line failure when the divergent-copy gate is
// on and any divergent pair was found.
func checkDivergent(on bool, pairs int) string {
	if !on || pairs == 0 {
		return ""
	}
	return fmt.Sprintf("gate fail-on-divergent failed: %d near-duplicate pair(s) differ in numbers, versions, dates or units", pairs)
}

// checkSecrets returns a one-line failure when the secrets gate is on and
// any credential was found.
func checkSecrets(on bool, found int) string {
	if !on || found == 0 {
		return ""
	}
	return fmt.Sprintf("gate fail-on-secrets failed: %d credential(s) found in the sources and redacted (see reports/secrets.md); rotate them", found)
}
