package main

import (
	"encoding/json"
	"fmt"
	"io"

	"github.com/kbc-project/kbc/bundle"
)

func runVerify(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("verify", "verify OUT [--json]",
		"Verify re-hashes every file of the bundle in OUT against its manifest and names\n"+
			"each file that is missing, extra or changed. Exit 1 on any mismatch.",
		"kbc verify out\n"+
			"kbc verify /srv/assistant/bundle --json", stderr)
	asJSON := fs.Bool("json", false, "print the mismatches as a JSON array")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one bundle folder")
	}
	bad, err := bundle.Verify(pos[0])
	if err != nil {
		fmt.Fprintf(stderr, "kbc verify: %s\n", bundleProblem("verify", pos[0], err))
		return exitFailure
	}
	if *asJSON {
		if bad == nil {
			bad = []bundle.Mismatch{}
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(bad)
	} else {
		for _, m := range bad {
			fmt.Fprintf(stdout, "%s: %s\n", m.File, m.Problem)
		}
	}
	if len(bad) > 0 {
		fmt.Fprintf(stderr, "kbc verify: %d file(s) do not match the manifest\n", len(bad))
		return exitFailure
	}
	if !*asJSON {
		fmt.Fprintf(stdout, "ok: every file matches the manifest\n")
	}
	return exitOK
}
