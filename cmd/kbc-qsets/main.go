// Command kbc-qsets writes question sets with relevance judgements, built
// from the real documentation corpora, for measuring retrieval with
// `kbc eval`: for each set NAME, NAME.queries.tsv, NAME.qrels (section
// level, docid path#anchor) and NAME-page.qrels (page level, docid path).
//
//	go run ./cmd/kbc-qsets -corpora /tmp/kbc-corpora -out /tmp/qsets
package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/cmd/kbc-qsets/internal/qsets"
)

func score(dir string, s *qsets.Set) (sec, page qsets.Scores, err error) {
	b, err := bundle.Open(dir)
	if err != nil {
		return sec, page, err
	}
	defer b.Close()
	return qsets.Measure(b, s)
}

func main() {
	corpora := flag.String("corpora", "", "folder holding python-3.11-html and git-2.39-html")
	handbook := flag.String("handbook", "examples/queries.jsonl", "hand-written questions for examples/handbook (JSON Lines)")
	out := flag.String("out", "", "folder to write the sets into (created)")
	limit := flag.Int("limit", 1500, "sample python-index and git-options down to about this many queries each (0: all)")
	bundles := flag.String("bundles", "", "also score each set against the bundle DIR/CORPUS (built by kbc build from that corpus) and print MRR@10 and R@10")
	verbose := flag.Bool("v", false, "list the link targets that were skipped, and why, and the judged sections no passage cites")
	flag.Parse()
	if *out == "" || flag.NArg() > 0 {
		fmt.Fprintln(os.Stderr, "usage: kbc-qsets -corpora DIR -out DIR [-handbook FILE] [-limit N] [-bundles DIR] [-v]")
		os.Exit(2)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		fmt.Fprintln(os.Stderr, "kbc-qsets:", err)
		os.Exit(1)
	}
	sets, errs := qsets.All(*corpora, *handbook, *limit)
	for _, err := range errs {
		fmt.Fprintln(os.Stderr, "kbc-qsets:", err)
	}
	fmt.Printf("%-14s %-18s %7s %7s %9s %7s %8s  %s\n", "set", "corpus", "queries", "judged", "sections", "pages", "skipped", "built from")
	for _, s := range sets {
		if err := qsets.Write(*out, s); err != nil {
			fmt.Fprintln(os.Stderr, "kbc-qsets:", err)
			os.Exit(1)
		}
		st := s.Stats()
		if *verbose {
			for _, p := range s.Problems {
				fmt.Fprintln(os.Stderr, "skipped:", p)
			}
		}
		fmt.Printf("%-14s %-18s %7d %7d %9d %7d %8d  %s\n", s.Name, s.Corpus, len(s.Queries), st.Judged, st.Sections, st.Pages, s.Skipped, s.Note)
	}
	fmt.Printf("written to %s\n", filepath.Clean(*out))
	if *bundles != "" {
		fmt.Printf("\n%-14s %7s | %-29s | %-23s\n", "", "", "section level", "page level")
		fmt.Printf("%-14s %7s | %6s %7s %6s %7s | %6s %7s %8s\n", "set", "queries", "judged", "uncited", "MRR@10", "R@10", "judged", "MRR@10", "R@10")
		for _, s := range sets {
			dir := filepath.Join(*bundles, s.Corpus)
			sec, page, err := score(dir, s)
			var uncited []string
			if err == nil {
				uncited, err = qsets.Uncited(dir, s)
			}
			if err != nil {
				fmt.Fprintln(os.Stderr, "kbc-qsets:", err)
				errs = append(errs, err)
				continue
			}
			if *verbose {
				for _, u := range uncited {
					fmt.Fprintf(os.Stderr, "uncited: %s: %s\n", s.Name, u)
				}
			}
			fmt.Printf("%-14s %7d | %6d %7d %6.4f %7.4f | %6d %7.4f %8.4f\n", s.Name, len(s.Queries),
				sec.Queries, len(uncited), sec.MRR, sec.Recall, page.Queries, page.MRR, page.Recall)
		}
	}
	if len(errs) > 0 {
		os.Exit(1)
	}
}
