package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"slices"
	"strconv"
	"strings"

	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/eval"
)

// baselineMeasures are the measures --baseline compares when no --min
// names others: the first hit (recip_rank), coverage of the top ten
// (recall_10) and graded order of the top ten (ndcg_cut_10).
var baselineMeasures = []string{"recip_rank", "recall_10", "ndcg_cut_10"}

const evalSynopsis = `eval --qrels QRELS --run RUN [--json] [--per-query] [--complete] [--min MEASURE=VALUE]...
       kbc eval BUNDLE --queries QUERIES.tsv --qrels QRELS [--level section|page] [--depth 100]
                [--write-run FILE] [--json] [--per-query] [--min MEASURE=VALUE]...
                [--baseline OLD_BUNDLE [--tolerance 0.01]]
       kbc eval BUNDLE --self [--level section|page] [--json]`

const evalAbout = `Eval measures retrieval quality with the measures of trec_eval, under its
names: ` + "map, recip_rank, P_1, P_3, P_5, P_10, recall_5, recall_10, recall_20,\n" +
	`ndcg_cut_5, ndcg_cut_10 and ndcg_cut_20.

With --run it scores a TREC run file (qid Q0 docid rank score tag) against
TREC judgements (qid 0 docid grade). With a BUNDLE and --queries (qid<TAB>text
lines) it runs the bundle's own search for each question and scores that: a
docid is path#anchor at section level, path at page level, and a section
found by several passages counts once, at its best rank. With --self it asks
the bundle for each section by its own heading trail, and for each defined
term, and reports how many are found at rank 1 and in the top 10.

--min fails (exit 3) when a mean is below VALUE; --baseline runs the same
questions on OLD_BUNDLE and fails when recip_rank, recall_10, ndcg_cut_10 or
a measure named by --min drops by more than --tolerance. Exit codes: 0 ok,
1 failure, 2 bad usage or a bad input line (file:line), 3 a check failed.`

func runEval(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("eval", evalSynopsis, evalAbout,
		"kbc eval out --queries questions.tsv --qrels questions.qrels --min recall_10=0.6\n"+
			"kbc eval out --self --json", stderr)
	qrelsPath := fs.String("qrels", "", "TREC judgements: qid 0 docid grade")
	runPath := fs.String("run", "", "TREC run to score: qid Q0 docid rank score tag")
	queriesPath := fs.String("queries", "", "questions to run on BUNDLE: qid<TAB>text")
	self := fs.Bool("self", false, "findability report: each section searched by its own heading trail")
	levelName := fs.String("level", "section", "what a hit counts as: section (path#anchor) or page (path)")
	depth := fs.Int("depth", bundle.DefaultEvalDepth, "passages fetched per question")
	writeRun := fs.String("write-run", "", "also write the bundle's results as a TREC run to `FILE`")
	asJSON := fs.Bool("json", false, "print JSON: mean and per_query (or the findability report)")
	perQuery := fs.Bool("per-query", false, "also print each query's scores")
	complete := fs.Bool("complete", false, "with --run: score judged queries missing from the run as 0 (trec_eval -c)")
	var mins multiFlag
	fs.Var(&mins, "min", "fail (exit 3) when the mean of `MEASURE=VALUE` is below VALUE; repeatable")
	baseline := fs.String("baseline", "", "fail (exit 3) when a measure drops against the same questions on `OLD_BUNDLE`")
	tolerance := fs.Float64("tolerance", 0.01, "largest drop --baseline allows")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	level, err := bundle.ParseLevel(*levelName)
	if err != nil {
		return badUsage(fs, stderr, "--%v", err)
	}
	limits, err := parseMins(mins)
	if err != nil {
		return badUsage(fs, stderr, "%v", err)
	}
	if *depth < 1 {
		return badUsage(fs, stderr, "--depth must be at least 1")
	}
	if *tolerance < 0 {
		return badUsage(fs, stderr, "--tolerance must not be negative")
	}
	opt := bundle.EvalOptions{Level: level, Depth: *depth}

	switch {
	case len(pos) == 0:
		if *qrelsPath == "" || *runPath == "" {
			return badUsage(fs, stderr, "want --qrels and --run, or a bundle folder")
		}
		for _, f := range []string{"queries", "self", "level", "depth", "write-run", "baseline", "tolerance"} {
			if set[f] {
				return badUsage(fs, stderr, "--%s needs a bundle folder", f)
			}
		}
		qrels, code := readQrels(*qrelsPath, stderr)
		if code >= 0 {
			return code
		}
		run, err := readFile(*runPath, eval.ReadRun)
		if err != nil {
			return badInput(stderr, err)
		}
		rep, err := eval.Evaluate(qrels, run, eval.Options{Complete: *complete})
		warnQueries(stderr, rep, !*complete)
		if err != nil {
			fmt.Fprintf(stderr, "kbc eval: %v\n", err)
			return exitFailure
		}
		return report(stdout, stderr, rep, nil, *asJSON, *perQuery, limits, nil, 0)

	case len(pos) > 1:
		return badUsage(fs, stderr, "want one bundle folder, got %d arguments", len(pos))
	case *runPath != "" || set["complete"]:
		return badUsage(fs, stderr, "--run and --complete score a run file: give no bundle folder")
	case *self:
		for _, f := range []string{"queries", "qrels", "write-run", "baseline", "tolerance", "min", "per-query"} {
			if set[f] {
				return badUsage(fs, stderr, "--self takes no --%s", f)
			}
		}
		return selfReport(pos[0], opt, *asJSON, stdout, stderr)
	case *queriesPath == "" || *qrelsPath == "":
		return badUsage(fs, stderr, "a bundle folder wants --queries and --qrels, or --self")
	case set["tolerance"] && *baseline == "":
		return badUsage(fs, stderr, "--tolerance goes with --baseline")
	}

	qrels, code := readQrels(*qrelsPath, stderr)
	if code >= 0 {
		return code
	}
	qs, err := readFile(*queriesPath, eval.ReadQueries)
	if err != nil {
		return badInput(stderr, err)
	}
	rep, run, code := evalBundle(pos[0], qs, qrels, opt, stderr)
	if code >= 0 {
		return code
	}
	warnQueries(stderr, rep, false)
	if *writeRun != "" {
		if err := bundle.WriteRunFile(*writeRun, run); err != nil {
			fmt.Fprintf(stderr, "kbc eval: %v\n", err)
			return exitFailure
		}
	}
	var old *eval.Report
	var compare []string
	if *baseline != "" {
		if old, _, code = evalBundle(*baseline, qs, qrels, opt, io.Discard); code >= 0 {
			return code
		}
		compare = slices.Clone(baselineMeasures)
		for _, l := range limits {
			if !slices.Contains(compare, l.measure) {
				compare = append(compare, l.measure)
			}
		}
	}
	return report(stdout, stderr, rep, old, *asJSON, *perQuery, limits, compare, *tolerance)
}

// evalBundle opens the bundle in dir and scores qs on it.
func evalBundle(dir string, qs []eval.Query, qrels eval.Qrels, opt bundle.EvalOptions, stderr io.Writer) (*eval.Report, eval.Run, int) {
	b, err := bundle.Open(dir)
	if err != nil {
		fmt.Fprintf(stderr, "kbc eval: %s\n", bundleProblem("eval", dir, err))
		return nil, nil, exitFailure
	}
	defer b.Close()
	bar := newProgress(stderr)
	bar.what = "searching [%s%s] %d/%d questions"
	opt.Progress = bar.update
	rep, run, err := b.Evaluate(qs, qrels, opt)
	bar.finish()
	if err != nil {
		warnQueries(stderr, rep, false)
		fmt.Fprintf(stderr, "kbc eval: %s: %v\n", dir, err)
		return nil, nil, exitFailure
	}
	return rep, run, -1
}

func readQrels(path string, stderr io.Writer) (eval.Qrels, int) {
	q, err := readFile(path, eval.ReadQrels)
	if err != nil {
		return nil, badInput(stderr, err)
	}
	return q, -1
}

// readFile opens path and reads it with read.
func readFile[T any](path string, read func(io.Reader, string) (T, error)) (T, error) {
	f, err := os.Open(path)
	if err != nil {
		var zero T
		return zero, err
	}
	defer f.Close()
	return read(f, path)
}

// badInput prints a file that cannot be read, or each of its bad lines
// (file:line: message), and returns the bad-usage exit code.
func badInput(stderr io.Writer, err error) int {
	var list eval.ErrorList
	if errors.As(err, &list) {
		for _, e := range list {
			fmt.Fprintln(stderr, e)
		}
	} else {
		fmt.Fprintf(stderr, "kbc eval: %v\n", err)
	}
	return exitUsage
}

// warnQueries names, once each, the queries that were left out or that
// cannot score.
func warnQueries(stderr io.Writer, rep *eval.Report, notRun bool) {
	if rep == nil {
		return
	}
	if n := len(rep.Unjudged); n > 0 {
		fmt.Fprintf(stderr, "kbc eval: %s no judgements, skipped: %s\n", plural(n, "query has", "queries have"), strings.Join(rep.Unjudged, " "))
	}
	if n := len(rep.NotRun); n > 0 && notRun {
		fmt.Fprintf(stderr, "kbc eval: %s no results in the run, skipped (--complete scores them 0): %s\n", plural(n, "judged query has", "judged queries have"), strings.Join(rep.NotRun, " "))
	}
	if n := len(rep.NoRelevant); n > 0 {
		fmt.Fprintf(stderr, "kbc eval: %s no relevant judgement and scores 0: %s\n", plural(n, "query has", "queries have"), strings.Join(rep.NoRelevant, " "))
	}
}

func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return strconv.Itoa(n) + " " + many
}

// minLimit is one --min MEASURE=VALUE.
type minLimit struct {
	measure string
	value   float64
}

func parseMins(specs []string) ([]minLimit, error) {
	var out []minLimit
	for _, s := range specs {
		m, v, ok := strings.Cut(s, "=")
		x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		m = strings.TrimSpace(m)
		if !ok || err != nil || x < 0 || x > 1 {
			return nil, fmt.Errorf("bad --min %q: want MEASURE=VALUE with VALUE from 0 to 1", s)
		}
		if !eval.IsMeasure(m) {
			return nil, fmt.Errorf("bad --min %q: no measure %q (measures: %s)", s, m, strings.Join(eval.Measures(), " "))
		}
		out = append(out, minLimit{m, x})
	}
	return out, nil
}

// report prints rep (and the baseline's means beside it), then runs the
// checks: each failure is one line on stderr, and the exit code is 3.
func report(stdout, stderr io.Writer, rep, old *eval.Report, asJSON, perQuery bool, limits []minLimit, compare []string, tolerance float64) int {
	if asJSON {
		out := struct {
			Mean     eval.Scores            `json:"mean"`
			PerQuery map[string]eval.Scores `json:"per_query"`
			Baseline eval.Scores            `json:"baseline,omitempty"`
		}{rep.Mean, rep.PerQuery, nil}
		if old != nil {
			out.Baseline = old.Mean
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(out); err != nil {
			fmt.Fprintf(stderr, "kbc eval: %v\n", err)
			return exitFailure
		}
	} else {
		printScores(stdout, rep, old, perQuery)
	}
	failed := false
	for _, l := range limits {
		if v := rep.Mean[l.measure]; v < l.value {
			fmt.Fprintln(stderr, paintFor(stderr, os.Getenv).fail(fmt.Sprintf("kbc: check min failed: %s is %.4f, below %.4f by %.4f", l.measure, v, l.value, l.value-v)))
			failed = true
		}
	}
	if old != nil {
		for _, d := range eval.Drops(old.Mean, rep.Mean, compare, tolerance) {
			fmt.Fprintln(stderr, paintFor(stderr, os.Getenv).fail(fmt.Sprintf("kbc: check baseline failed: %s dropped by %.4f (%.4f -> %.4f), tolerance %.4f", d.Measure, d.Old-d.New, d.Old, d.New, tolerance)))
			failed = true
		}
	}
	if failed {
		return exitCheck
	}
	return exitOK
}

func printScores(w io.Writer, rep, old *eval.Report, perQuery bool) {
	fmt.Fprintf(w, "%s scored\n\n", plural(len(rep.PerQuery), "query", "queries"))
	if old != nil {
		fmt.Fprintf(w, "%-12s %8s %8s %8s\n", "measure", "mean", "baseline", "change")
		for _, m := range eval.Measures() {
			fmt.Fprintf(w, "%-12s %8.4f %8.4f %+8.4f\n", m, rep.Mean[m], old.Mean[m], rep.Mean[m]-old.Mean[m])
		}
	} else {
		fmt.Fprintf(w, "%-12s %8s\n", "measure", "mean")
		for _, m := range eval.Measures() {
			fmt.Fprintf(w, "%-12s %8.4f\n", m, rep.Mean[m])
		}
	}
	if !perQuery {
		return
	}
	qids := make([]string, 0, len(rep.PerQuery))
	width := len("query")
	for q := range rep.PerQuery {
		qids = append(qids, q)
		width = max(width, len(q))
	}
	slices.Sort(qids)
	fmt.Fprintf(w, "\n%-*s", width, "query")
	for _, m := range eval.Measures() {
		fmt.Fprintf(w, " %*s", max(6, len(m)), m)
	}
	fmt.Fprintln(w)
	for _, q := range qids {
		fmt.Fprintf(w, "%-*s", width, q)
		for _, m := range eval.Measures() {
			fmt.Fprintf(w, " %*.4f", max(6, len(m)), rep.PerQuery[q][m])
		}
		fmt.Fprintln(w)
	}
}

// selfReport prints the findability report of the bundle in dir.
func selfReport(dir string, opt bundle.EvalOptions, asJSON bool, stdout, stderr io.Writer) int {
	b, err := bundle.Open(dir)
	if err != nil {
		fmt.Fprintf(stderr, "kbc eval: %s\n", bundleProblem("eval", dir, err))
		return exitFailure
	}
	defer b.Close()
	bar := newProgress(stderr)
	bar.what = "searching [%s%s] %d/%d headings and terms"
	opt.Progress = bar.update
	f, err := b.Findability(opt)
	bar.finish()
	if err != nil {
		fmt.Fprintf(stderr, "kbc eval: %v\n", err)
		return exitFailure
	}
	if asJSON {
		out := struct {
			*bundle.Findability
			SectionsShareAt1 float64 `json:"sections_share_at_1"`
			SectionsShareTop float64 `json:"sections_share_top10"`
			TermsShareAt1    float64 `json:"terms_share_at_1"`
			TermsShareTop    float64 `json:"terms_share_top10"`
		}{f, bundle.Share(f.SectionsAt1, f.Sections), bundle.Share(f.SectionsTop, f.Sections),
			bundle.Share(f.TermsAt1, f.Terms), bundle.Share(f.TermsTop, f.Terms)}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(out); err != nil {
			fmt.Fprintf(stderr, "kbc eval: %v\n", err)
			return exitFailure
		}
		return exitOK
	}
	fmt.Fprintf(stdout, "# Findability of %s\n\n", dir)
	fmt.Fprintf(stdout, "Each %s searched by its own heading trail, each defined term by itself.\n\n", f.Level)
	fmt.Fprintf(stdout, "| asked by | count | found at rank 1 | found in top 10 |\n|---|---:|---:|---:|\n")
	fmt.Fprintf(stdout, "| heading trail | %d | %.1f%% | %.1f%% |\n", f.Sections, 100*bundle.Share(f.SectionsAt1, f.Sections), 100*bundle.Share(f.SectionsTop, f.Sections))
	if f.Terms > 0 {
		fmt.Fprintf(stdout, "| defined term | %d | %.1f%% | %.1f%% |\n", f.Terms, 100*bundle.Share(f.TermsAt1, f.Terms), 100*bundle.Share(f.TermsTop, f.Terms))
	}
	var notTop []bundle.Miss
	for _, m := range f.Missed {
		if m.Rank == 0 || m.Rank > 10 {
			notTop = append(notTop, m)
		}
	}
	fmt.Fprintf(stdout, "\n## Not findable by their own words (not in the top 10): %d\n\n", len(notTop))
	if len(notTop) > 0 {
		const show = 200
		fmt.Fprintf(stdout, "| %s | asked by | rank | found first instead |\n|---|---|---:|---|\n", f.Level)
		for i, m := range notTop {
			if i == show {
				fmt.Fprintf(stdout, "\n… and %d more (--json lists all).\n", len(notTop)-show)
				break
			}
			rank := "-"
			if m.Rank > 0 {
				rank = strconv.Itoa(m.Rank)
			}
			fmt.Fprintf(stdout, "| %s | %s \"%s\" | %s | %s |\n", mdCell(m.DocID), m.Kind, mdCell(m.Query), rank, mdCell(m.Top))
		}
	}
	fmt.Fprintf(stdout, "\n%d more found in the top 10 but not at rank 1 (--json lists them).\n", len(f.Missed)-len(notTop))
	return exitOK
}

// mdCell makes s safe inside a Markdown table cell.
func mdCell(s string) string {
	return strings.NewReplacer("|", `\|`, "\n", " ").Replace(s)
}
