package build

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/cespare/xxhash/v2"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/sources"
)

// Location names one passage in the reports.
type Location struct {
	ID      string `json:"id"`
	Path    string `json:"path"`
	Anchor  string `json:"anchor,omitempty"`
	Line    int    `json:"line"`
	EndLine int    `json:"end_line"`
}

// Ref returns "path#anchor", or the path alone when there is no anchor.
func (l Location) Ref() string {
	if l.Anchor == "" {
		return l.Path
	}
	return l.Path + "#" + l.Anchor
}

func locate(p *Passage) Location {
	return Location{ID: p.ID, Path: p.Path, Anchor: p.Anchor, Line: p.Line, EndLine: p.EndLine}
}

// Copy is a passage left out of the bundle because it copies a canonical
// one, with its Jaccard similarity to it.
type Copy struct {
	Location
	Jaccard float64 `json:"jaccard"`
}

// DuplicateCluster is one group of copies and the passage kept for it.
type DuplicateCluster struct {
	Canonical Location `json:"canonical"`
	// Reason says which rule chose the canonical passage: "marked
	// canonical", "freshest", "shortest path" or "path order".
	Reason string `json:"reason"`
	Exact  bool   `json:"exact"` // every copy has the same normalised text
	Copies []Copy `json:"copies"`
}

// DivergentCopy is a near-duplicate pair whose differing words carry facts
// (numbers, versions, dates, units): the pairs most likely to give an
// assistant two answers to one question.
type DivergentCopy struct {
	Canonical   Side                `json:"canonical"`
	Copy        Side                `json:"copy"`
	Jaccard     float64             `json:"jaccard"`
	Differences []dedupe.Difference `json:"differences"`
}

// Side is one passage of a divergent pair: where it is, who owns its page,
// how old it is, and whether the bundle serves it.
type Side struct {
	Location
	Owner    string     `json:"owner,omitempty"`
	Updated  time.Time  `json:"updated,omitzero"`
	Reviewed *time.Time `json:"reviewed,omitempty"`
	// InBundle reports whether the passage is in the bundle. The copy of
	// a folded pair is not (it is listed in the canonical passage's
	// also_at); a pair found by its figures alone keeps both, and a hit
	// on either names the other.
	InBundle bool `json:"in_bundle"`
}

func side(p *Passage) Side {
	return Side{Location: locate(p), Owner: p.Owner, Updated: p.Updated, Reviewed: p.Reviewed}
}

// DuplicateReport lists what the duplicate stage found, divergent copies
// first.
type DuplicateReport struct {
	Threshold        float64            `json:"threshold"`
	Hashes           int                `json:"hashes"`
	Shingle          int                `json:"shingle"`
	Bands            int                `json:"bands"`
	Rows             int                `json:"rows"`
	CatchAtThreshold float64            `json:"catch_at_threshold"` // 1-(1-s^r)^b at s = Threshold
	CatchAtHalf      float64            `json:"catch_at_0_5"`       // the same at s = 0.5
	Passages         int                `json:"passages"`           // passages compared
	Candidates       int                `json:"candidates"`         // candidate pairs verified
	Removed          int                `json:"removed"`            // copies left out of the bundle
	Divergent        []DivergentCopy    `json:"divergent"`
	Clusters         []DuplicateCluster `json:"clusters"`
}

// maskFigures replaces every word holding a digit with "0". A second
// duplicate search runs over masked texts to find copies that differ only
// in their figures (every 30 days here, every 90 days there): on the real
// text each changed figure breaks five shingles, so such pairs often fall
// below the threshold in short passages and would never be compared.
func maskFigures(s string) string {
	k := strings.IndexAny(s, "0123456789")
	if k < 0 {
		return s
	}
	var b strings.Builder
	b.Grow(len(s))
	at := 0 // s[:at] is done; at is 0 or just past a masked word
	for k >= 0 {
		k += at
		start, end := k, k+1
		for start > at && !asciiSpace(s[start-1]) {
			start--
		}
		for end < len(s) && !asciiSpace(s[end]) {
			end++
		}
		b.WriteString(s[at:start])
		b.WriteByte('0')
		at = end
		k = strings.IndexAny(s[at:], "0123456789")
	}
	b.WriteString(s[at:])
	return b.String()
}

func asciiSpace(c byte) bool { return c == ' ' || c == '\n' || c == '\t' || c == '\r' }

// minDivergentJaccard is the least similarity of the real texts for a pair
// found only under the figure mask to count as a divergent copy: below it
// the pair shares its shape, not its content (two parallel reference
// entries, "see git-hook(1)" against "see gitattributes(5)"). Judgement,
// no source.
const minDivergentJaccard = 0.5

// conflicts keeps the differences where both copies hold a figure, or
// both hold a fact word (a weekday, a month, a unit) and neither a digit:
// the same slot states two different facts. A run that adds a figure on
// one side only ("requests" against "requests (default 64)") adds detail
// rather than contradicting.
func conflicts(diffs []dedupe.Difference) []dedupe.Difference {
	var out []dedupe.Difference
	for _, d := range diffs {
		if d.Fact && d.A != "" && d.B != "" && hasDigit(d.A) == hasDigit(d.B) {
			out = append(out, d)
		}
	}
	return out
}

func hasDigit(s string) bool { return strings.ContainsAny(s, "0123456789") }

// dedupePassages finds copies among ps (sorted by path and line), keeps
// one canonical passage per cluster with the others' locations in its
// AlsoAt, and returns the kept passages and the report. docs gives each
// path's document, for the canonical mark in its front matter.
//
// Copies are folded only when their real texts reach the threshold.
// Divergent copies are looked for among those clusters and, with figures
// masked, among passages of different documents: a pair found only that
// way is reported but both passages stay, since which figure is right is
// for the owners to settle.
func dedupePassages(ps []Passage, docs map[string]*sources.Document, opts dedupe.Options, cache *Cache) ([]Passage, *DuplicateReport, error) {
	var digest string
	if cache != nil {
		digest = dedupeDigest(ps, docs, opts)
		if m := cache.dedupeMemo(digest); m != nil {
			return applyMemo(ps, m), m.Report, nil
		}
	}
	kept, rep, err := findCopies(ps, docs, opts, cache)
	if err != nil || cache == nil {
		return kept, rep, err
	}
	m := &DedupeMemo{Digest: digest, AlsoAt: map[string][]string{}, Report: rep}
	seen := make(map[string]bool, len(kept))
	for _, p := range kept {
		seen[p.ID] = true
		if len(p.AlsoAt) > 0 {
			m.AlsoAt[p.ID] = p.AlsoAt
		}
	}
	for _, p := range ps {
		if !seen[p.ID] {
			m.Drop = append(m.Drop, p.ID)
		}
	}
	cache.storeDedupe(m)
	return kept, rep, nil
}

// dedupeDigest names everything the duplicate stage's outcome depends on.
func dedupeDigest(ps []Passage, docs map[string]*sources.Document, opts dedupe.Options) string {
	h := sha256.New()
	o, _ := opts.Resolved()
	fmt.Fprintf(h, "%d %d %g %d %d\x00", o.Hashes, o.Shingle, o.Threshold, o.MinShingles, o.MaxBucket)
	for i := range ps {
		p := &ps[i]
		marked := false
		if d := docs[p.Path]; d != nil {
			marked, _ = d.Front["canonical"].(bool)
		}
		// Owner and reviewed date are shown in the report's divergent
		// pairs, so a change to either must not replay an old report.
		var reviewed int64
		if p.Reviewed != nil {
			reviewed = p.Reviewed.UnixNano()
		}
		fmt.Fprintf(h, "%s\x00%s\x00%s\x00%d %d %s %d %d %t\x00%s\x00", p.ID, p.Path, p.Anchor, p.Line, p.EndLine, p.Hash, p.Updated.UnixNano(), reviewed, marked, p.Owner)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// applyMemo replays a remembered outcome on the same passages.
func applyMemo(ps []Passage, m *DedupeMemo) []Passage {
	drop := make(map[string]bool, len(m.Drop))
	for _, id := range m.Drop {
		drop[id] = true
	}
	kept := make([]Passage, 0, len(ps)-len(m.Drop))
	for _, p := range ps {
		if drop[p.ID] {
			continue
		}
		if a := m.AlsoAt[p.ID]; a != nil {
			p.AlsoAt = append([]string(nil), a...)
		}
		kept = append(kept, p)
	}
	return kept
}

// findCopies is the duplicate stage proper; see dedupePassages.
func findCopies(ps []Passage, docs map[string]*sources.Document, opts dedupe.Options, cache *Cache) ([]Passage, *DuplicateReport, error) {
	raw, masking := opts, opts
	raw.Memo, masking.Memo = cache.memo(0), cache.memo(1)
	// The memos know a passage by its text's SHA-256 (Passage.Hash), so a
	// masked text is made only for a passage they do not know yet, or one
	// whose candidate pairs must be verified.
	key := func(i int) uint64 { return xxhash.Sum64String(ps[i].Hash) }
	raw.Key, masking.Key = key, key
	res, err := dedupe.Find(len(ps), func(i int) string { return ps[i].Text }, raw)
	if err != nil {
		return nil, nil, err
	}
	resM, err := dedupe.Find(len(ps), func(i int) string { return maskFigures(ps[i].Text) }, masking)
	if err != nil {
		return nil, nil, err
	}
	if opts, err = opts.Resolved(); err != nil {
		return nil, nil, err
	}
	rep := &DuplicateReport{
		Threshold: opts.Threshold, Hashes: opts.Hashes, Shingle: opts.Shingle,
		Bands: res.Bands, Rows: res.Rows,
		CatchAtThreshold: dedupe.CatchProbability(opts.Threshold, res.Bands, res.Rows),
		CatchAtHalf:      dedupe.CatchProbability(0.5, res.Bands, res.Rows),
		Passages:         len(ps), Candidates: res.Candidates + resM.Candidates,
		Divergent: []DivergentCopy{}, Clusters: []DuplicateCluster{},
	}
	// divergent records a pair of passages whose copies state different
	// facts, once: the words compared are the passages' texts or, for a
	// pair found block by block, the two blocks.
	// A pair found again through other blocks adds the differences it
	// did not have.
	seen := map[[2]int]int{} // pair -> 1 + its index in rep.Divergent
	divergent := func(keep, m int, j float64, tk, tm string) {
		if tk == tm {
			return
		}
		diffs, _ := dedupe.Divergent(tk, tm)
		if len(conflicts(diffs)) == 0 {
			return
		}
		if at := seen[[2]int{keep, m}]; at > 0 {
			d := &rep.Divergent[at-1]
			// The same change seen through another block is the same
			// difference, whatever sentence that block gave it.
			for _, x := range diffs {
				if !slices.ContainsFunc(d.Differences, func(y dedupe.Difference) bool { return x.A == y.A && x.B == y.B && x.Fact == y.Fact }) {
					d.Differences = append(d.Differences, x)
				}
			}
			return
		}
		rep.Divergent = append(rep.Divergent, DivergentCopy{
			Canonical: side(&ps[keep]), Copy: side(&ps[m]), Jaccard: j, Differences: diffs,
		})
		seen[[2]int{keep, m}] = len(rep.Divergent)
	}
	drop := make([]bool, len(ps))
	cluster := make([]int, len(ps)) // raw cluster number + 1, 0 for none
	for ci, c := range res.Clusters {
		keep, reason := canonical(c.Members, ps, docs)
		dc := DuplicateCluster{Canonical: locate(&ps[keep]), Reason: reason, Exact: c.Exact}
		var also []string
		for _, m := range c.Members {
			cluster[m] = ci + 1
			if m == keep {
				continue
			}
			drop[m] = true
			j := 1.0
			if ps[keep].Text != ps[m].Text {
				j = dedupe.Similarity(ps[keep].Text, ps[m].Text, opts.Shingle)
				divergent(keep, m, j, ps[keep].Text, ps[m].Text)
			}
			dc.Copies = append(dc.Copies, Copy{Location: locate(&ps[m]), Jaccard: j})
			also = append(also, locate(&ps[m]).Ref())
		}
		sort.Strings(also)
		ps[keep].AlsoAt = compactStrings(also)
		rep.Clusters = append(rep.Clusters, dc)
		rep.Removed += len(c.Members) - 1
	}
	for _, c := range resM.Clusters {
		for _, pr := range c.Pairs {
			a, b := pr.A, pr.B
			if ps[a].Path == ps[b].Path || (cluster[a] != 0 && cluster[a] == cluster[b]) {
				continue
			}
			j := dedupe.Similarity(ps[a].Text, ps[b].Text, opts.Shingle)
			if j < minDivergentJaccard {
				continue
			}
			keep, _ := canonical([]int{a, b}, ps, docs)
			other := a + b - keep
			divergent(keep, other, j, ps[keep].Text, ps[other].Text)
		}
	}
	// The same search block by block: copies packed with other text.
	n, err := blockDivergence(ps, opts, cache.memo(2), func(a, b int, ta, tb string, j float64) {
		if cluster[a] != 0 && cluster[a] == cluster[b] {
			return // folded copies, compared whole above
		}
		if keep, _ := canonical([]int{a, b}, ps, docs); keep == a {
			divergent(a, b, j, ta, tb)
		} else {
			divergent(b, a, j, tb, ta)
		}
	})
	if err != nil {
		return nil, nil, err
	}
	rep.Candidates += n
	for pair, at := range seen {
		d := &rep.Divergent[at-1]
		d.Canonical.InBundle, d.Copy.InBundle = !drop[pair[0]], !drop[pair[1]]
	}
	sort.SliceStable(rep.Divergent, func(i, j int) bool {
		a, b := rep.Divergent[i], rep.Divergent[j]
		if a.Canonical.Path != b.Canonical.Path {
			return a.Canonical.Path < b.Canonical.Path
		}
		if a.Canonical.Line != b.Canonical.Line {
			return a.Canonical.Line < b.Canonical.Line
		}
		return a.Copy.Ref() < b.Copy.Ref()
	})
	kept := make([]Passage, 0, len(ps)-rep.Removed)
	for i := range ps {
		if !drop[i] {
			kept = append(kept, ps[i])
		}
	}
	return kept, rep, nil
}

// canonical picks the passage to keep among members, by these rules in
// order: a page marked `canonical: true` in its front matter, the freshest
// page, the shortest path, path order (then line). It returns the index
// and the first rule that tells the winner from the runner-up.
func canonical(members []int, ps []Passage, docs map[string]*sources.Document) (int, string) {
	marked := func(i int) int {
		if d := docs[ps[i].Path]; d != nil {
			if v, _ := d.Front["canonical"].(bool); v {
				return 1
			}
		}
		return 0
	}
	rules := []struct {
		name string
		cmp  func(a, b int) int // < 0 when a is the better choice
	}{
		{"marked canonical", func(a, b int) int { return marked(b) - marked(a) }},
		{"freshest", func(a, b int) int { return ps[b].Updated.Compare(ps[a].Updated) }},
		{"shortest path", func(a, b int) int { return len(ps[a].Path) - len(ps[b].Path) }},
		{"path order", func(a, b int) int {
			if c := strings.Compare(ps[a].Path, ps[b].Path); c != 0 {
				return c
			}
			return ps[a].Line - ps[b].Line
		}},
	}
	order := append([]int(nil), members...)
	sort.SliceStable(order, func(i, j int) bool {
		for _, r := range rules {
			if c := r.cmp(order[i], order[j]); c != 0 {
				return c < 0
			}
		}
		return false
	})
	for _, r := range rules {
		if r.cmp(order[0], order[1]) != 0 {
			return order[0], r.name
		}
	}
	return order[0], "path order"
}

func compactStrings(s []string) []string {
	out := s[:0]
	for i, v := range s {
		if i == 0 || v != s[i-1] {
			out = append(out, v)
		}
	}
	return out
}
