package bundle

import (
	"bytes"
	"encoding/json"
	"fmt"
	"strings"
	"time"

	"github.com/kbc-project/kbc/build"
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
// counts per status, the age histogram, then documents grouped by owner,
// worst first.
func RenderStaleness(r *build.StalenessReport) []byte {
	var b bytes.Buffer
	c := r.Counts
	fmt.Fprintf(&b, "# Staleness report\n\n")
	fmt.Fprintf(&b, "> **Caution.** %s\n\n", r.Caution)
	fmt.Fprintf(&b, "As of %s: %d documents: %d expired, %d stale, %d due soon, %d fresh", r.GeneratedAt.UTC().Format(time.RFC3339), c.Total, c.Expired, c.Stale, c.DueSoon, c.Fresh)
	if c.Unknown > 0 {
		fmt.Fprintf(&b, ", %d undated", c.Unknown)
	}
	fmt.Fprintf(&b, ".\n\n## Age of documents\n\n| age | documents | |\n|---|---:|---|\n")
	most := 1
	for _, h := range r.Histogram {
		most = max(most, h.Documents)
	}
	for _, h := range r.Histogram {
		fmt.Fprintf(&b, "| %s | %d | %s |\n", h.Label, h.Documents, strings.Repeat("#", (h.Documents*30+most-1)/most))
	}
	for _, g := range r.Owners {
		owner := g.Owner
		if owner == "" {
			owner = "(no owner)"
		}
		gc := g.Counts
		fmt.Fprintf(&b, "\n## %s\n\n%d expired, %d stale, %d due soon, %d fresh\n\n", printable.Quote(owner), gc.Expired, gc.Stale, gc.DueSoon, gc.Fresh)
		fmt.Fprintf(&b, "| status | document | updated | from | review by | |\n|---|---|---|---|---|---|\n")
		for _, d := range g.Documents {
			when := ""
			switch {
			case d.OverdueDays > 0:
				when = fmt.Sprintf("%d days overdue", d.OverdueDays)
			case d.DueInDays > 0 && d.Status != "fresh":
				when = fmt.Sprintf("due in %d days", d.DueInDays)
			}
			by := day(d.ReviewBy)
			if d.Expires != nil {
				by += " (expires " + day(*d.Expires) + ")"
			}
			fmt.Fprintf(&b, "| %s | %s (%s) | %s | %s | %s | %s |\n", d.Status, mdCell(d.Title), mdCell(d.Path), day(d.Updated), mdCell(d.UpdatedSource), by, when)
		}
	}
	return b.Bytes()
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
// copies first, with the differing words side by side, then every cluster.
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
			fmt.Fprintf(&b, "\n### %s vs %s\n\n", d.Canonical.Ref(), d.Copy.Ref())
			fmt.Fprintf(&b, "Jaccard %.2f; lines %d-%d vs %d-%d.\n\n", d.Jaccard, d.Canonical.Line, d.Canonical.EndLine, d.Copy.Line, d.Copy.EndLine)
			fmt.Fprintf(&b, "| %s | %s |\n|---|---|\n", mdCell(d.Canonical.Path), mdCell(d.Copy.Path))
			for _, x := range d.Differences {
				if x.Fact {
					fmt.Fprintf(&b, "| **%s** | **%s** |\n", mdCell(x.A), mdCell(x.B))
				} else {
					fmt.Fprintf(&b, "| %s | %s |\n", mdCell(x.A), mdCell(x.B))
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
