package main

import (
	"encoding/json"
	"fmt"
	"io"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/internal/printable"
)

func runDiff(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("diff", "diff A B [--json]",
		"Diff compares two bundles passage by passage and prints what was added, changed\n"+
			"(title, heading trail or text differs) and removed from A to B: what a vector store must embed again\n"+
			"or forget. Exit 0 whether or not they differ.",
		"kbc diff out/yesterday out/today\n"+
			"kbc diff out/yesterday out/today --json", stderr)
	asJSON := fs.Bool("json", false, "print the delta as JSON (the format of delta.json)")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 2 {
		return badUsage(fs, stderr, "want two bundle folders")
	}
	var prior [2]*bundle.Prior
	for i, dir := range pos {
		p, err := bundle.ReadPrior(dir)
		if err == nil && p == nil {
			_, err = bundle.ReadManifest(dir)
			fmt.Fprintf(stderr, "kbc diff: %s\n", bundleProblem("diff", dir, err))
			return exitFailure
		}
		if err == nil {
			_, err = p.All()
		}
		if err != nil {
			fmt.Fprintf(stderr, "kbc diff: %s: %v\n", dir, err)
			return exitFailure
		}
		prior[i] = p
	}
	d := bundle.Diff(prior[0].Passages, prior[1].Passages)
	d.From, d.To = prior[0].ID, prior[1].ID
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(d)
		return exitOK
	}
	fmt.Fprintf(stdout, "%s (%.12s) -> %s (%.12s): %d added, %d changed, %d removed\n",
		pos[0], d.From, pos[1], d.To, len(d.Added), len(d.Changed), len(d.Removed))
	where := func(ps []build.Passage) map[string]build.Passage {
		m := make(map[string]build.Passage, len(ps))
		for _, p := range ps {
			m[p.ID] = p
		}
		return m
	}
	a, b := where(prior[0].Passages), where(prior[1].Passages)
	show := func(mark string, p build.Passage) {
		fmt.Fprintf(stdout, "%s %s  %s:%d-%d\n", mark, p.ID, printable.Quote(p.Ref()), p.Line, p.EndLine)
	}
	for _, id := range d.Added {
		show("+", b[id])
	}
	for _, c := range d.Changed {
		show("~", b[c.ID])
	}
	for _, id := range d.Removed {
		show("-", a[id])
	}
	return exitOK
}
