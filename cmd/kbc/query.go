package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/internal/printable"
)

// searchFlags are the flags of every command that searches a bundle
// (query, context): who is asking and what they will not be given.
type searchFlags struct {
	audiences                    multiFlag
	excludeStale, excludeExpired bool
}

func addSearchFlags(fs *flag.FlagSet) *searchFlags {
	sf := &searchFlags{}
	fs.Var(&sf.audiences, "audience", "an audience the caller may read (repeatable); passages labelled for other audiences are left out")
	fs.BoolVar(&sf.excludeStale, "exclude-stale", false, "leave out stale and expired passages")
	fs.BoolVar(&sf.excludeExpired, "exclude-expired", false, "leave out expired passages")
	return sf
}

// options returns the search options, judged at now.
func (sf *searchFlags) options(k int, now time.Time) bundle.SearchOptions {
	return bundle.SearchOptions{K: k, Audiences: sf.audiences, ExcludeStale: sf.excludeStale, ExcludeExpired: sf.excludeExpired, Now: now}
}

// openForSearch opens the bundle in dir and reads the instant freshness is
// judged at (SOURCE_DATE_EPOCH, else the clock).
func openForSearch(fs *flag.FlagSet, dir string, stderr io.Writer) (*bundle.Bundle, time.Time, int) {
	now, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		return nil, now, badUsage(fs, stderr, "%v", err)
	}
	b, err := bundle.Open(dir)
	if err != nil {
		fmt.Fprintf(stderr, "kbc %s: %s\n", fs.Name(), bundleProblem(fs.Name(), dir, err))
		return nil, now, exitFailure
	}
	return b, now, -1
}

func runQuery(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("query", "query OUT \"text\" [-k 10] [--json] [--audience NAME]... [--exclude-stale] [--exclude-expired]",
		"Query searches the bundle in OUT with BM25 over passage text, title and heading\n"+
			"trail, and prints the best passages, each with its freshness status now and\n"+
			"the copies that disagree with it. Passages labelled for an audience are shown\n"+
			"only with --audience naming it.",
		"kbc query out \"how often are reefer door seals checked\" -k 3 --audience drivers\n"+
			"kbc query out \"night shift handover\" --exclude-stale --json", stderr)
	k := fs.Int("k", 10, "number of passages to return")
	asJSON := fs.Bool("json", false, "print the results as a JSON array")
	sf := addSearchFlags(fs)
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
	b, now, code := openForSearch(fs, pos[0], stderr)
	if code >= 0 {
		return code
	}
	defer b.Close()
	hits, err := b.Query(strings.Join(pos[1:], " "), sf.options(*k, now))
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
		fmt.Fprintf(stdout, "%2d. %6.3f  %s  (lines %d-%d)  %s\n", i+1, h.Score, printable.Quote(h.Ref()), h.Line, h.EndLine, h.Status)
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
		for _, c := range h.Conflict {
			fmt.Fprintf(stdout, "    disputed by %s: %s\n", c.With, c.Words())
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
