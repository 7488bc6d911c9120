package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// manifestSettings is every setting that shapes a bundle, as recorded in
// its manifest.
type manifestSettings struct {
	build.Settings
	Include     []string `json:"include,omitempty"`
	Exclude     []string `json:"exclude,omitempty"`
	MaxFileSize int64    `json:"max_file_size"`
}

func runBuild(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("build", "build SRC -o OUT [flags]",
		"Build reads every Markdown, MDX and HTML file under SRC, cleans it, splits it into\n"+
			"passages along headings and writes the bundle folder OUT: manifest.json,\n"+
			"passages.jsonl, passages.schema.json and a search index. OUT is replaced only by\n"+
			"a complete new bundle; a failed build leaves an earlier one untouched.",
		"kbc build docs -o out/docs-bundle --exclude 'drafts/**'", stderr)
	def := build.DefaultSettings()
	out := fs.String("o", "", "bundle folder to write (required)")
	fs.StringVar(out, "out", "", "same as -o")
	strict := fs.Bool("strict", false, "treat any bad input file as fatal: exit 1, write no bundle")
	var include, exclude multiFlag
	fs.Var(&include, "include", "only read files matching this glob (repeatable; \"**\" spans folders)")
	fs.Var(&exclude, "exclude", "skip files and folders matching this glob (repeatable)")
	maxSize := fs.String("max-file-size", "10MB", "skip files larger than this (B, kB, MB)")
	aim := fs.Int("aim-tokens", def.AimTokens, "passage size to aim for, in tokens")
	maxTok := fs.Int("max-tokens", def.MaxTokens, "largest passage, in tokens")
	asJSON := fs.Bool("json", false, "print the summary as JSON")
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one source folder, got %d arguments", len(pos))
	}
	if *out == "" {
		return badUsage(fs, stderr, "missing -o OUT")
	}
	src := pos[0]
	if st, err := os.Stat(src); err != nil || !st.IsDir() {
		if err == nil {
			err = errors.New("not a folder")
		}
		return badUsage(fs, stderr, "source %s: %v", src, unwrapPathErr(err))
	}
	limit, err := parseSize(*maxSize)
	if err != nil {
		return badUsage(fs, stderr, "-max-file-size: %v", err)
	}
	builtAt, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		return badUsage(fs, stderr, "%v", err)
	}

	opts := build.DefaultOptions()
	opts.Settings.AimTokens, opts.Settings.MaxTokens = *aim, *maxTok
	opts.Walk = sources.WalkOptions{Include: include, Exclude: exclude, MaxSize: limit}
	if err := opts.Settings.Validate(); err != nil {
		return badUsage(fs, stderr, "%v", err)
	}
	// Never read our own output when OUT lies inside SRC.
	if rel, err := filepath.Rel(src, *out); err == nil && rel != "." && !strings.HasPrefix(rel, "..") {
		rel = filepath.ToSlash(rel)
		opts.Walk.Exclude = append(opts.Walk.Exclude, rel, "."+filepath.Base(rel)+".tmp-*")
	}
	bar := newProgress(stderr)
	opts.Progress = bar.update

	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	start := time.Now()
	res, err := build.Run(ctx, os.DirFS(src), opts)
	bar.finish()
	if err != nil {
		fmt.Fprintf(stderr, "kbc build: %v\n", err)
		return exitFailure
	}
	for _, p := range res.Problems {
		fmt.Fprintln(stderr, p.Error())
	}
	if *strict && len(res.Problems) > 0 {
		fmt.Fprintf(stderr, "kbc build: %v\n", res.Strict())
		return exitFailure
	}
	commit, dirty := build.SourceCommit(src)
	counts := map[string]int{
		"documents":           res.Stats.Documents,
		"empty_documents":     res.Stats.Empty,
		"passages":            res.Stats.Passages,
		"tokens":              res.Stats.Tokens,
		"skipped":             res.Stats.Skipped,
		"warnings":            res.Stats.Warnings,
		"boilerplate_dropped": res.Stats.BoilerplateDropped,
	}
	in := &bundle.Input{
		Passages:     res.Passages,
		Settings:     manifestSettings{Settings: opts.Settings, Include: include, Exclude: exclude, MaxFileSize: limit},
		Tool:         "kbc " + version,
		SourceCommit: commit,
		SourceDirty:  dirty,
		BuiltAt:      builtAt,
		Counts:       counts,
	}
	m, err := bundle.Write(*out, in)
	if err != nil {
		fmt.Fprintf(stderr, "kbc build: %v\n", err)
		return exitFailure
	}
	sum := summary{Source: src, Out: *out, BundleID: m.BundleID, Stats: res.Stats,
		BoilerplateTexts: len(res.Boilerplate), Seconds: time.Since(start).Seconds()}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.Encode(sum)
		return exitOK
	}
	sum.print(stdout)
	return exitOK
}

// summary is what build prints when it is done.
type summary struct {
	Source           string      `json:"source"`
	Out              string      `json:"out"`
	BundleID         string      `json:"bundle_id"`
	Stats            build.Stats `json:"stats"`
	BoilerplateTexts int         `json:"boilerplate_texts"`
	Seconds          float64     `json:"seconds"`
}

func (s summary) print(w io.Writer) {
	st := s.Stats
	fmt.Fprintf(w, "built %s -> %s\n", s.Source, s.Out)
	fmt.Fprintf(w, "  documents    %d read, %d skipped (%s)", st.Documents, st.Skipped, sizeString(st.SourceBytes))
	if st.Empty > 0 {
		fmt.Fprintf(w, "; %d with front matter only", st.Empty)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "  passages     %d", st.Passages)
	if st.SplitPassages > 0 {
		fmt.Fprintf(w, " (%d cut from blocks over the budget)", st.SplitPassages)
	}
	fmt.Fprintf(w, "\n  tokens       %d\n", st.Tokens)
	fmt.Fprintf(w, "  boilerplate  %d blocks dropped (%d distinct texts)\n", st.BoilerplateDropped, s.BoilerplateTexts)
	fmt.Fprintf(w, "  warnings     %d\n", st.Warnings)
	fmt.Fprintf(w, "  bundle id    %s\n", s.BundleID)
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

// parseSize reads sizes like "10MB", "512kB", "2048" (bytes).
func parseSize(s string) (int64, error) {
	t := strings.TrimSpace(strings.ToUpper(s))
	mult := int64(1)
	for _, u := range []struct {
		suffix string
		mult   int64
	}{{"GB", 1 << 30}, {"MB", 1 << 20}, {"KB", 1 << 10}, {"B", 1}} {
		if strings.HasSuffix(t, u.suffix) {
			t, mult = strings.TrimSpace(strings.TrimSuffix(t, u.suffix)), u.mult
			break
		}
	}
	n, err := strconv.ParseFloat(t, 64)
	if err != nil || n <= 0 {
		return 0, fmt.Errorf("bad size %q (want e.g. 10MB)", s)
	}
	return int64(n * float64(mult)), nil
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
