package bundle

import (
	"bufio"
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
)

// SearchOptions say what a caller may see and wants. The zero value asks
// for ten public passages of any freshness, judged at the current time.
type SearchOptions struct {
	// K is the number of results wanted; 0 means 10.
	K int
	// Audiences are the audience labels the caller may read. A passage
	// whose page has an audience (front matter "audience") is returned
	// only to a caller that names it; passages without one are public.
	// A page may name several audiences ("drivers, dispatch"): naming any
	// of them is enough. The label "public" is everyone's.
	Audiences []string
	// ExcludeStale drops stale and expired passages; ExcludeExpired drops
	// expired ones only.
	ExcludeStale, ExcludeExpired bool
	// Now is the instant freshness is judged at; zero means the clock.
	Now time.Time
}

// Conflict names another copy of a passage that disagrees with it on a
// fact (a number, version, date or unit), and the words that differ.
type Conflict struct {
	With        string       `json:"with"` // path#anchor of the other copy
	Differences []Difference `json:"differences"`
}

// Words says what differs, one run per item: "90 days" there, "30 days"
// here.
func (c Conflict) Words() string {
	parts := make([]string, len(c.Differences))
	for i, d := range c.Differences {
		parts[i] = fmt.Sprintf("%q there, %q here", d.There, d.Here)
	}
	return strings.Join(parts, "; ")
}

// Difference is one run of differing words: Here in this passage, There in
// the other copy.
type Difference struct {
	Here  string `json:"here"`
	There string `json:"there"`
}

// defaultK is the number of results when SearchOptions.K is 0.
const defaultK = 10

// Query searches the bundle as Search does and returns what a caller may
// be shown, each hit with its freshness status at opts.Now and the copies
// that disagree with it:
//
//   - passages whose audience the caller did not name are left out, and so
//     are stale or expired ones when opts asks;
//   - among hits of equal score the canonical copy comes first (a passage
//     other copies were folded into, or the canonical side of a divergent
//     pair), then the fresher one (by status, then by updated date), then
//     passages.jsonl order. Scores are never changed: a less relevant
//     passage is never lifted over a more relevant one.
//
// Query is safe for concurrent use.
func (b *Bundle) Query(query string, opts SearchOptions) ([]Hit, error) {
	k := cmp.Or(opts.K, defaultK)
	if k < 0 {
		return nil, fmt.Errorf("search: k %d is negative", k)
	}
	now := opts.Now
	if now.IsZero() {
		now = time.Now()
	}
	dueSoon := b.settings().DueSoon
	// Fetch more than k: filtered passages leave gaps, and a tie at the
	// k-th score must be seen whole to put its canonical copy first.
	for fetch := max(2*k, k+10); ; fetch *= 4 {
		hits, err := b.Search(query, fetch)
		if err != nil {
			return nil, err
		}
		conflicts, canonical, err := b.conflicts()
		if err != nil {
			return nil, err
		}
		var kept []Hit
		for _, h := range hits {
			h.Status = fresh.Info{ReviewBy: h.ReviewBy, Expires: h.Expires}.StatusAt(now, dueSoon)
			if !visible(h.Audience, opts.Audiences) ||
				(opts.ExcludeStale && (h.Status == fresh.Stale || h.Status == fresh.Expired)) ||
				(opts.ExcludeExpired && h.Status == fresh.Expired) {
				continue
			}
			h.Conflict = conflicts[h.ID]
			h.canonical = canonical[h.ID]
			kept = append(kept, h)
		}
		exhausted := len(hits) < fetch
		if !exhausted && (len(kept) < k || kept[k-1].Score == hits[len(hits)-1].Score) {
			continue // not enough yet, or the tie at the k-th place may go on
		}
		slices.SortStableFunc(kept, func(x, y Hit) int {
			return cmp.Or(cmp.Compare(y.Score, x.Score),
				cmp.Compare(canonicalRank(&x), canonicalRank(&y)),
				cmp.Compare(y.Status.Severity(), x.Status.Severity()),
				y.Updated.Compare(x.Updated))
		})
		return kept[:min(k, len(kept))], nil
	}
}

// visible reports whether a passage with this audience label may be shown
// to a caller cleared for audiences.
func visible(label string, audiences []string) bool {
	if label == "" {
		return true
	}
	for _, a := range strings.Split(label, ",") {
		if a = strings.TrimSpace(a); a != "" && (slices.Contains(audiences, a) || strings.EqualFold(a, "public")) {
			return true
		}
	}
	return false
}

// canonicalRank is 0 for a passage that other copies were folded into or
// that is the canonical side of a divergent pair, 1 otherwise.
func canonicalRank(h *Hit) int {
	if len(h.AlsoAt) > 0 || h.canonical {
		return 0
	}
	return 1
}

// servingSettings are the build settings that Query and Context take from
// the manifest, with the defaults of a build where it names none.
type servingSettings struct {
	DueSoon   fresh.Duration // the due-soon window of the freshness policy
	AimTokens int            // the passage size aimed at
	Shingle   int            // words per shingle of the duplicate search
	Tokenizer string         // the BPE encoding tokens are counted in
}

// settings reads the serving settings from the manifest once.
func (b *Bundle) settings() servingSettings {
	b.settingsOnce.Do(func() {
		var s struct {
			build.Settings
			Freshness  fresh.Policy `json:"freshness"`
			Duplicates struct {
				Shingle int `json:"shingle"`
			} `json:"duplicates"`
		}
		if len(b.manifest.Settings) > 0 {
			_ = json.Unmarshal(b.manifest.Settings, &s) // what does not parse takes the defaults
		}
		due := s.Freshness.DueSoon
		if due.Days <= 0 {
			due = fresh.DefaultPolicy().DueSoon
		}
		b.serving = servingSettings{
			DueSoon:   due,
			AimTokens: cmp.Or(s.AimTokens, build.DefaultSettings().AimTokens),
			Shingle:   cmp.Or(s.Duplicates.Shingle, dedupe.DefaultOptions().Shingle),
			Tokenizer: cmp.Or(s.Tokenizer, build.DefaultSettings().Tokenizer),
		}
	})
	return b.serving
}

// conflictSet is what Query adds to hits from the duplicate report.
type conflictSet map[string][]Conflict

// conflicts returns what Query adds to hits from the divergent copies of
// reports/duplicates.json: the conflicts of each passage in a pair, and
// the pairs' canonical sides. The list is read and decoded once per
// Bundle, straight from the report into a map; a bundle without the
// report has none. (Deciding first whether any hit is in the list, by
// searching the undecoded text for each id, cost more than decoding it:
// about 8 ms against 2 ms for 50 hits and a 155 KB list.)
func (b *Bundle) conflicts() (conflictSet, map[string]bool, error) {
	b.conflictsOnce.Do(func() {
		d, err := readDivergentCopies(b.dir)
		if err != nil {
			b.conflictErr = err
			return
		}
		b.conflictMap, b.canonical = indexConflicts(d)
	})
	return b.conflictMap, b.canonical, b.conflictErr
}

// readDivergentCopies returns the divergent copies listed in the duplicate
// report in dir, or none when there is no report.
func readDivergentCopies(dir string) ([]build.DivergentCopy, error) {
	name := filepath.Join(dir, filepath.FromSlash(DuplicatesJSON))
	f, err := os.Open(name)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	defer f.Close()
	d, err := readDivergent(f)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return d, nil
}

// indexConflicts gives each passage of a divergent pair a Conflict naming
// the other side, and marks the canonical sides.
func indexConflicts(divergent []build.DivergentCopy) (conflictSet, map[string]bool) {
	set := conflictSet{}
	canonical := map[string]bool{}
	for _, d := range divergent {
		var here, there []Difference
		for _, x := range d.Differences {
			if x.Fact {
				here = append(here, Difference{Here: x.A, There: x.B})
				there = append(there, Difference{Here: x.B, There: x.A})
			}
		}
		set[d.Canonical.ID] = append(set[d.Canonical.ID], Conflict{With: d.Copy.Ref(), Differences: here})
		set[d.Copy.ID] = append(set[d.Copy.ID], Conflict{With: d.Canonical.Ref(), Differences: there})
		canonical[d.Canonical.ID] = true
	}
	return set, canonical
}

// readDivergent decodes the "divergent" list of a duplicate report and
// stops there: the report writes it before the clusters, which on a large
// bundle are megabytes that a query does not need.
func readDivergent(r io.Reader) ([]build.DivergentCopy, error) {
	dec := json.NewDecoder(bufio.NewReader(r))
	if t, err := dec.Token(); err != nil || t != json.Delim('{') {
		return nil, fmt.Errorf("not a duplicate report (%v)", err)
	}
	for dec.More() {
		t, err := dec.Token()
		if err != nil {
			return nil, err
		}
		if t == "divergent" {
			var d []build.DivergentCopy
			if err := dec.Decode(&d); err != nil {
				return nil, err
			}
			return d, nil
		}
		var skip json.RawMessage
		if err := dec.Decode(&skip); err != nil {
			return nil, err
		}
	}
	return nil, nil
}
