package main

import (
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/compile"
)

func runStale(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("stale", "stale SRC|OUT [--json] [--config FILE] [--max-stale N|N%] [--max-unknown N|N%] [--fail-on-divergent]",
		"Stale prints the staleness report: every document's freshness, worst first and\n"+
			"grouped by owner, with counts per status and an age histogram. Given a source\n"+
			"folder it reads and dates the pages (nothing is written); given a bundle it\n"+
			"judges the dates the bundle recorded again at the current time\n"+
			"(SOURCE_DATE_EPOCH when set) with the checks it was built with, which\n"+
			"--config FILE and the check flags override. A failed check exits 3.",
		"kbc stale docs --max-stale 5 --fail-on-divergent\n"+
			"kbc stale out --json", stderr)
	asJSON := fs.Bool("json", false, "print the report as JSON")
	sf := addSourceFlags(fs)
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one source folder or bundle")
	}
	now, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		return badUsage(fs, stderr, "%v", err)
	}
	var st *build.StalenessReport
	var divergent int
	var checks []build.CheckFailure
	if _, err := os.Stat(filepath.Join(pos[0], bundle.ManifestFile)); err == nil {
		reps, failures, code := bundleReports(fs, sf, pos[0], now, stderr)
		if code >= 0 {
			return code
		}
		st, divergent, checks = reps.Staleness, reps.Divergent, failures
	} else {
		cfg, code := sf.configFor(pos[0], stderr)
		if code >= 0 {
			return code
		}
		ctx, stop := interrupted()
		defer stop()
		bar := newProgress(stderr)
		res, err := compile.Analyze(ctx, compile.Job{Src: pos[0], Config: cfg, Now: now, Progress: bar.update})
		bar.finish()
		if err != nil {
			fmt.Fprintf(stderr, "kbc stale: %v\n", err)
			return exitFailure
		}
		printProblems(res, stderr)
		st, divergent = res.Staleness, res.Stats.Divergent
		checks = cfg.Checks.Evaluate(build.CheckInput{Staleness: st.Counts, Divergent: divergent, Secrets: res.Stats.Secrets})
	}
	if *asJSON {
		data, err := bundle.MarshalReport(st)
		if err != nil {
			fmt.Fprintf(stderr, "kbc stale: %v\n", err)
			return exitFailure
		}
		stdout.Write(data)
	} else {
		stdout.Write(bundle.RenderStaleness(st))
		if divergent > 0 {
			fmt.Fprintf(stdout, "\n%d near-duplicate pair(s) differ in numbers, versions, dates or units: see the duplicate report.\n", divergent)
		}
	}
	return printFailures(checks, stderr)
}

// bundleReports judges the bundle in dir again at now, with the checks
// it was built with, overridden by --config FILE when given and then by
// the check flags.
func bundleReports(fs *flag.FlagSet, sf *sourceFlags, dir string, now time.Time, stderr io.Writer) (*compile.Reports, []build.CheckFailure, int) {
	checks, err := compile.BundleChecks(dir)
	if err != nil {
		fmt.Fprintf(stderr, "kbc stale: %v\n", err)
		return nil, nil, exitFailure
	}
	if sf.config != "" {
		cfg, err := compile.LoadConfig(dir, sf.config)
		if err != nil {
			fmt.Fprintf(stderr, "kbc stale: %v\n", err)
			return nil, nil, exitUsage
		}
		fmt.Fprintf(stderr, "kbc: config %s\n", cfg.Path)
		checks = cfg.Checks
	}
	if err := sf.applyChecks(&checks); err != nil {
		return nil, nil, badUsage(fs, stderr, "%v", err)
	}
	reps, failures, err := compile.Judge(dir, now, &checks)
	if err != nil {
		fmt.Fprintf(stderr, "kbc stale: %v\n", err)
		return nil, nil, exitFailure
	}
	return reps, failures, -1
}
