package build

import (
	"cmp"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"runtime"
	"slices"
	"strings"
	"sync/atomic"
	"time"

	"golang.org/x/sync/errgroup"

	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/sources"
)

// Options configure Run. The zero value is not ready: start from
// DefaultOptions.
type Options struct {
	Settings Settings
	Walk     sources.WalkOptions
	// Workers bounds the documents processed at once; 0 means GOMAXPROCS.
	Workers int
	// Progress, when set, is called as documents finish, from several
	// goroutines at once; done counts up to total.
	Progress func(done, total int)
	// Fresh is the freshness policy; Now the instant documents are judged
	// at (zero means the clock: pass the SOURCE_DATE_EPOCH time for a
	// reproducible build).
	Fresh fresh.Policy
	Now   time.Time
	// GitDir, when set, is the folder (the source root on disk) whose git
	// history dates documents that have no date in their front matter.
	GitDir string
	// Dedupe configures the duplicate stage.
	Dedupe dedupe.Options
	// Cache, when set, holds the per-document results of earlier builds:
	// Run reuses the entries whose content is unchanged (their passages
	// while the split settings and the page's boilerplate are the same)
	// and updates the rest. It must fit the tool version (Cache.Fits).
	Cache *Cache
	// Walked, when set, is the listing of fsys made with Walk (for the
	// same Walk options): Run builds those files instead of walking the
	// tree again.
	Walked *Walked
}

// DefaultOptions returns options with DefaultSettings and the default walk.
func DefaultOptions() Options {
	return Options{Settings: DefaultSettings(), Fresh: fresh.DefaultPolicy(), Dedupe: dedupe.DefaultOptions()}
}

// Stats counts what a build saw and made.
type Stats struct {
	Files              int   `json:"files"`               // source files found
	Documents          int   `json:"documents"`           // files that became documents
	Empty              int   `json:"empty_documents"`     // documents with front matter only, so no passage
	Skipped            int   `json:"skipped"`             // files left out because of a problem
	Warnings           int   `json:"warnings"`            // problems, skipped files included
	Passages           int   `json:"passages"`            // passages made
	Tokens             int   `json:"tokens"`              // tokens over all passages
	SourceBytes        int64 `json:"source_bytes"`        // bytes of the files read
	BoilerplateDropped int   `json:"boilerplate_dropped"` // blocks dropped as site boilerplate
	SplitPassages      int   `json:"split_passages"`      // passages cut from a block over the budget
	Duplicates         int   `json:"duplicates_removed"`  // copies left out, listed on their canonical passage
	Divergent          int   `json:"divergent_copies"`    // near copies that differ in numbers, dates or units
	Stale              int   `json:"stale"`               // documents with status stale (expired ones not included)
	Expired            int   `json:"expired"`             // documents past their expiry date
	Reused             int   `json:"reused"`              // documents taken from the build cache, not parsed
	Secrets            int   `json:"secrets_redacted"`    // credentials replaced by a marker
	Hidden             int   `json:"hidden_dropped"`      // characters and elements dropped as hidden from readers
	Lints              int   `json:"assistant_lints"`     // visible text flagged as addressing an assistant
}

// Result is everything one build produced, sorted so that the same input
// always gives the same result.
type Result struct {
	Passages    []Passage          // by path, then line
	Boilerplate []BoilerplateEntry // most pages first
	Problems    []*sources.Error   // every bad input, by path and line
	Staleness   *StalenessReport
	Duplicates  *DuplicateReport
	Secrets     *SecretsReport
	Hidden      *HiddenReport
	Stats       Stats
}

// Run walks the root of fsys, reads every source file, and turns the
// documents into passages. Bad input never stops it: each problem lands in
// Result.Problems and the rest is built. Run fails only when the settings
// are invalid or ctx is cancelled.
//
// Run is the stages in order, each a function of its own with what it
// takes and gives in its signature: readStage (read, parse, normalise;
// several goroutines), dateStage (freshness, with the git history read in
// the background meanwhile), boilerplateStage (across documents),
// splitStage (strip and split; several goroutines) and foldStage (keep
// one passage per group of copies).
func Run(ctx context.Context, fsys fs.FS, opts Options) (*Result, error) {
	s := opts.Settings
	if err := s.Validate(); err != nil {
		return nil, err
	}
	tok, err := NewTokenizer(s.Tokenizer)
	if err != nil {
		return nil, err
	}
	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	now := opts.Now
	if now.IsZero() {
		now = time.Now()
	}
	now = now.UTC()
	gitc := readGitDates(ctx, opts.GitDir, opts.Cache)

	walked := opts.Walked
	if walked == nil {
		walked = Walk(fsys, opts)
	}
	// Run appends to its own copies: the caller's listing stays as it is.
	files, walkErrs := slices.Clone(walked.Files), slices.Clone(walked.Problems)
	res := &Result{Problems: walkErrs}
	res.Stats.Files = len(files) + len(walkErrs)

	ds, err := readStage(ctx, fsys, files, opts, workers, res)
	if err != nil {
		return nil, err
	}
	res.Stats.Skipped += len(walkErrs)

	gr := <-gitc
	if gr.err != nil {
		if !errors.Is(gr.err, fresh.ErrShallow) {
			return nil, fmt.Errorf("reading git history: %w", gr.err)
		}
		res.Problems = append(res.Problems, &sources.Error{Path: ".", Msg: gr.err.Error(), Err: gr.err})
	}
	infos := dateStage(ds, gr.dates, now, opts.Fresh, res)
	bp := boilerplateStage(ds, s)
	res.Boilerplate = bp.Entries()
	if res.Passages, err = splitStage(ctx, ds, infos, bp, tok, s, workers, res); err != nil {
		return nil, err
	}
	if err := foldStage(ds, opts.Dedupe, res); err != nil {
		return nil, err
	}
	redactProblems(res.Problems)
	sources.SortErrors(res.Problems)
	res.Stats.Documents = len(ds.docs)
	res.Stats.Passages = len(res.Passages)
	res.Stats.Warnings = len(res.Problems)
	return res, nil
}

// gitDates is the git history's dates of the files, by path.
type gitDates struct {
	dates map[string]time.Time
	err   error
}

// readGitDates reads the git history of dir once for the whole tree, in
// the background while the files parse; from what the last build read
// (only the commits since) when there is a cache. No dir, no dates.
func readGitDates(ctx context.Context, dir string, cache *Cache) <-chan gitDates {
	gitc := make(chan gitDates, 1)
	go func() {
		if dir == "" {
			gitc <- gitDates{}
			return
		}
		if cache == nil {
			d, err := fresh.GitDates(ctx, dir)
			gitc <- gitDates{d, err}
			return
		}
		d, h, err := fresh.GitDatesFrom(ctx, dir, cache.gitHistory())
		cache.storeGitHistory(h)
		gitc <- gitDates{d, err}
	}()
	return gitc
}

// docSet are the documents a build keeps, each with what the read stage
// learnt of it: its block keys, its file and its count of blocks (a
// document from the cache comes without its blocks; full reads them).
type docSet struct {
	fsys    fs.FS
	maxSize int64
	cache   *Cache
	docs    []*sources.Document
	keys    [][]BlockKey
	files   []sources.File
	blocks  []int
}

// full returns document i with its blocks, reading it again when it came
// from the cache.
func (ds *docSet) full(i int) (*sources.Document, *sources.Error) {
	d, fail := withBlocks(ds.fsys, ds.files[i], ds.docs[i], ds.blocks[i], ds.maxSize)
	if fail != nil {
		// Its entry no longer describes the file: the next build reads
		// it afresh, whatever its size and time say.
		ds.cache.forget(ds.files[i].Path)
	}
	return d, fail
}

// readStage reads, parses and normalises each file on workers goroutines
// (or takes it from the cache), and returns the documents kept. Files
// that cannot be used go to res.Problems, counted as skipped; the
// documents' warnings go there too.
func readStage(ctx context.Context, fsys fs.FS, files []sources.File, opts Options, workers int, res *Result) (*docSet, error) {
	docs := make([]*sources.Document, len(files))
	fails := make([]*sources.Error, len(files))
	reused := make([]bool, len(files))
	keys := make([][]BlockKey, len(files))
	blocks := make([]int, len(files)) // a document from the cache has none in hand
	var done atomic.Int64
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(workers)
	for i, f := range files {
		g.Go(func() error {
			if err := gctx.Err(); err != nil {
				return err
			}
			docs[i], keys[i], blocks[i], reused[i], fails[i] = readDocument(fsys, f, opts.Walk.MaxSize, opts.Cache)
			if opts.Progress != nil {
				opts.Progress(int(done.Add(1)), len(files))
			}
			return nil
		})
	}
	if err := g.Wait(); err != nil {
		return nil, err
	}
	ds := &docSet{fsys: fsys, maxSize: opts.Walk.MaxSize, cache: opts.Cache}
	present := make(map[string]bool, len(files))
	for i, d := range docs {
		present[files[i].Path] = true
		if reused[i] && fails[i] == nil {
			res.Stats.Reused++
		}
		if fails[i] != nil {
			res.Problems = append(res.Problems, fails[i])
			res.Stats.Skipped++
			continue
		}
		res.Problems = append(res.Problems, d.Warnings...)
		res.Stats.SourceBytes += d.Size
		if blocks[i] == 0 {
			res.Stats.Empty++
		}
		ds.docs, ds.keys = append(ds.docs, d), append(ds.keys, keys[i])
		ds.files, ds.blocks = append(ds.files, files[i]), append(ds.blocks, blocks[i])
	}
	opts.Cache.keep(present)
	return ds, nil
}

// dateStage dates every document (front matter, then the git dates, then
// the file time) under the policy at now, and fills the staleness,
// secrets and hidden-text reports. It returns each document's freshness,
// in the order of ds.
func dateStage(ds *docSet, dates map[string]time.Time, now time.Time, policy fresh.Policy, res *Result) []fresh.Info {
	infos := make([]fresh.Info, len(ds.docs))
	var dated []DocFreshness
	for i, d := range ds.docs {
		var warns []*sources.Error
		infos[i], warns = fresh.Evaluate(d, dates, now, policy)
		res.Problems = append(res.Problems, warns...)
		dated = append(dated, DocFreshness{Path: d.Path, Title: d.Title, Info: infos[i]})
	}
	res.Staleness = NewStalenessReport(dated, now, policy)
	res.Secrets, res.Hidden = NewSecretsReport(ds.docs), NewHiddenReport(ds.docs)
	res.Stats.Secrets, res.Stats.Hidden, res.Stats.Lints = res.Secrets.Total, res.Hidden.Total, len(res.Hidden.Lints)
	res.Stats.Stale, res.Stats.Expired = res.Staleness.Counts.Stale, res.Staleness.Counts.Expired
	return infos
}

// boilerplateStage finds the site boilerplate across all documents from
// their block keys, and has its entries described by the text of the
// first pages that hold them.
func boilerplateStage(ds *docSet, s Settings) *Boilerplate {
	counts := make(map[BlockKey]int)
	for _, ks := range ds.keys {
		for _, k := range ks {
			counts[k]++
		}
	}
	bp := NewBoilerplate(counts, len(ds.docs), s)
	if bp.Len() == 0 {
		return bp
	}
	var with []int // only pages that hold some boilerplate
	for i := range ds.docs {
		if slices.ContainsFunc(ds.keys[i], bp.Has) {
			with = append(with, i)
		}
	}
	// In path order, one page at a time: a page or two usually describe
	// every entry, and only those are read again.
	slices.SortFunc(with, func(a, b int) int { return strings.Compare(ds.docs[a].Path, ds.docs[b].Path) })
	for _, i := range with {
		if bp.Described() {
			break
		}
		if d, fail := ds.full(i); fail == nil {
			bp.Describe([]*sources.Document{d})
		}
	}
	return bp
}

// splitStage strips the boilerplate from each document and splits it into
// passages on workers goroutines (or takes its passages from the cache),
// copies its document's freshness onto each passage, and returns them all
// in passage order (SortPassages). A document that can no longer be read
// goes to res.Problems.
func splitStage(ctx context.Context, ds *docSet, infos []fresh.Info, bp *Boilerplate, tok *Tokenizer, s Settings, workers int, res *Result) ([]Passage, error) {
	splitSet := splitSettings(s)
	parts := make([][]Passage, len(ds.docs))
	dropped := make([]int, len(ds.docs))
	lost := make([]*sources.Error, len(ds.docs)) // could not be read again
	g, gctx := errgroup.WithContext(ctx)
	g.SetLimit(workers)
	for i, d := range ds.docs {
		g.Go(func() error {
			if err := gctx.Err(); err != nil {
				return err
			}
			var digest string
			ok := false
			if ds.cache != nil {
				digest = splitKey(splitSet, ds.keys[i], bp)
				parts[i], dropped[i], ok = ds.cache.passages(d.Path, digest)
			}
			if !ok {
				d, fail := ds.full(i)
				if fail != nil {
					lost[i] = fail
					return nil
				}
				var clean *sources.Document
				clean, dropped[i] = bp.Strip(d)
				parts[i] = Split(clean, tok, s)
				ds.cache.storePassages(d.Path, digest, parts[i], dropped[i])
			}
			for j := range parts[i] {
				copyFreshness(&parts[i][j], infos[i])
			}
			return nil
		})
	}
	if err := g.Wait(); err != nil {
		return nil, err
	}
	var out []Passage
	for i := range ds.docs {
		if lost[i] != nil {
			res.Problems = append(res.Problems, lost[i])
		}
		res.Stats.BoilerplateDropped += dropped[i]
		for _, p := range parts[i] {
			if p.Split {
				res.Stats.SplitPassages++
			}
		}
		out = append(out, parts[i]...)
	}
	SortPassages(out)
	return out, nil
}

// foldStage keeps one passage per group of copies in res.Passages, fills
// the duplicate report, and counts the tokens of the passages kept.
func foldStage(ds *docSet, opts dedupe.Options, res *Result) error {
	byPath := make(map[string]*sources.Document, len(ds.docs))
	for _, d := range ds.docs {
		byPath[d.Path] = d
	}
	var err error
	res.Passages, res.Duplicates, err = dedupePassages(res.Passages, byPath, opts, ds.cache)
	if err != nil {
		return err
	}
	res.Stats.Duplicates = res.Duplicates.Removed
	res.Stats.Divergent = len(res.Duplicates.Divergent)
	res.Stats.Tokens = 0
	for _, p := range res.Passages {
		res.Stats.Tokens += p.Tokens
	}
	return nil
}

// readDocument reads, parses and normalises one file, or takes it from
// the cache when its bytes are unchanged (reported by reused), and returns
// its block keys and the number of its blocks (a document from the cache
// comes without them; see withBlocks). A nil document comes with the error
// that kept it out.
func readDocument(fsys fs.FS, f sources.File, maxSize int64, cache *Cache) (doc *sources.Document, keys []BlockKey, blocks int, reused bool, _ *sources.Error) {
	if e := cache.unchanged(f); e != nil {
		if e.Fail != nil {
			fail := *e.Fail
			return nil, nil, 0, true, &fail
		}
		if d, ok := e.document(f); ok {
			return d, e.Keys, e.Blocks, true, nil
		}
	}
	data, rerr := sources.ReadFile(fsys, f, maxSize)
	if rerr != nil {
		return nil, nil, 0, false, rerr
	}
	var hash string
	if cache != nil {
		sum := sha256.Sum256(data)
		hash = hex.EncodeToString(sum[:])
		if e := cache.lookup(f.Path, hash); e != nil {
			cache.seen(f)
			if e.Fail != nil {
				fail := *e.Fail
				return nil, nil, 0, true, &fail
			}
			if d, ok := e.document(f); ok {
				return d, e.Keys, e.Blocks, true, nil
			}
		}
	}
	doc, fail := parseDocument(f, data)
	if fail != nil {
		cache.storeFail(f, hash, fail)
		return nil, nil, 0, false, fail
	}
	keys = BlockKeys(doc)
	cache.store(f, hash, doc, keys)
	return doc, keys, len(doc.Blocks), false, nil
}

// parseDocument parses and normalises the bytes of the file f, replaces
// the credentials in its text with markers and flags text that addresses
// an assistant.
func parseDocument(f sources.File, data []byte) (*sources.Document, *sources.Error) {
	doc, err := sources.Parse(f.Path, data)
	if err != nil {
		pe, ok := err.(*sources.Error)
		if !ok {
			pe = &sources.Error{Path: f.Path, Msg: err.Error(), Err: err}
		}
		return nil, pe
	}
	doc.ModTime = f.ModTime.UTC()
	hadText := len(doc.Blocks) > 0
	Normalize(doc)
	if hadText && len(doc.Blocks) == 0 {
		return nil, sources.ErrNoText(f.Path)
	}
	redactSecrets(doc)
	lintAssistant(doc)
	return doc, nil
}

// withBlocks returns d with its blocks: d itself when it has them or has
// none (blocks is 0), else a copy with the blocks of the file read and
// parsed again. The file must still hold the bytes d was made from; when
// it changed after the build read it, the error says so, and the caller
// leaves the document's passages out of this build (the next one reads
// the new bytes).
func withBlocks(fsys fs.FS, f sources.File, d *sources.Document, blocks int, maxSize int64) (*sources.Document, *sources.Error) {
	if len(d.Blocks) > 0 || blocks == 0 {
		return d, nil
	}
	data, fail := sources.ReadFile(fsys, f, maxSize)
	if fail != nil {
		return nil, fail
	}
	again, fail := parseDocument(f, data)
	if fail != nil || again.Hash != d.Hash {
		return nil, &sources.Error{Path: f.Path, Msg: "changed while the build ran; its passages are left out of this bundle (build again)"}
	}
	cp := *d
	cp.Blocks = again.Blocks
	return &cp, nil
}

// copyFreshness copies a document's freshness onto one of its passages.
func copyFreshness(p *Passage, info fresh.Info) {
	p.Updated, p.UpdatedSource = info.Updated, info.UpdatedSource
	p.Reviewed, p.ReviewBy, p.Expires = info.Reviewed, info.ReviewBy, info.Expires
	p.Owner, p.Audience = info.Owner, info.Audience
}

// SortPassages puts passages in passage order, the one order of a build's
// passages and of a bundle's passages.jsonl: by path, then line. The sort
// is stable and Split gives each page's passages in reading order, so
// passages that start on the same line (the parts of a long one-line
// paragraph, or the sections of a page written on one line) stay in
// reading order.
func SortPassages(ps []Passage) {
	slices.SortStableFunc(ps, func(a, b Passage) int { return ComparePassages(&a, &b) })
}

// ComparePassages compares two passages in passage order (see
// SortPassages): by path, then line. Equal passages are left in the order
// they came in by a stable sort.
func ComparePassages(a, b *Passage) int {
	if c := strings.Compare(a.Path, b.Path); c != 0 {
		return c
	}
	return cmp.Compare(a.Line, b.Line)
}

// Strict returns an error naming the count of problems when there are any,
// for callers that treat every bad input as fatal.
func (r *Result) Strict() error {
	if len(r.Problems) == 0 {
		return nil
	}
	return fmt.Errorf("%d bad input file(s) with --strict; no bundle written", len(r.Problems))
}

// redactProblems removes credentials from the warnings' messages, as from
// passages: a warning may quote the text it could not use (a front matter
// value), and every output that prints warnings would show it. A warning
// whose message held one loses its underlying error too, whose text may
// hold the same value.
func redactProblems(problems []*sources.Error) {
	for _, p := range problems {
		if msg, found := secrets.Redact(p.Msg); len(found) > 0 {
			p.Msg, p.Err = msg, errors.New(msg)
		}
	}
}
