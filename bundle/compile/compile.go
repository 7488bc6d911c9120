package compile

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// Job is one compilation of Src into Out.
type Job struct {
	Src, Out string
	// Config is the effective configuration (LoadConfig, then the
	// caller's overrides); nil means LoadConfig(Src, "").
	Config *Config
	// Now is the build time: the instant documents are judged at and the
	// manifest's built_at. The zero time means the clock, truncated to the
	// second. Set FixedTime when Now comes from SOURCE_DATE_EPOCH: the
	// time is then an input of the build, like the files.
	Now       time.Time
	FixedTime bool
	// Tool names the program in the manifest, e.g. "kbc v0.3.0". With the
	// running binary's build ID it keys the build cache and the record of
	// inputs, so that another binary trusts neither.
	Tool string
	// Strict makes any bad input file fatal: Build returns ErrStrict and
	// writes nothing.
	Strict bool
	// Force skips the up-to-date check: the bundle is built and written
	// even when no input changed.
	Force bool
	// Session keeps the build cache in memory between builds of Out
	// (kbc watch); the caller saves it with Session.Save. Nil loads the
	// cache from disk and saves it after the build.
	Session *Session
	// Progress, when set, is called as documents finish (see
	// build.Options.Progress).
	Progress func(done, total int)
	// Warn, when set, receives one line about something that did not stop
	// the build (an unreadable cache, a bundle that could not be compared).
	Warn func(msg string)
}

// Result is what Build did.
type Result struct {
	// UpToDate is set when no input changed since Out was built: the
	// bundle was checked against its manifest and left as it was, and
	// Build is nil.
	UpToDate bool
	BundleID string
	// Build is the pipeline's result (passages, reports, problems).
	Build *build.Result
	// Delta is what changed against the bundle replaced; nil when
	// UpToDate.
	Delta *bundle.Delta
	// Summary are the counts of the build; when UpToDate, those of the
	// build that wrote Out, with the staleness judged again at Now.
	Summary Summary
	// Problems are the bad inputs as "path:line: message" lines (also
	// when UpToDate, from the build that wrote Out).
	Problems []string
	// Failures are the checks that failed (Config.Checks).
	Failures []build.CheckFailure
}

// Summary are the counts a build reports.
type Summary struct {
	Stats            build.Stats        `json:"stats"`
	BoilerplateTexts int                `json:"boilerplate_texts"`
	Staleness        build.StatusCounts `json:"staleness"`
	Bands            int                `json:"lsh_bands"`
	Rows             int                `json:"lsh_rows"`
	Threshold        float64            `json:"dup_threshold"`
	CatchAtThreshold float64            `json:"lsh_catch_at_threshold"`
	CatchAtHalf      float64            `json:"lsh_catch_at_0_5"`
}

// ErrStrict is returned by Build for a Strict job whose sources had bad
// input files; Result.Build lists them.
var ErrStrict = errors.New("bad input files with a strict build; no bundle written")

// Build compiles job.Src into job.Out and evaluates the checks. Bad
// input files never stop it (unless Strict): they are in
// Result.Problems. It fails when Src cannot be read, the build is
// cancelled through ctx, or the bundle cannot be written; an earlier
// bundle in Out is then left as it was.
func Build(ctx context.Context, job Job) (*Result, error) {
	cfg, err := job.config()
	if err != nil {
		return nil, err
	}
	now := job.now()
	dir, err := sources.OpenDir(job.Src)
	if err != nil {
		return nil, fmt.Errorf("source %s: %v", job.Src, sources.UnwrapPath(err))
	}
	defer dir.Close()
	opts := cfg.Options
	commit, dirty := build.SourceCommit(ctx, job.Src)
	// Taken before the walk: a file changed while the tree is listed is
	// then within the racy window of the record (see upToDate).
	looked := time.Now()
	walked := build.Walk(dir, opts)
	checks, _ := json.Marshal(cfg.Checks)
	extra := fmt.Sprintf("%s\x00%s %t\x00%t %d\x00%s", job.toolKey(), commit, dirty, job.FixedTime, now.Unix()*boolInt(job.FixedTime), checks)
	inputs := build.InputsDigest(walked, opts, extra)
	if !job.Strict && !job.Force {
		if r, ok := upToDate(job, cfg, dir, inputs, walked, now); ok {
			return r, nil
		}
	}

	sess := job.Session
	if sess == nil {
		sess = &Session{}
	}
	opts.Cache = sess.cacheFor(job.Out, job.toolKey(), job.warn)
	opts.Now, opts.GitDir, opts.Progress, opts.Walked = now, job.Src, job.Progress, walked
	res, err := build.Run(ctx, dir, opts)
	if err != nil {
		return nil, err
	}
	r := &Result{Build: res, Summary: summarize(res)}
	for _, p := range res.Problems {
		r.Problems = append(r.Problems, p.Error())
	}
	if job.Strict && len(res.Problems) > 0 {
		return r, ErrStrict
	}
	m, delta, err := commitBundle(job, res, bundle.NewSettings(opts, cfg.Checks), commit, dirty, now)
	if err != nil {
		return r, err
	}
	r.BundleID, r.Delta = m.BundleID, delta
	if job.Session == nil {
		if err := sess.Save(job.Out); err != nil {
			job.warn(fmt.Sprintf("could not save the build cache: %v", err))
		}
	}
	if err := record(job.Out, inputs, looked, m, r, walked, opts.Cache); err != nil {
		job.warn(fmt.Sprintf("could not record the build's inputs: %v", err))
	}
	r.Failures = cfg.Checks.Evaluate(build.CheckInput{Staleness: res.Staleness.Counts, Divergent: res.Stats.Divergent, Secrets: res.Stats.Secrets})
	return r, nil
}

// Analyze runs the pipeline over job.Src without writing anything and
// without a cache: what kbc stale SRC reports.
func Analyze(ctx context.Context, job Job) (*build.Result, error) {
	cfg, err := job.config()
	if err != nil {
		return nil, err
	}
	dir, err := sources.OpenDir(job.Src)
	if err != nil {
		return nil, fmt.Errorf("source %s: %v", job.Src, sources.UnwrapPath(err))
	}
	defer dir.Close()
	opts := cfg.Options
	opts.Now, opts.GitDir, opts.Progress = job.now(), job.Src, job.Progress
	return build.Run(ctx, dir, opts)
}

func (job *Job) config() (*Config, error) {
	if job.Config != nil {
		return job.Config, nil
	}
	return LoadConfig(job.Src, "")
}

func (job *Job) now() time.Time {
	if job.Now.IsZero() {
		return time.Now().UTC().Truncate(time.Second)
	}
	return job.Now.UTC()
}

func (job *Job) warn(msg string) {
	if job.Warn != nil {
		job.Warn(msg)
	}
}

// toolKey names the program and the running binary (build.BinaryID).
func (job *Job) toolKey() string { return job.Tool + " " + build.BinaryID() }

func boolInt(b bool) int64 {
	if b {
		return 1
	}
	return 0
}

// summarize returns the counts of a build.
func summarize(res *build.Result) Summary {
	return Summary{Stats: res.Stats, BoilerplateTexts: len(res.Boilerplate), Staleness: res.Staleness.Counts,
		Bands: res.Duplicates.Bands, Rows: res.Duplicates.Rows, Threshold: res.Duplicates.Threshold,
		CatchAtThreshold: res.Duplicates.CatchAtThreshold, CatchAtHalf: res.Duplicates.CatchAtHalf}
}

// commitBundle writes the bundle of a build, with its reports, into
// job.Out and returns its manifest and delta.
func commitBundle(job Job, res *build.Result, settings *bundle.Settings, commit string, dirty bool, now time.Time) (*bundle.Manifest, *bundle.Delta, error) {
	files, err := bundle.ReportFiles(res)
	if err != nil {
		return nil, nil, err
	}
	st := res.Stats
	in := &bundle.Input{
		Passages:     res.Passages,
		Settings:     settings,
		Tool:         job.Tool,
		SourceCommit: commit,
		SourceDirty:  dirty,
		BuiltAt:      now,
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
	if err := os.MkdirAll(filepath.Dir(filepath.Clean(job.Out)), 0o755); err != nil {
		return nil, nil, fmt.Errorf("cannot create the folder for %s: %v", job.Out, sources.UnwrapPath(err))
	}
	// The bundle replaced: its manifest and the catalog of its passages
	// saved beside it, which is all the delta and the index update read.
	prior, err := bundle.ReadPrior(job.Out)
	if err != nil {
		job.warn(fmt.Sprintf("the bundle in %s cannot be read (%v); the delta lists every passage as added", job.Out, err))
		prior = nil
	}
	in.Prior = prior
	return bundle.Commit(job.Out, in)
}
