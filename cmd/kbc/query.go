package main

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/internal/printable"
)

func runQuery(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("query", "query OUT \"text\" [-k 10] [--json]",
		"Query searches the bundle in OUT with BM25 over passage text, title and heading\n"+
			"trail, and prints the best passages.",
		"kbc query out \"how often are reefer door seals checked\" -k 3", stderr)
	k := fs.Int("k", 10, "number of passages to return")
	asJSON := fs.Bool("json", false, "print the results as a JSON array")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) < 2 {
		return badUsage(fs, stderr, "want a bundle folder and a query")
	}
	if *k <= 0 {
		return badUsage(fs, stderr, "-k must be at least 1")
	}
	b, err := bundle.Open(pos[0])
	if err != nil {
		fmt.Fprintf(stderr, "kbc query: %v\n", err)
		return exitFailure
	}
	defer b.Close()
	hits, err := b.Search(strings.Join(pos[1:], " "), *k)
	if err != nil {
		fmt.Fprintf(stderr, "kbc query: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		if hits == nil {
			hits = []bundle.Hit{}
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(hits); err != nil {
			fmt.Fprintf(stderr, "kbc query: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	if len(hits) == 0 {
		fmt.Fprintln(stdout, "no passage matches")
		return exitOK
	}
	for i, h := range hits {
		loc := h.Path
		if h.Anchor != "" {
			loc += "#" + h.Anchor
		}
		fmt.Fprintf(stdout, "%2d. %6.3f  %s  (lines %d-%d)\n", i+1, h.Score, printable.Quote(loc), h.Line, h.EndLine)
		if len(h.Heading) > 0 {
			fmt.Fprintf(stdout, "    %s\n", printable.Quote(strings.Join(h.Heading, " > ")))
		}
		for _, l := range firstLines(h.Text, 2, 100) {
			fmt.Fprintf(stdout, "    | %s\n", printable.Quote(l))
		}
		if len(h.AlsoAt) > 0 {
			also := make([]string, len(h.AlsoAt))
			for i, a := range h.AlsoAt {
				also[i] = printable.Quote(a)
			}
			fmt.Fprintf(stdout, "    also at: %s\n", strings.Join(also, ", "))
		}
	}
	return exitOK
}

// firstLines returns up to n non-empty lines of s, each cut to width runes.
func firstLines(s string, n, width int) []string {
	var out []string
	for _, l := range strings.Split(s, "\n") {
		l = strings.TrimSpace(l)
		if l == "" || strings.HasPrefix(l, "```") {
			continue
		}
		if r := []rune(l); len(r) > width {
			l = string(r[:width-1]) + "…"
		}
		out = append(out, l)
		if len(out) == n {
			break
		}
	}
	return out
}
