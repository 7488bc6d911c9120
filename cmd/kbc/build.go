package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle/compile"
	"github.com/kbc-project/kbc/sources"
)

// sourceFlags are the flags of every command that compiles a source
// folder (build, watch, stale). They override the config file.
type sourceFlags struct {
	fs               *flag.FlagSet
	config           string
	include, exclude multiFlag
	maxSize          string
	aim, maxTok      int
	threshold        float64
	maxStale         string
	maxUnknown       string
	failOnDivergent  bool
	failOnSecrets    bool
}

func addSourceFlags(fs *flag.FlagSet) *sourceFlags {
	def := build.DefaultOptions()
	sf := &sourceFlags{fs: fs}
	fs.StringVar(&sf.config, "config", "", "read the settings from `FILE` (default: the nearest kbc.toml from SRC up to the repository root)")
	fs.Var(&sf.include, "include", "only read files matching this `GLOB` (repeatable; \"**\" spans folders)")
	fs.Var(&sf.exclude, "exclude", "skip files and folders matching this `GLOB` (repeatable)")
	fs.StringVar(&sf.maxSize, "max-file-size", "10MB", "skip files larger than `SIZE` (B, kB, MB)")
	fs.IntVar(&sf.aim, "passage-tokens", def.Settings.AimTokens, "passage size to aim for, in `TOKENS`")
	fs.IntVar(&sf.maxTok, "passage-max-tokens", def.Settings.MaxTokens, "largest passage, in `TOKENS`")
	addDeprecated(fs, "aim-tokens", "passage-tokens")
	addDeprecated(fs, "max-tokens", "passage-max-tokens")
	fs.Float64Var(&sf.threshold, "dup-threshold", def.Dedupe.Threshold, "Jaccard similarity at which passages count as copies")
	fs.StringVar(&sf.maxStale, "max-stale", "", "check: exit 3 when more than `N` documents (or N% of them) are stale or expired")
	fs.StringVar(&sf.maxUnknown, "max-unknown", "", "check: exit 3 when more than `N` documents (or N% of them) have no usable date")
	fs.BoolVar(&sf.failOnDivergent, "fail-on-divergent", false, "check: exit 3 when copies of a passage differ in numbers, versions, dates or units")
	fs.BoolVar(&sf.failOnSecrets, "fail-on-secrets", false, "check: exit 3 when a credential was found in the sources (see reports/secrets.md)")
	return sf
}

// skipOutput keeps the bundle folder out, its cache and its temporary
// siblings from being read as sources when out lies inside src. It
// returns out's slash path relative to src, or "" when out is elsewhere.
func (sf *sourceFlags) skipOutput(src, out string) string {
	rel, err := filepath.Rel(src, out)
	if err != nil || rel == "." || strings.HasPrefix(rel, "..") {
		return ""
	}
	rel = filepath.ToSlash(rel)
	sf.exclude = append(sf.exclude, rel, rel+".cache", "."+path.Base(rel)+".tmp-*")
	return rel
}

// set returns the names of the flags given on the command line.
func (sf *sourceFlags) set() map[string]bool {
	set := map[string]bool{}
	sf.fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	return set
}

// config loads the configuration for src (--config, else the nearest
// kbc.toml), names the file used on stderr, and applies the flags given
// on the command line over it. It prints what went wrong and returns the
// exit code to stop with, or -1 to go on.
func (sf *sourceFlags) configFor(src string, stderr io.Writer) (*compile.Config, int) {
	if st, err := os.Stat(src); err != nil || !st.IsDir() {
		if err == nil {
			err = errors.New("not a folder")
		}
		return nil, badUsage(sf.fs, stderr, "source %s: %v", src, sources.UnwrapPath(err))
	}
	cfg, err := sf.load(src)
	if err != nil {
		var pe *sources.Error
		if errors.As(err, &pe) {
			fmt.Fprintf(stderr, "kbc %s: %s\n", sf.fs.Name(), pe.Error())
			return nil, exitUsage
		}
		return nil, badUsage(sf.fs, stderr, "%v", err)
	}
	if cfg.Path != "" {
		fmt.Fprintf(stderr, "kbc: config %s\n", cfg.Path)
	}
	for _, n := range cfg.Notes {
		fmt.Fprintf(stderr, "kbc: %s\n", n)
	}
	return cfg, -1
}

// load loads the configuration for src and applies the flags over it,
// printing nothing. Errors in the file are *sources.Error.
func (sf *sourceFlags) load(src string) (*compile.Config, error) {
	cfg, err := compile.LoadConfig(src, sf.config)
	if err != nil {
		return nil, err
	}
	return cfg, sf.apply(cfg)
}

// apply sets the options and checks the flags given on the command line
// name over those of the config file.
func (sf *sourceFlags) apply(cfg *compile.Config) error {
	opts, set := &cfg.Options, sf.set()
	opts.Walk.Include = append(opts.Walk.Include, sf.include...)
	opts.Walk.Exclude = append(opts.Walk.Exclude, sf.exclude...)
	if set["max-file-size"] || opts.Walk.MaxSize == 0 {
		n, err := build.ParseSize(sf.maxSize)
		if err != nil {
			return fmt.Errorf("--max-file-size: %v", err)
		}
		opts.Walk.MaxSize = n
	}
	if set["passage-tokens"] {
		opts.Settings.AimTokens = sf.aim
	}
	if set["passage-max-tokens"] {
		opts.Settings.MaxTokens = sf.maxTok
	}
	if err := opts.Settings.Validate(); err != nil {
		return err
	}
	if set["dup-threshold"] {
		if sf.threshold <= 0 || sf.threshold > 1 {
			return fmt.Errorf("--dup-threshold %g is not a Jaccard similarity in (0, 1]", sf.threshold)
		}
		opts.Dedupe.Threshold = sf.threshold
	}
	return sf.applyChecks(&cfg.Checks)
}

// applyChecks sets the checks the flags given on the command line name.
func (sf *sourceFlags) applyChecks(c *build.Checks) error {
	set := sf.set()
	for name, v := range map[string]struct {
		text string
		dst  *build.Limit
	}{"max-stale": {sf.maxStale, &c.MaxStale}, "max-unknown": {sf.maxUnknown, &c.MaxUnknown}} {
		if !set[name] {
			continue
		}
		l, err := build.ParseLimit(v.text)
		if err != nil {
			return fmt.Errorf("--%s: %v", name, err)
		}
		*v.dst = l
	}
	if set["fail-on-divergent"] {
		c.FailOnDivergent = sf.failOnDivergent
	}
	if set["fail-on-secrets"] {
		c.FailOnSecrets = sf.failOnSecrets
	}
	return nil
}

// interrupted returns a context cancelled by Ctrl-C or SIGTERM.
func interrupted() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}

// warnTo returns a compile.Job's Warn that prints each line on stderr.
func warnTo(stderr io.Writer) func(string) {
	return func(msg string) { fmt.Fprintf(stderr, "kbc: %s\n", msg) }
}

func printProblems(res *build.Result, stderr io.Writer) {
	for _, n := range res.Staleness.Notes {
		fmt.Fprintln(stderr, paintFor(stderr, os.Getenv).warn("kbc: warning: "+n))
	}
	for _, p := range res.Problems {
		fmt.Fprintln(stderr, p.Error())
	}
}

func runBuild(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("build", "build SRC -o OUT [flags]",
		"Build reads every Markdown, MDX and HTML file under SRC, cleans it, splits it into\n"+
			"passages along headings, keeps one passage per group of copies, dates every page\n"+
			"and writes the bundle folder OUT: manifest.json, passages.jsonl, the search index\n"+
			"and reports (staleness, duplicates, boilerplate). OUT is replaced only by a\n"+
			"complete new bundle; a failed build leaves an earlier one untouched. Settings\n"+
			"come from --config FILE, else from the nearest kbc.toml in SRC or above it up to\n"+
			"the repository root (named on stderr); flags override it. A failed check exits 3\n"+
			"after the bundle is written.",
		"kbc build docs -o out/docs-bundle --exclude 'drafts/**' --max-stale 10%\n"+
			"kbc build docs -o out/docs-bundle --strict --fail-on-secrets --json", stderr)
	out := addOutFlag(fs)
	strict := fs.Bool("strict", false, "treat any bad input file as fatal: exit 1, write no bundle")
	asJSON := fs.Bool("json", false, "print the summary as JSON")
	verbose := fs.Bool("v", false, "also print the near-copy search's LSH banding in the summary")
	fs.Var(aliasFlag{fs.Lookup("v").Value, "v"}, "verbose", "same as -v")
	sf := addSourceFlags(fs)
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	src, code := srcAndOut(fs, pos, *out, stderr)
	if code >= 0 {
		return code
	}
	epoch := os.Getenv("SOURCE_DATE_EPOCH")
	builtAt, err := buildTime(epoch, time.Now)
	if err != nil {
		return badUsage(fs, stderr, "%v", err)
	}
	sf.skipOutput(src, *out)
	cfg, code := sf.configFor(src, stderr)
	if code >= 0 {
		return code
	}
	start := time.Now()
	ctx, stop := interrupted()
	defer stop()
	bar := newProgress(stderr)
	res, err := compile.Build(ctx, compile.Job{Src: src, Out: *out, Config: cfg, Now: builtAt, FixedTime: epoch != "",
		Tool: "kbc " + version, Strict: *strict, Progress: bar.update, Warn: warnTo(stderr)})
	bar.finish()
	if res != nil {
		if res.Build != nil {
			printProblems(res.Build, stderr)
		} else {
			for _, p := range res.Problems {
				fmt.Fprintln(stderr, p)
			}
		}
	}
	if errors.Is(err, compile.ErrStrict) {
		fmt.Fprintf(stderr, "kbc build: %v\n", res.Build.Strict())
		return exitFailure
	}
	if err != nil {
		fmt.Fprintf(stderr, "kbc build: %v\n", err)
		return exitFailure
	}
	sum := summary{Source: src, Out: *out, BundleID: res.BundleID, Summary: res.Summary,
		UpToDate: res.UpToDate, Seconds: time.Since(start).Seconds()}
	if res.Delta != nil {
		sum.Added, sum.Changed, sum.Removed = len(res.Delta.Added), len(res.Delta.Changed), len(res.Delta.Removed)
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(sum)
	} else {
		sum.print(stdout, *verbose)
	}
	return printFailures(res.Failures, stderr)
}

// summary is what build prints when it is done.
type summary struct {
	Source          string  `json:"source"`
	Out             string  `json:"out"`
	BundleID        string  `json:"bundle_id"`
	compile.Summary         // the counts (inline in the JSON)
	Added           int     `json:"added"`   // passages, against the bundle replaced
	Changed         int     `json:"changed"` // (see delta.json)
	Removed         int     `json:"removed"`
	UpToDate        bool    `json:"up_to_date,omitempty"` // nothing changed: OUT was left as it was
	Seconds         float64 `json:"seconds"`
}

// print writes the summary for people; verbose (-v) adds the LSH banding
// line, which only someone tuning the duplicate search needs.
func (s summary) print(w io.Writer, verbose bool) {
	st := s.Stats
	p := paintFor(w, os.Getenv)
	if s.UpToDate {
		fmt.Fprintf(w, "%s: %s -> %s (no input changed; the bundle was checked and left as it was)\n", p.strong("up to date"), s.Source, s.Out)
	} else {
		fmt.Fprintf(w, "%s %s -> %s\n", p.strong("built"), s.Source, s.Out)
	}
	fmt.Fprintf(w, "  documents    %d read, %d skipped (%s)", st.Documents, st.Skipped, sources.SizeString(st.SourceBytes))
	if st.Reused > 0 {
		fmt.Fprintf(w, "; %d unchanged, taken from the cache", st.Reused)
	}
	if st.Empty > 0 {
		fmt.Fprintf(w, "; %d with front matter only", st.Empty)
	}
	fmt.Fprintf(w, "\n  passages     %d", st.Passages)
	if st.SplitPassages > 0 {
		fmt.Fprintf(w, " (%d cut from blocks over the budget)", st.SplitPassages)
	}
	fmt.Fprintf(w, "\n  tokens       %d\n", st.Tokens)
	fmt.Fprintf(w, "  duplicates   %d copies folded into their canonical passage", st.Duplicates)
	if st.Divergent > 0 {
		fmt.Fprintf(w, "; %d divergent", st.Divergent)
	}
	if verbose {
		fmt.Fprintf(w, "\n  near copies  Jaccard >= %g; LSH %d bands x %d rows catches %.1f%% of pairs at %g, %.1f%% at 0.5",
			s.Threshold, s.Bands, s.Rows, 100*s.CatchAtThreshold, s.Threshold, 100*s.CatchAtHalf)
	}
	fmt.Fprintf(w, "\n  boilerplate  %d blocks dropped (%d distinct texts)\n", st.BoilerplateDropped, s.BoilerplateTexts)
	c := s.Staleness
	fmt.Fprintf(w, "  freshness    %d fresh, %d due soon, %d stale, %d expired\n", c.Fresh, c.DueSoon, c.Stale, c.Expired)
	if st.Secrets > 0 || st.Hidden > 0 || st.Lints > 0 {
		fmt.Fprintf(w, "  safety       %d secrets redacted, %d hidden characters or elements dropped, %d lints (reports/secrets.md, reports/hidden.md)\n", st.Secrets, st.Hidden, st.Lints)
	}
	fmt.Fprintf(w, "  warnings     %d\n", st.Warnings)
	fmt.Fprintf(w, "  bundle id    %s\n", s.BundleID)
	fmt.Fprintf(w, "  delta        %d added, %d changed, %d removed\n", s.Added, s.Changed, s.Removed)
	fmt.Fprintf(w, "  time         %.2fs\n", s.Seconds)
}

// buildTime returns the build time: SOURCE_DATE_EPOCH when set, else now.
// The reproducible-builds convention (reproducible-builds.org/specs/
// source-date-epoch) defines the variable as a decimal count of seconds
// since the Unix epoch and asks that a malformed value stop the build.
func buildTime(epoch string, now func() time.Time) (time.Time, error) {
	if epoch == "" {
		return now().UTC().Truncate(time.Second), nil
	}
	n, err := strconv.ParseInt(epoch, 10, 64)
	if err != nil || n < 0 {
		return time.Time{}, fmt.Errorf("SOURCE_DATE_EPOCH=%q is not a whole number of seconds since 1970-01-01", epoch)
	}
	return time.Unix(n, 0).UTC(), nil
}
