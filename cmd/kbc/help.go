package main

import (
	"encoding/json"
	"fmt"
	"io"
	"runtime/debug"
	"strings"
)

// helpTopic is one page of "kbc help TOPIC" beyond the commands' own help.
type helpTopic struct {
	name, summary, text string
}

func helpTopics() []helpTopic {
	return []helpTopic{
		{"commands", "every command, one line each", ""}, // usage()
		{"config", "the kbc.toml file: where it is found and what it holds", configHelp},
		{"bundle", "what a bundle folder holds and what its counts mean", bundleHelp},
		{"checks", "the checks that exit 3, for CI", checksHelp},
	}
}

const configHelp = `kbc reads one optional config file: the one --config names, else the nearest
kbc.toml from SRC up to the root of its repository. Every setting has a default,
so "kbc build DIR" works with none; flags given on the command line win over the
file. A bad line is named as kbc.toml:LINE.

  [build]
  passage_tokens = 300          # passage size to aim for (--passage-tokens)
  passage_max_tokens = 512      # largest passage (--passage-max-tokens)
  exclude = ["drafts/**"]       # globs to skip (--exclude)
  max_file_size = "10MB"        # larger files are skipped (--max-file-size)

  [duplicates]
  threshold = 0.8               # Jaccard similarity at which passages are copies
  hashes = 128                  # MinHash values per passage
  shingle = 5                   # words per shingle

  [freshness]
  date_fields = ["updated", "date"]
  default_max_age = "365d"
  due_soon = "30d"

  [[freshness.max_age]]         # the first matching rule wins
  pattern = "safety/**"
  max_age = "180d"

  [checks]                      # see "kbc help checks"
  max_stale = "10%"
  max_unknown = "5%"
  fail_on_divergent = true
  fail_on_secrets = true

Example:
  kbc build docs -o out --config ci/kbc.toml
`

const bundleHelp = `A bundle is the folder "kbc build SRC -o OUT" writes. Nothing sees half of one:
it is written beside OUT and swapped in whole.

  manifest.json          format, bundle id, settings, source commit, build time,
                         counts, SHA-256 and size of every other file
  passages.jsonl         one passage per line (JSON Lines), by path, in reading order
  passages.schema.json   JSON Schema of one line
  delta.json             passage ids added, changed and removed since the last build
  index/                 the search index (BM25)
  reports/               staleness, duplicates, boilerplate, secrets, hidden text,
                         each as .json and .md

The bundle id is the SHA-256 of passages.jsonl. Counts have one name everywhere
(build --json "stats", the manifest's "counts", the reports); "stale" is the
documents whose status is stale, and "expired" those past their expiry date.

Examples:
  kbc verify out
  kbc query out "door seal check interval" -k 3
`

const checksHelp = `A check fails the run with exit code 3 after the bundle and its reports are
written, so CI can keep them for a look. Each failed check prints one line:

  kbc: check max-stale failed: 7 of 40 documents stale or expired (17.5%), limit 5 (over by 2)

  --max-stale N|N%      more than N documents (or N% of them) stale or expired
  --max-unknown N|N%    more than N documents (or N% of them) with no usable date
  --fail-on-divergent   copies of a passage differ in numbers, versions, dates or units
  --fail-on-secrets     a credential was found in the sources (rotate it)

build and stale take them, or the [checks] section of kbc.toml. kbc eval has its
own: --min MEASURE=VALUE and --baseline OLD_BUNDLE.

Exit codes: 0 ok, 1 failure, 2 bad usage, 3 a check failed.

Examples:
  kbc build docs -o out --max-stale 10% --fail-on-secrets
  kbc stale out --max-unknown 5
`

// runHelp prints the overview, a topic, or a command's own --help.
func runHelp(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stdout)
		return exitOK
	}
	if len(args) > 1 {
		fmt.Fprintf(stderr, "kbc help: want one topic or command, got %d\nRun \"kbc help\" for the list.\n", len(args))
		return exitUsage
	}
	name := args[0]
	if name == "commands" {
		usage(stdout)
		return exitOK
	}
	for _, t := range helpTopics() {
		if t.name == name {
			io.WriteString(stdout, t.text)
			return exitOK
		}
	}
	for _, c := range commands() {
		if c.name == name && c.name != "help" {
			return c.run([]string{"--help"}, stdout, stderr)
		}
	}
	fmt.Fprintf(stderr, "kbc help: no command or topic %q (topics: %s)\nRun \"kbc help\" for the commands.\n", name, strings.Join(topicNames(), ", "))
	return exitUsage
}

func topicNames() []string {
	var out []string
	for _, t := range helpTopics() {
		out = append(out, t.name)
	}
	return out
}

// buildInfo is what "kbc version" prints.
type buildInfo struct {
	Version  string `json:"version"`
	Revision string `json:"revision,omitempty"` // the VCS commit kbc was built from
	Modified bool   `json:"modified,omitempty"` // the working tree had changes
	Go       string `json:"go"`
}

func readBuildInfo() buildInfo {
	bi := buildInfo{Version: version}
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return bi
	}
	bi.Go = info.GoVersion
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			bi.Revision = s.Value
		case "vcs.modified":
			bi.Modified = s.Value == "true"
		}
	}
	return bi
}

func runVersion(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("version", "version [--json]",
		"Version prints kbc's version, the commit it was built from (when the build\n"+
			"recorded one) and the Go version that compiled it.",
		"kbc version\nkbc version --json", stderr)
	asJSON := fs.Bool("json", false, "print the version as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) > 0 {
		return badUsage(fs, stderr, "takes no arguments")
	}
	bi := readBuildInfo()
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(bi)
		return exitOK
	}
	fmt.Fprintf(stdout, "kbc %s\n", bi.Version)
	rev := "unknown (not built from a VCS checkout)"
	if bi.Revision != "" {
		rev = bi.Revision
		if bi.Modified {
			rev += " (with uncommitted changes)"
		}
	}
	fmt.Fprintf(stdout, "revision %s\n", rev)
	fmt.Fprintf(stdout, "go       %s\n", orDash(bi.Go))
	return exitOK
}
