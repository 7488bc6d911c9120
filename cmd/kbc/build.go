package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	iofs "io/fs"
	"os"
	"os/signal"
	"path"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// manifestSettings is every setting that shapes a bundle, as recorded in
// its manifest.
type manifestSettings struct {
	build.Settings
	Include     []string       `json:"include,omitempty"`
	Exclude     []string       `json:"exclude,omitempty"`
	MaxFileSize int64          `json:"max_file_size"`
	Duplicates  dedupe.Options `json:"duplicates"`
	Freshness   fresh.Policy   `json:"freshness"`
}

// sourceFlags are the flags of every command that compiles a source
// folder (build, stale). They override the config file.
type sourceFlags struct {
	fs               *flag.FlagSet
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

// checks are the checks of one run (--max-stale and the others).
type checks struct {
	stale, unknown     docLimit
	divergent, secrets bool
}

// options builds the pipeline options for src: defaults, then the config
// file at src's root, then the flags given on the command line.
func (sf *sourceFlags) options(src string) (build.Options, checks, error) {
	opts := build.DefaultOptions()
	var g checks
	set := map[string]bool{}
	sf.fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	dir, err := sources.OpenDir(src)
	if err != nil {
		return opts, g, fmt.Errorf("source %s: %v", src, unwrapPathErr(err))
	}
	cfg, err := build.LoadConfig(dir)
	dir.Close()
	if err != nil {
		return opts, g, err
	}
	if err := cfg.Apply(&opts); err != nil {
		return opts, g, err
	}
	opts.Walk.Include = append(opts.Walk.Include, sf.include...)
	opts.Walk.Exclude = append(opts.Walk.Exclude, sf.exclude...)
	if set["max-file-size"] || opts.Walk.MaxSize == 0 {
		n, err := build.ParseSize(sf.maxSize)
		if err != nil {
			return opts, g, fmt.Errorf("--max-file-size: %v", err)
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
		return opts, g, err
	}
	if set["dup-threshold"] {
		if sf.threshold <= 0 || sf.threshold > 1 {
			return opts, g, fmt.Errorf("--dup-threshold %g is not a Jaccard similarity in (0, 1]", sf.threshold)
		}
		opts.Dedupe.Threshold = sf.threshold
	}
	limit := cfg.Gates.MaxStale
	if set["max-stale"] {
		limit = sf.maxStale
	}
	if g.stale, err = parseStaleLimit(limit); err != nil {
		return opts, g, err
	}
	limit = cfg.Gates.MaxUnknown
	if set["max-unknown"] {
		limit = sf.maxUnknown
	}
	if g.unknown, err = parseUnknownLimit(limit); err != nil {
		return opts, g, err
	}
	g.divergent = sf.failOnDivergent
	if !set["fail-on-divergent"] && cfg.Gates.FailOnDivergent != nil {
		g.divergent = *cfg.Gates.FailOnDivergent
	}
	g.secrets = sf.failOnSecrets
	if !set["fail-on-secrets"] && cfg.Gates.FailOnSecrets != nil {
		g.secrets = *cfg.Gates.FailOnSecrets
	}
	return opts, g, nil
}

// check runs the checks over a build's reports; it prints one line per
// failed check and returns exitCheck, or exitOK.
func (g checks) check(st *build.StalenessReport, divergent, secrets int, stderr io.Writer) int {
	code := exitOK
	for _, msg := range []string{
		g.stale.check(st.Counts.StaleOrExpired(), st.Counts.Total),
		g.unknown.check(st.Counts.Unknown, st.Counts.Total),
		checkDivergent(g.divergent, divergent),
		checkSecrets(g.secrets, secrets),
	} {
		if msg != "" {
			fmt.Fprintln(stderr, paintFor(stderr, os.Getenv).fail("kbc: "+msg))
			code = exitCheck
		}
	}
	return code
}

// compile checks src and runs the pipeline over it, printing each bad
// input file as one line on stderr. It returns the exit code to stop with,
// or -1 to go on.
// With a session, compile uses and updates the build cache of its bundle
// folder (saved by writeBundle or, in watch mode, when watching stops).
func compile(ctx context.Context, fs *flag.FlagSet, sf *sourceFlags, src string, sess *session, now time.Time, stderr io.Writer) (*build.Result, build.Options, checks, int) {
	if st, err := os.Stat(src); err != nil || !st.IsDir() {
		if err == nil {
			err = errors.New("not a folder")
		}
		return nil, build.Options{}, checks{}, badUsage(fs, stderr, "source %s: %v", src, unwrapPathErr(err))
	}
	opts, g, err := sf.options(src)
	if err != nil {
		var pe *sources.Error
		if errors.As(err, &pe) {
			pe.Path = filepath.Join(src, pe.Path)
			fmt.Fprintln(stderr, pe.Error())
			return nil, opts, g, exitUsage
		}
		return nil, opts, g, badUsage(fs, stderr, "%v", err)
	}
	opts.Now = now
	opts.GitDir = src
	if sess != nil {
		opts.Cache = sess.cacheFor(stderr)
	}
	bar := newProgress(stderr)
	opts.Progress = bar.update
	// Every read goes through dir, which cannot be left by a symlink.
	dir, err := sources.OpenDir(src)
	if err != nil {
		bar.finish()
		fmt.Fprintf(stderr, "kbc %s: source %s: %v\n", fs.Name(), src, unwrapPathErr(err))
		return nil, opts, g, exitFailure
	}
	res, err := build.Run(ctx, dir, opts)
	dir.Close()
	bar.finish()
	if err != nil {
		fmt.Fprintf(stderr, "kbc %s: %v\n", fs.Name(), err)
		return nil, opts, g, exitFailure
	}
	return res, opts, g, -1
}

// session is what one kbc process keeps between builds of one bundle
// folder: the build cache and, in watch mode, the bundle it last wrote.
type session struct {
	out   string
	watch bool // keep the cache in memory and save it once, at the end

	cache *build.Cache

	// The source commit, when already asked of git for this build (watch
	// asks again for each rebuild, as commits may land while it runs).
	commit      string
	dirty       bool
	commitKnown bool
}

// toolKey names this kbc binary for the build cache and the up-to-date
// stamp: the version and the binary's own build ID (build.BinaryID), so
// that a changed binary with the same version string trusts neither.
func toolKey() string { return "kbc " + version + " " + build.BinaryID() }

// cacheFor returns the build cache: the one in memory when there is one,
// else the one on disk when this kbc binary made it, else a new one. A
// cache that cannot be read, or was made by another kbc binary, is
// reported once and replaced: it is never trusted. (Settings key the
// cached passages inside it, so a settings change re-splits pages without
// parsing them again.)
func (s *session) cacheFor(stderr io.Writer) *build.Cache {
	tool := toolKey()
	if s.cache.Fits(tool) {
		return s.cache
	}
	c, err := build.LoadCache(bundle.CacheDir(s.out))
	switch {
	case errors.Is(err, build.ErrNoCache):
		c = nil
	case err != nil:
		fmt.Fprintf(stderr, "kbc: build cache unreadable (%v); rebuilding it\n", err)
		c = nil
	case c != nil && !c.Fits(tool):
		fmt.Fprintf(stderr, "kbc: build cache %s was made by another kbc binary; rebuilding it\n", bundle.CacheDir(s.out))
		c = nil
	}
	if c == nil {
		c = build.NewCache(tool)
	}
	s.cache = c
	return c
}

// saveCache writes the build cache back when a build changed it.
func (s *session) saveCache(stderr io.Writer) {
	if s.cache != nil && s.cache.Changed() {
		if err := s.cache.Save(bundle.CacheDir(s.out)); err != nil {
			fmt.Fprintf(stderr, "kbc: could not save the build cache: %v\n", err)
		}
	}
}

// interrupted returns a context cancelled by Ctrl-C or SIGTERM.
func interrupted() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}

func printProblems(res *build.Result, stderr io.Writer) {
	for _, n := range res.Staleness.Notes {
		fmt.Fprintln(stderr, paintFor(stderr, os.Getenv).warn("kbc: warning: "+n))
	}
	for _, p := range res.Problems {
		fmt.Fprintln(stderr, p.Error())
	}
}

// writeBundle writes a build's bundle, reports and delta into the
// session's folder and returns its manifest and delta.
func writeBundle(sess *session, src string, res *build.Result, opts build.Options, builtAt time.Time, stderr io.Writer) (*bundle.Manifest, *bundle.Delta, error) {
	out := sess.out
	files, err := reportFiles(res)
	if err != nil {
		return nil, nil, err
	}
	commit, dirty := sess.commit, sess.dirty
	if !sess.commitKnown {
		commit, dirty = build.SourceCommit(src)
	}
	st := res.Stats
	in := &bundle.Input{
		Passages: res.Passages,
		Settings: manifestSettings{Settings: opts.Settings, Include: opts.Walk.Include, Exclude: opts.Walk.Exclude,
			MaxFileSize: opts.Walk.MaxSize, Duplicates: opts.Dedupe, Freshness: opts.Fresh},
		Tool:         "kbc " + version,
		SourceCommit: commit,
		SourceDirty:  dirty,
		BuiltAt:      builtAt,
		// The names and meanings of build --json's stats (see README, "Counts").
		Counts: map[string]int{
			"documents": st.Documents, "empty_documents": st.Empty, "skipped": st.Skipped,
			"warnings": st.Warnings, "boilerplate_dropped": st.BoilerplateDropped,
			"duplicates_removed": st.Duplicates, "divergent_copies": st.Divergent, "stale": st.Stale, "expired": st.Expired,
			"secrets_redacted": st.Secrets, "hidden_dropped": st.Hidden, "assistant_lints": st.Lints,
		},
		Files:   files,
		Catalog: true,
	}
	// Like mkdir -p for the folder that will hold the bundle.
	if err := os.MkdirAll(filepath.Dir(filepath.Clean(out)), 0o755); err != nil {
		return nil, nil, fmt.Errorf("cannot create the folder for %s: %v", out, unwrapPathErr(err))
	}
	// The bundle replaced: its manifest and the catalog of its passages
	// saved beside it, which is all the delta and the index update read.
	prior, err := bundle.ReadPrior(out)
	if err != nil {
		fmt.Fprintf(stderr, "kbc: the bundle in %s cannot be read (%v); the delta lists every passage as added\n", out, err)
		prior = nil
	}
	in.Prior = prior
	m, err := bundle.Write(out, in)
	if err != nil {
		return nil, nil, err
	}
	if !sess.watch {
		sess.saveCache(stderr)
	}
	var delta bundle.Delta
	data, err := os.ReadFile(filepath.Join(out, bundle.DeltaFile))
	if err == nil {
		err = json.Unmarshal(data, &delta)
	}
	return m, &delta, err
}

func runBuild(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("build", "build SRC -o OUT [flags]",
		"Build reads every Markdown, MDX and HTML file under SRC, cleans it, splits it into\n"+
			"passages along headings, keeps one passage per group of copies, dates every page\n"+
			"and writes the bundle folder OUT: manifest.json, passages.jsonl, the search index\n"+
			"and reports (staleness, duplicates, boilerplate). OUT is replaced only by a\n"+
			"complete new bundle; a failed build leaves an earlier one untouched. Settings\n"+
			"come from SRC/kbc.toml when present; flags override it. A failed check exits 3\n"+
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
	builtAt, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		return badUsage(fs, stderr, "%v", err)
	}
	sf.skipOutput(src, *out)
	start := time.Now()
	// A bundle whose inputs have not changed since it was built is left as
	// it is, as make would, once its files check out against its manifest.
	sess := &session{out: *out}
	sess.commit, sess.dirty = build.SourceCommit(src)
	sess.commitKnown = true
	var inputs string
	var walked []sources.File
	looked := time.Now()
	if opts, g, err := sf.options(src); err == nil && !*strict {
		extra := fmt.Sprintf("%s\x00%s %t\x00%s", toolKey(), sess.commit, sess.dirty, os.Getenv("SOURCE_DATE_EPOCH"))
		if dir, err := sources.OpenDir(src); err == nil {
			inputs, walked = build.InputsDigest(dir, opts, extra)
			code, ok := upToDate(*out, src, dir, inputs, walked, g, *asJSON, *verbose, start, stdout, stderr)
			dir.Close()
			if ok {
				return code
			}
		}
	}
	ctx, stop := interrupted()
	defer stop()
	res, opts, g, code := compile(ctx, fs, sf, src, sess, builtAt, stderr)
	if code >= 0 {
		return code
	}
	printProblems(res, stderr)
	if *strict && len(res.Problems) > 0 {
		fmt.Fprintf(stderr, "kbc build: %v\n", res.Strict())
		return exitFailure
	}
	m, delta, err := writeBundle(sess, src, res, opts, builtAt, stderr)
	if err != nil {
		fmt.Fprintf(stderr, "kbc build: %v\n", err)
		return exitFailure
	}
	sum := summary{Source: src, Out: *out, BundleID: m.BundleID, Stats: res.Stats,
		Added: len(delta.Added), Changed: len(delta.Changed), Removed: len(delta.Removed),
		BoilerplateTexts: len(res.Boilerplate), Staleness: res.Staleness.Counts,
		Bands: res.Duplicates.Bands, Rows: res.Duplicates.Rows, Threshold: res.Duplicates.Threshold,
		CatchAtThreshold: res.Duplicates.CatchAtThreshold, CatchAtHalf: res.Duplicates.CatchAtHalf,
		Seconds: time.Since(start).Seconds()}
	if inputs != "" {
		data, _ := json.Marshal(sum)
		st := &bundle.Stamp{Inputs: inputs, Read: looked, BundleID: m.BundleID, Manifest: bundle.ManifestHash(*out), Summary: data}
		for _, p := range res.Problems {
			st.Problems = append(st.Problems, p.Error())
		}
		for _, f := range build.Racy(walked, looked) {
			if h := sess.cache.FileHash(f.Path); h != "" {
				if st.Racy == nil {
					st.Racy = map[string]string{}
				}
				st.Racy[f.Path] = h
			}
		}
		if err := bundle.WriteStamp(*out, st); err != nil {
			fmt.Fprintf(stderr, "kbc build: could not record the build's inputs: %v\n", err)
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(sum)
	} else {
		sum.print(stdout, *verbose)
	}
	return g.check(res.Staleness, res.Stats.Divergent, res.Stats.Secrets, stderr)
}

// upToDate reports whether the bundle in out was built from exactly these
// inputs and still matches its manifest; if so it prints the earlier
// build's warnings and summary (no passage added, changed or removed),
// runs the checks on the bundle's reports judged now, and returns the exit
// code. Files changed within a second of the last look are not trusted
// by their size and time alone: their bytes must be those the last build
// read (Stamp.Racy), or the build runs.
func upToDate(out, src string, dir *sources.Dir, inputs string, walked []sources.File, g checks, asJSON, verbose bool, start time.Time, stdout, stderr io.Writer) (int, bool) {
	st := bundle.ReadStamp(out)
	if st == nil || st.Inputs != inputs || bundle.ManifestHash(out) != st.Manifest {
		return 0, false
	}
	for _, f := range build.Racy(walked, st.Read) {
		data, err := iofs.ReadFile(dir, f.Target)
		sum := sha256.Sum256(data)
		if err != nil || st.Racy[f.Path] != hex.EncodeToString(sum[:]) {
			return 0, false
		}
	}
	if bad, err := bundle.Verify(out); err != nil || len(bad) > 0 {
		return 0, false
	}
	var sum summary
	if json.Unmarshal(st.Summary, &sum) != nil {
		return 0, false
	}
	stale, divergent, secrets, err := readReports(out)
	if err != nil {
		return 0, false
	}
	now, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		return 0, false
	}
	for _, p := range st.Problems {
		fmt.Fprintln(stderr, p)
	}
	stale = stale.At(now)
	sum.Added, sum.Changed, sum.Removed = 0, 0, 0
	sum.Staleness, sum.UpToDate = stale.Counts, true
	sum.Seconds = time.Since(start).Seconds()
	if asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(sum)
	} else {
		sum.print(stdout, verbose)
	}
	return g.check(stale, divergent, secrets, stderr), true
}

// reportFiles renders a build's reports as bundle files.
func reportFiles(res *build.Result) (map[string][]byte, error) { return bundle.ReportFiles(res) }

// summary is what build prints when it is done.
type summary struct {
	Source           string             `json:"source"`
	Out              string             `json:"out"`
	BundleID         string             `json:"bundle_id"`
	Stats            build.Stats        `json:"stats"`
	BoilerplateTexts int                `json:"boilerplate_texts"`
	Staleness        build.StatusCounts `json:"staleness"`
	Bands            int                `json:"lsh_bands"`
	Rows             int                `json:"lsh_rows"`
	Threshold        float64            `json:"dup_threshold"`
	CatchAtThreshold float64            `json:"lsh_catch_at_threshold"`
	CatchAtHalf      float64            `json:"lsh_catch_at_0_5"`
	Added            int                `json:"added"`   // passages, against the bundle replaced
	Changed          int                `json:"changed"` // (see delta.json)
	Removed          int                `json:"removed"`
	UpToDate         bool               `json:"up_to_date,omitempty"` // nothing changed: OUT was left as it was
	Seconds          float64            `json:"seconds"`
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
	fmt.Fprintf(w, "  documents    %d read, %d skipped (%s)", st.Documents, st.Skipped, sizeString(st.SourceBytes))
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

func sizeString(n int64) string {
	switch {
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f kB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d B", n)
}

func unwrapPathErr(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}
