package bundle

import (
	"bytes"
	"encoding/json"
	"fmt"
	"sort"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/internal/printable"
)

// Report files inside a bundle, each in JSON for machines and Markdown
// for people.
const (
	StalenessJSON     = "reports/staleness.json"
	StalenessMarkdown = "reports/staleness.md"
	DuplicatesJSON    = "reports/duplicates.json"
	DuplicatesMD      = "reports/duplicates.md"
	BoilerplateJSON   = "reports/boilerplate.json"
	BoilerplateMD     = "reports/boilerplate.md"
	SecretsJSON       = "reports/secrets.json"
	SecretsMD         = "reports/secrets.md"
	HiddenJSON        = "reports/hidden.json"
	HiddenMD          = "reports/hidden.md"
)

// MarshalReport encodes a report as indented JSON with a final newline.
func MarshalReport(v any) ([]byte, error) {
	data, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(data, '\n'), nil
}

func day(t time.Time) string {
	if t.IsZero() {
		return "-"
	}
	return t.UTC().Format("2006-01-02")
}

// mdCell escapes text for a Markdown table cell.
func mdCell(s string) string {
	if s == "" {
		return "-"
	}
	s = printable.Quote(s) // no control character reaches a terminal
	s = strings.ReplaceAll(s, "|", `\|`)
	return strings.ReplaceAll(s, "\n", " ")
}

// RenderStaleness writes the staleness report as Markdown: the caution,
// counts per status, a table of owners by status (owners in the order of
// their worst page), the age histogram, then each owner's documents,
// worst first.
func RenderStaleness(r *build.StalenessReport) []byte {
	var b bytes.Buffer
	c := r.Counts
	fmt.Fprintf(&b, "# Staleness report\n\n")
	fmt.Fprintf(&b, "> **Caution.** %s\n\n", r.Caution)
	fmt.Fprintf(&b, "As of %s: %d documents: %d expired, %d stale, %d due soon, %d fresh", r.GeneratedAt.UTC().Format(time.RFC3339), c.Total, c.Expired, c.Stale, c.DueSoon, c.Fresh)
	fmt.Fprintf(&b, ", %d unknown (undated)", c.Unknown)
	fmt.Fprintf(&b, ".\n\n")
	for _, n := range r.Notes {
		fmt.Fprintf(&b, "> **Note.** %s.\n\n", n)
	}
	if len(r.Owners) > 0 {
		fmt.Fprintf(&b, "## Owners\n\nOwners in order of their worst page: the page most overdue for review comes first.\n\n")
		fmt.Fprintf(&b, "| owner | expired | stale | unknown | due soon | fresh | total | worst page |\n|---|---:|---:|---:|---:|---:|---:|---|\n")
		for _, g := range r.Owners {
			gc, w := g.Counts, g.Documents[0]
			worst := fmt.Sprintf("%s: %s", mdCell(w.Path), w.Status)
			if d := overdue(&w); d != "" {
				worst += ", " + d
			}
			fmt.Fprintf(&b, "| %s | %d | %d | %d | %d | %d | %d | %s |\n", mdCell(ownerName(g.Owner)), gc.Expired, gc.Stale, gc.Unknown, gc.DueSoon, gc.Fresh, gc.Total, worst)
		}
		fmt.Fprintf(&b, "| all | %d | %d | %d | %d | %d | %d | |\n\n", c.Expired, c.Stale, c.Unknown, c.DueSoon, c.Fresh, c.Total)
	}
	fmt.Fprintf(&b, "## Age of documents\n\n| age | documents | |\n|---|---:|---|\n")
	most := 1
	for _, h := range r.Histogram {
		most = max(most, h.Documents)
	}
	for _, h := range r.Histogram {
		fmt.Fprintf(&b, "| %s | %d | %s |\n", h.Label, h.Documents, strings.Repeat("#", (h.Documents*30+most-1)/most))
	}
	for _, g := range r.Owners {
		gc := g.Counts
		fmt.Fprintf(&b, "\n## %s\n\n%d expired, %d stale, %d due soon, %d fresh, %d unknown\n\n", printable.Quote(ownerName(g.Owner)), gc.Expired, gc.Stale, gc.DueSoon, gc.Fresh, gc.Unknown)
		fmt.Fprintf(&b, "| status | document | updated | reviewed | from | review by | |\n|---|---|---|---|---|---|---|\n")
		for _, d := range g.Documents {
			by := day(d.ReviewBy)
			if d.Expires != nil {
				by += " (expires " + day(*d.Expires) + ")"
			}
			from := d.UpdatedSource
			if d.SetAside != "" {
				from = "set aside: " + d.SetAside
			}
			reviewed := "-"
			if d.Reviewed != nil {
				reviewed = day(*d.Reviewed)
			}
			fmt.Fprintf(&b, "| %s | %s (%s) | %s | %s | %s | %s | %s |\n", d.Status, mdCell(d.Title), mdCell(d.Path), day(d.Updated), reviewed, mdCell(from), by, overdue(&d))
		}
	}
	return b.Bytes()
}

// Serves says which passages of a divergent pair the bundle serves, as a
// sentence.
func Serves(d *build.DivergentCopy) string {
	switch c, o := d.Canonical.InBundle, d.Copy.InBundle; {
	case c && o:
		return "The bundle serves both copies; a search hit on either names the other."
	case c:
		return "The bundle serves the canonical copy; the other is left out and listed in its also_at."
	case o:
		return "The bundle serves the copy; the canonical side was folded into another passage."
	}
	return "The bundle serves neither passage as is: both were folded into other passages."
}

func dayPtr(t *time.Time) string {
	if t == nil {
		return "-"
	}
	return day(*t)
}

func yesNo(v bool) string {
	if v {
		return "yes"
	}
	return "no (folded)"
}

// mdMark writes sentence for a Markdown table cell with the first
// occurrence of run in bold; without a sentence, the run alone in bold.
func mdMark(sentence, run string) string {
	if run == "" {
		return mdCell(sentence)
	}
	i := wordIndex(sentence, run)
	if i < 0 {
		return "**" + mdCell(run) + "**"
	}
	cell := func(s string) string {
		if s == "" {
			return ""
		}
		return mdCell(s)
	}
	return cell(sentence[:i]) + "**" + mdCell(run) + "**" + cell(sentence[i+len(run):])
}

// wordIndex returns the index of the first occurrence of run in s that
// does not start or end inside a word, else of the first at all, else -1:
// "in" is marked in "check in the system", not in "Drivers".
func wordIndex(s, run string) int {
	first := strings.Index(s, run)
	for i := first; i >= 0; {
		before, _ := utf8.DecodeLastRuneInString(s[:i])
		after, _ := utf8.DecodeRuneInString(s[i+len(run):])
		if !isWordRune(before) && !isWordRune(after) {
			return i
		}
		next := strings.Index(s[i+1:], run)
		if next < 0 {
			break
		}
		i += 1 + next
	}
	return first
}

func isWordRune(r rune) bool { return unicode.IsLetter(r) || unicode.IsDigit(r) }

// ownerName is how reports name an owner; "" is "(no owner)".
func ownerName(owner string) string {
	if owner == "" {
		return "(no owner)"
	}
	return owner
}

// overdue says how late a document is ("12 days overdue", counted from
// the expiry date for an expired page) or how soon it is due, or "" for a
// fresh page or one without dates.
func overdue(d *build.DocFreshness) string {
	switch {
	case d.OverdueDays > 0 && d.Status == fresh.Expired:
		return fmt.Sprintf("%d days past expiry", d.OverdueDays)
	case d.OverdueDays > 0:
		return fmt.Sprintf("%d days overdue", d.OverdueDays)
	case d.DueInDays > 0 && d.Status != fresh.Fresh:
		return fmt.Sprintf("due in %d days", d.DueInDays)
	case d.Status == fresh.DueSoon && !d.ReviewBy.IsZero():
		return "due today"
	}
	return ""
}

// RenderBoilerplate writes the boilerplate report as Markdown.
func RenderBoilerplate(entries []build.BoilerplateEntry) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Boilerplate dropped\n\nText blocks repeated on so many pages that they are site furniture, not content. They are left out of every passage.\n\n")
	if len(entries) == 0 {
		fmt.Fprintf(&b, "None found.\n")
		return b.Bytes()
	}
	fmt.Fprintf(&b, "| pages | text | first seen in |\n|---:|---|---|\n")
	for _, e := range entries {
		fmt.Fprintf(&b, "| %d | %s | %s |\n", e.Pages, mdCell(e.Text), mdCell(e.Example))
	}
	return b.Bytes()
}

// RenderDuplicates writes the duplicate report as Markdown: divergent
// copies first, each with both pages' owners and dates, which copy the
// bundle serves, and every difference in the sentence around it; then
// every cluster.
func RenderDuplicates(r *build.DuplicateReport) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Duplicate passages\n\n")
	fmt.Fprintf(&b, "%d passages compared; %d copies left out of the bundle and listed on their canonical passage (`also_at`).\n", r.Passages, r.Removed)
	fmt.Fprintf(&b, "Near copies: Jaccard similarity of word %d-shingles at least %g, found by MinHash (%d values) with LSH in %d bands of %d rows, which catches a pair at similarity %g with probability %.4f and at 0.5 with probability %.4f; every candidate pair is checked by exact Jaccard.\n",
		r.Shingle, r.Threshold, r.Hashes, r.Bands, r.Rows, r.Threshold, r.CatchAtThreshold, r.CatchAtHalf)
	fmt.Fprintf(&b, "\n## Divergent copies\n\n")
	if len(r.Divergent) == 0 {
		fmt.Fprintf(&b, "None: no two copies differ in numbers, versions, dates or units.\n")
	} else {
		fmt.Fprintf(&b, "Copies of one passage that disagree on a number, version, date or unit. An assistant may answer from either, so settle which is right and fix or remove the other.\n")
		for _, d := range r.Divergent {
			c, o := d.Canonical, d.Copy
			fmt.Fprintf(&b, "\n### %s vs %s\n\n", mdCell(c.Ref()), mdCell(o.Ref()))
			fmt.Fprintf(&b, "%s Jaccard similarity %.2f.\n\n", Serves(&d), d.Jaccard)
			fmt.Fprintf(&b, "| | canonical | copy |\n|---|---|---|\n")
			fmt.Fprintf(&b, "| where | %s:%d-%d | %s:%d-%d |\n", mdCell(c.Path), c.Line, c.EndLine, mdCell(o.Path), o.Line, o.EndLine)
			fmt.Fprintf(&b, "| owner | %s | %s |\n", mdCell(ownerName(c.Owner)), mdCell(ownerName(o.Owner)))
			fmt.Fprintf(&b, "| updated | %s | %s |\n", day(c.Updated), day(o.Updated))
			fmt.Fprintf(&b, "| reviewed | %s | %s |\n", dayPtr(c.Reviewed), dayPtr(o.Reviewed))
			fmt.Fprintf(&b, "| in the bundle | %s | %s |\n", yesNo(c.InBundle), yesNo(o.InBundle))
			for _, x := range d.Differences {
				if x.Fact {
					fmt.Fprintf(&b, "| **differs** | %s | %s |\n", mdMark(x.SentenceA, x.A), mdMark(x.SentenceB, x.B))
				} else {
					fmt.Fprintf(&b, "| wording | %s | %s |\n", mdMark(x.SentenceA, x.A), mdMark(x.SentenceB, x.B))
				}
			}
		}
	}
	fmt.Fprintf(&b, "\n## Clusters\n\n")
	if len(r.Clusters) == 0 {
		fmt.Fprintf(&b, "None.\n")
		return b.Bytes()
	}
	fmt.Fprintf(&b, "| kept | chosen as | copies (Jaccard) |\n|---|---|---|\n")
	for _, c := range r.Clusters {
		var copies []string
		for _, x := range c.Copies {
			copies = append(copies, fmt.Sprintf("%s (%.2f)", x.Ref(), x.Jaccard))
		}
		kind := c.Reason
		if c.Exact {
			kind += ", identical"
		}
		fmt.Fprintf(&b, "| %s | %s | %s |\n", mdCell(c.Canonical.Ref()), kind, mdCell(strings.Join(copies, ", ")))
	}
	return b.Bytes()
}

// RenderSecrets writes the secrets report as Markdown: the caution, counts
// per rule, then every finding by path:line. Values are never written.
func RenderSecrets(r *build.SecretsReport) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Secrets found\n\n> **Caution.** %s\n\n", r.Caution)
	if r.Total == 0 {
		fmt.Fprintf(&b, "None found.\n")
		return b.Bytes()
	}
	fmt.Fprintf(&b, "%d credential(s) replaced by a marker such as `%s`.\n\n| rule | found |\n|---|---:|\n", r.Total, "[secret removed: RULE]")
	for _, rule := range sortedKeys(r.Rules) {
		fmt.Fprintf(&b, "| %s | %d |\n", rule, r.Rules[rule])
	}
	fmt.Fprintf(&b, "\n| where | rule |\n|---|---|\n")
	for _, f := range r.Findings {
		fmt.Fprintf(&b, "| %s:%d | %s |\n", mdCell(f.Path), f.Line, f.Rule)
	}
	return b.Bytes()
}

// RenderHidden writes the hidden-text report as Markdown: the caution,
// counts per reason, the pages with text dropped, then the lints.
func RenderHidden(r *build.HiddenReport) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "# Hidden text\n\n> **Caution.** %s\n\n## Dropped\n\n", r.Caution)
	if r.Total == 0 {
		fmt.Fprintf(&b, "None.\n")
	} else {
		fmt.Fprintf(&b, "%d character(s) or element(s) on %d page(s).\n\n| reason | dropped |\n|---|---:|\n", r.Total, len(r.Pages))
		for _, k := range sortedKeys(r.Reasons) {
			fmt.Fprintf(&b, "| %s | %d |\n", k, r.Reasons[k])
		}
		fmt.Fprintf(&b, "\n| page | dropped | where |\n|---|---:|---|\n")
		for _, p := range r.Pages {
			var at []string
			for _, m := range p.At {
				at = append(at, fmt.Sprintf("%s:%d %s x%d", p.Path, m.Line, m.Reason, m.Count))
			}
			fmt.Fprintf(&b, "| %s | %d | %s |\n", mdCell(p.Path), p.Total, mdCell(strings.Join(at, ", ")))
		}
	}
	fmt.Fprintf(&b, "\n## Text that addresses an assistant\n\n")
	if len(r.Lints) == 0 {
		fmt.Fprintf(&b, "None.\n")
		return b.Bytes()
	}
	fmt.Fprintf(&b, "Kept in the passages; check that each is meant for human readers.\n\n| where | phrasing |\n|---|---|\n")
	for _, l := range r.Lints {
		fmt.Fprintf(&b, "| %s:%d | %s |\n", mdCell(l.Path), l.Line, l.Reason)
	}
	return b.Bytes()
}

func sortedKeys(m map[string]int) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}
