// Command anchorshare measures how many passages of a bundle carry an
// anchor other than that of the section they start in, judged by the
// question sets' own reading of each page (qsets.Page, written apart from
// the HTML reader of package sources, on x/net/html's tree builder):
//
//	go run ./cmd/kbc-qsets/anchorshare -src /tmp/kbc-corpora/python-3.11-html -bundle /tmp/b [-only user-manual] [-show N]
//
// Each passage's section is found by walking the page's section headings
// (those qsets.Page.Headings lists: boxes such as notes left out) in order
// and matching the last heading of the passage's trail, by its letters and
// digits; a trail heading that is not a section heading (a note's title
// read as a heading) leaves the walk on the section before it. Passages
// before the first heading, and on pages whose headings cannot be matched,
// are counted apart.
package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"unicode"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/cmd/kbc-qsets/internal/qsets"
)

func norm(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if unicode.IsLetter(r) || unicode.IsDigit(r) {
			b.WriteRune(r)
		}
	}
	return b.String()
}

func main() {
	src := flag.String("src", "", "the corpus folder the bundle was built from")
	dir := flag.String("bundle", "", "the bundle folder")
	show := flag.Int("show", 0, "print this many mismatches")
	only := flag.String("only", "", "judge only the pages whose path holds this text")
	flag.Parse()
	if *src == "" || *dir == "" {
		fmt.Fprintln(os.Stderr, "usage: anchorshare -src CORPUS -bundle BUNDLE [-show N]")
		os.Exit(2)
	}
	ps, err := bundle.ReadPassages(*dir)
	if err != nil {
		fmt.Fprintln(os.Stderr, "anchorshare:", err)
		os.Exit(1)
	}
	var total, wrong, missing, preamble, unmatched int
	shown := 0
	for i := 0; i < len(ps); {
		j := i
		for j < len(ps) && ps[j].Path == ps[i].Path {
			j++
		}
		page := ps[i:j]
		i = j
		if !strings.HasSuffix(page[0].Path, ".html") || !strings.Contains(page[0].Path, *only) {
			continue
		}
		f, err := os.Open(filepath.Join(*src, filepath.FromSlash(page[0].Path)))
		if err != nil {
			fmt.Fprintln(os.Stderr, "anchorshare:", err)
			os.Exit(1)
		}
		pg, err := qsets.ParsePage(f)
		f.Close()
		if err != nil {
			fmt.Fprintln(os.Stderr, "anchorshare:", err)
			os.Exit(1)
		}
		hs := pg.Headings()
		at := -1
		for _, p := range page {
			if len(p.Heading) == 0 {
				preamble++
				continue
			}
			want := norm(p.Heading[len(p.Heading)-1])
			for k := max(at, 0); k < len(hs); k++ {
				if norm(hs[k].Text) == want {
					at = k
					break
				}
			}
			if at < 0 {
				unmatched++
				continue
			}
			total++
			if exp := hs[at].Anchor; p.Anchor != exp {
				wrong++
				if p.Anchor == "" {
					missing++
				}
				if shown < *show {
					shown++
					fmt.Printf("%s:%d %q #%s, section %q #%s\n", p.Path, p.Line, strings.Join(p.Heading, " > "), p.Anchor, hs[at].Text, exp)
				}
			}
		}
	}
	fmt.Printf("%d passages judged: %d (%.1f%%) cite another anchor than their section's, %d of them none; %d before the first heading, %d unmatched\n",
		total, wrong, 100*float64(wrong)/float64(max(total, 1)), missing, preamble, unmatched)
}
