package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

func runStale(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("stale", "stale SRC|OUT [--json] [--max-stale N|N%] [--max-unknown N|N%] [--fail-on-divergent]",
		"Stale prints the staleness report: every document's freshness, worst first and\n"+
			"grouped by owner, with counts per status and an age histogram. Given a source\n"+
			"folder it reads and dates the pages (nothing is written); given a bundle it\n"+
			"judges the dates the bundle recorded again at the current time\n"+
			"(SOURCE_DATE_EPOCH when set). Checks exit 3 when crossed.",
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
	var divergent, secrets int
	var g checks
	if _, err := os.Stat(filepath.Join(pos[0], bundle.ManifestFile)); err == nil {
		st, divergent, secrets, err = readReports(pos[0])
		if err != nil {
			fmt.Fprintf(stderr, "kbc stale: %v\n", err)
			return exitFailure
		}
		st = st.At(now)
		if g.stale, err = parseStaleLimit(sf.maxStale); err != nil {
			return badUsage(fs, stderr, "%v", err)
		}
		if g.unknown, err = parseUnknownLimit(sf.maxUnknown); err != nil {
			return badUsage(fs, stderr, "%v", err)
		}
		g.divergent, g.secrets = sf.failOnDivergent, sf.failOnSecrets
		if g.secrets && secrets < 0 {
			fmt.Fprintf(stderr, "kbc stale: bundle %s has no %s (built by an older kbc): rebuild it to check for secrets\n", pos[0], bundle.SecretsJSON)
			return exitFailure
		}
	} else {
		ctx, stop := interrupted()
		defer stop()
		res, _, gg, code := compile(ctx, fs, sf, pos[0], nil, now, stderr)
		if code >= 0 {
			return code
		}
		printProblems(res, stderr)
		st, divergent, secrets, g = res.Staleness, res.Stats.Divergent, res.Stats.Secrets, gg
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
	return g.check(st, divergent, secrets, stderr)
}

// readReports reads a bundle's staleness report and counts its divergent
// copies and the credentials its build found (-1 when it has no secrets report).
func readReports(dir string) (*build.StalenessReport, int, int, error) {
	var st build.StalenessReport
	var dup build.DuplicateReport
	var sec build.SecretsReport
	noSecrets := false // a bundle from before the secrets report
	for name, v := range map[string]any{bundle.StalenessJSON: &st, bundle.DuplicatesJSON: &dup, bundle.SecretsJSON: &sec} {
		data, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(name)))
		if name == bundle.SecretsJSON && errors.Is(err, fs.ErrNotExist) {
			noSecrets = true
			continue
		}
		if err != nil {
			return nil, 0, 0, fmt.Errorf("bundle %s has no %s (built by an older kbc?): %v", dir, name, unwrapPathErr(err))
		}
		if err := json.Unmarshal(data, v); err != nil {
			return nil, 0, 0, fmt.Errorf("%s: %v", filepath.Join(dir, name), err)
		}
	}
	if noSecrets {
		return &st, len(dup.Divergent), -1, nil
	}
	return &st, len(dup.Divergent), sec.Total, nil
}
