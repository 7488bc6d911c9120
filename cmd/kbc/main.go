// Command kbc compiles a documentation folder into a retrieval bundle:
// clean, dated passages with a BM25 search index and a manifest of hashes.
//
// Usage:
//
//	kbc build SRC -o OUT [--strict] [--include GLOB] [--exclude GLOB]
//	kbc watch SRC -o OUT [--debounce 150ms] [--serve 127.0.0.1:PORT] [--json]
//	kbc query OUT "question" [-k 10] [--json] [--audience NAME]... [--exclude-stale]
//	kbc context OUT "question" --budget TOKENS [--json] [--lambda 0.7]
//	kbc stale SRC|OUT [--json] [--max-stale N|N%] [--fail-on-divergent]
//	kbc diff A B [--json]
//	kbc eval --qrels QRELS --run RUN [--json] [--min MEASURE=VALUE]...
//	kbc eval OUT --queries QUERIES.tsv --qrels QRELS [--level section|page] [--baseline OLD]
//	kbc eval OUT --self [--json]
//	kbc verify OUT [--json]
//	kbc publish OUT DEST [--tag NAME]... [--json]
//	kbc pull SRC DIR [--tag NAME | --id ID] [--json]
//	kbc versions STORE [--json]
//	kbc prune STORE --keep N [--json]
//	kbc sync OUT [DATABASE] [--schema kbc] [--wait DURATION] [--embed-cmd CMD]
//	kbc help [COMMAND | commands | config | bundle | checks]
//	kbc version [--json]
//	kbc completion bash|zsh|fish
//
// Run "kbc COMMAND --help" for the flags of one command. Exit codes: 0 ok,
// 1 failure, 2 bad usage, 3 a check failed.
package main

import (
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"strings"
)

// version is the tool version recorded in every bundle manifest.
const version = "0.1.0"

// Exit codes shared by every command.
const (
	exitOK      = 0
	exitFailure = 1
	exitUsage   = 2
)

func main() {
	tuneGC(os.Args[1:])
	// KBC_CPUPROFILE=FILE writes a CPU profile of the run, for go tool
	// pprof (see DEVELOPERS.md).
	if p := os.Getenv("KBC_CPUPROFILE"); p != "" {
		if f, err := os.Create(p); err == nil && pprof.StartCPUProfile(f) == nil {
			code := run(os.Args[1:], os.Stdout, os.Stderr)
			pprof.StopCPUProfile()
			f.Close()
			os.Exit(code)
		}
	}
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// command is one sub-command: its name, a line for the overview, and the
// function that runs it with the arguments after its name.
type command struct {
	name, summary string
	run           func(args []string, stdout, stderr io.Writer) int
}

func commands() []command {
	return []command{
		{"build", "compile a docs folder into a bundle", runBuild},
		{"watch", "rebuild a bundle whenever a page changes", runWatch},
		{"query", "search a bundle", runQuery},
		{"context", "assemble a cited, budgeted context for a question", runContext},
		{"stale", "report stale pages of a docs folder or bundle", runStale},
		{"diff", "list passages added, changed and removed between two bundles", runDiff},
		{"eval", "measure retrieval quality against judged questions", runEval},
		{"verify", "re-hash a bundle's files against its manifest", runVerify},
		{"publish", "upload a bundle to a folder, S3 or OCI store", runPublish},
		{"pull", "download and verify a bundle from a store", runPull},
		{"versions", "list the bundles in a store", runVersions},
		{"prune", "remove old bundles from a store", runPrune},
		{"sync", "bring a PostgreSQL database to a bundle's passages", runSync},
		{"completion", "print a shell completion script (bash, zsh, fish)", runCompletion},
		{"help", "explain a command or a topic: commands, config, bundle, checks", runHelp},
		{"version", "print the version, the commit and the Go version", runVersion},
	}
}

func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stderr)
		return exitUsage
	}
	switch args[0] {
	case "-h", "-help", "--help":
		usage(stdout)
		return exitOK
	case "-version", "--version":
		args[0] = "version"
	}
	for _, c := range commands() {
		if c.name == args[0] {
			return c.run(args[1:], stdout, stderr)
		}
	}
	var names []string
	for _, c := range commands() {
		names = append(names, c.name)
	}
	if near := nearest(args[0], names); near != "" {
		fmt.Fprintf(stderr, "kbc: unknown command %q (did you mean %s?)\nRun \"kbc help\" for the commands.\n", args[0], near)
		return exitUsage
	}
	fmt.Fprintf(stderr, "kbc: unknown command %q\nRun \"kbc help\" for the commands.\n", args[0])
	return exitUsage
}

func usage(w io.Writer) {
	fmt.Fprintf(w, "kbc compiles a documentation folder into a retrieval bundle.\n\nUsage: kbc COMMAND [arguments]\n\nCommands:\n")
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-10s %s\n", c.name, c.summary)
	}
	fmt.Fprintf(w, "\nExamples:\n  kbc build examples/handbook -o out && kbc query out \"door seal check interval\" --audience drivers\n"+
		"  kbc stale docs --max-stale 10%%\n\nRun \"kbc COMMAND --help\" for the flags of one command, \"kbc help TOPIC\" for a topic\n"+
		"(%s).\n", strings.Join(topicNames(), ", "))
}
