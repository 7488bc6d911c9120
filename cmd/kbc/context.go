package main

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/kbc-project/kbc/bundle"
)

func runContext(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("context", "context OUT \"question\" --budget TOKENS [--json] [--lambda 0.7] [--audience NAME]...",
		"Context prints what an assistant puts in front of the model for a question:\n"+
			"passages chosen by relevance and novelty (maximal marginal relevance) until\n"+
			"the token budget is used, passages that follow each other in a section merged\n"+
			"back in reading order, each block numbered and cited as path#anchor with its\n"+
			"lines and date, and its warnings (stale, expired, undated, disputed) beside it.\n"+
			"The text output is Markdown a prompt can include as it is.",
		"kbc context out \"how often are reefer door seals checked\" --budget 800 --audience drivers\n"+
			"kbc context out \"night shift handover\" --budget 1200 --json", stderr)
	budget := fs.Int("budget", 0, "tokens the context may take (cl100k_base), citations and warnings included")
	lambda := fs.Float64("lambda", bundle.DefaultLambda, "weight of relevance against novelty, in (0, 1]")
	fetch := fs.Int("fetch", 0, "search hits to choose from (default: five times what the budget holds)")
	asJSON := fs.Bool("json", false, "print the context as JSON")
	sf := addSearchFlags(fs)
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) < 2 {
		return badUsage(fs, stderr, "want a bundle folder and a question")
	}
	if *budget <= 0 {
		return badUsage(fs, stderr, "--budget must be a number of tokens, at least 1")
	}
	if *lambda <= 0 || *lambda > 1 {
		return badUsage(fs, stderr, "--lambda %g is not in (0, 1]", *lambda)
	}
	b, now, code := openForSearch(fs, pos[0], stderr)
	if code >= 0 {
		return code
	}
	defer b.Close()
	c, err := b.Context(strings.Join(pos[1:], " "), bundle.ContextOptions{
		SearchOptions: sf.options(0, now), Budget: *budget, Lambda: *lambda, Fetch: *fetch,
	})
	if err != nil {
		fmt.Fprintf(stderr, "kbc context: %v\n", err)
		return exitFailure
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(c); err != nil {
			fmt.Fprintf(stderr, "kbc context: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	if len(c.Blocks) == 0 {
		fmt.Fprintln(stderr, "kbc context: no passage matches, or none fits the budget")
		return exitOK
	}
	io.WriteString(stdout, c.Markdown())
	return exitOK
}
