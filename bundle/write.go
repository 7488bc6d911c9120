package bundle

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"time"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/internal/parallel"
	"github.com/kbc-project/kbc/sources"
)

// Input is everything a bundle is made of.
type Input struct {
	// Passages are written to passages.jsonl and indexed. Write sorts
	// them by path, line and id; it does not change the caller's slice.
	Passages []build.Passage
	// Settings are the build settings, marshalled into the manifest with
	// sorted keys; nil leaves them out.
	Settings *Settings
	// Tool names the writing program and its version, e.g. "kbc v0.1.0".
	Tool string
	// SourceCommit is the source repository's commit; empty leaves it out.
	SourceCommit string
	// SourceDirty records uncommitted changes under the source folder.
	SourceDirty bool
	// BuiltAt is the build time (pass the SOURCE_DATE_EPOCH time when it
	// is set); the zero time leaves it out, which keeps the manifest
	// reproducible.
	BuiltAt time.Time
	// Counts are extra counts for the manifest, e.g. "documents"; Write
	// sets "passages" and "tokens" itself and, when the caller gives no
	// "documents", counts the distinct passage paths.
	Counts map[string]int
	// Prior is the bundle this one replaces, for delta.json; nil for a
	// first build, whose delta lists every passage as added.
	Prior *Prior
	// Catalog asks Write to save, in CacheDir(out), a catalog of the
	// passages: each one's id, ContentHash and place in passages.jsonl.
	// The next Write into out, given ReadPrior(out), then computes its
	// delta and updates the index without decoding every prior passage.
	Catalog bool
	// Files are extra files (reports), by slash path inside the bundle,
	// written as they are and listed in the manifest. A path must be
	// valid for fs.ValidPath, must not contain a backslash and must not
	// clash with the bundle's own files or with another path.
	Files map[string][]byte
}

// Write writes the bundle for in into the folder out and returns its
// manifest.
//
// Nobody ever sees half a bundle: Write builds the whole bundle in a new
// folder beside out (same parent, named ".<out>.tmp-<random>"), flushes
// every file and folder to stable storage, and only then puts it in place
// of out in one step (see place). Any failure removes the temporary folder
// and leaves an earlier out untouched. out must not exist, or be an empty
// folder, or hold a bundle (a manifest.json): Write refuses to replace
// anything else. A crash can leave a ".<out>.tmp-*" folder behind (the next
// Write beside it removes it, see TempDir); nothing
// reads it, and it may be deleted.
//
// Two calls with equal input write byte-identical files (TestDeterministic).
//
// Write analyses the passages on up to GOMAXPROCS goroutines. It may be
// called concurrently for different out folders. Folders are created 0755
// and files 0644.
func Write(out string, in *Input) (*Manifest, error) {
	m, _, err := write(out, in, nil)
	return m, err
}

// Commit is Write that also returns the delta it wrote to delta.json:
// the passages added, changed and removed against in.Prior.
func Commit(out string, in *Input) (*Manifest, *Delta, error) {
	return write(out, in, nil)
}

// write is Write with a hook run on the complete temporary folder just
// before it is put in place; tests use it to fail late.
func write(out string, in *Input, hook func(tmp string) error) (_ *Manifest, _ *Delta, err error) {
	if in == nil {
		return nil, nil, errors.New("writing bundle: no input")
	}
	out = filepath.Clean(out)
	if err := checkInput(in); err != nil {
		return nil, nil, fmt.Errorf("writing bundle %s: %w", out, err)
	}
	if err := checkTarget(out); err != nil {
		return nil, nil, fmt.Errorf("writing bundle %s: %w", out, err)
	}
	parent, base := filepath.Dir(out), filepath.Base(out)
	tmp, release, err := TempDir(parent, "."+base+".tmp-")
	if err != nil {
		return nil, nil, fmt.Errorf("writing bundle %s: cannot create a folder in %s: %w", out, parent, err)
	}
	defer release()
	defer func() {
		if err != nil {
			os.RemoveAll(tmp)
		}
	}()
	m, cat, d, err := writeTree(tmp, in)
	if err == nil && hook != nil {
		err = hook(tmp)
	}
	if err == nil {
		err = place(tmp, out, exchange)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("writing bundle %s: %w", out, err)
	}
	if in.Catalog {
		// Without it the next build reads passages.jsonl instead.
		if saveCatalog(out, cat) != nil {
			os.Remove(filepath.Join(CacheDir(out), catalogFile))
		}
	}
	return m, d, nil
}

// encodeLines encodes each passage, in order, as one compact line of
// JSON (appendPassage), on several goroutines; the lines share one buffer
// per goroutine.
func encodeLines(ps []build.Passage, order []int) ([][]byte, error) {
	lines := make([][]byte, len(order))
	workers := min(runtime.GOMAXPROCS(0), max(len(order), 1))
	errs := make([]error, workers)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() {
			// Worker w encodes one contiguous run of passages, whose lines
			// share one buffer (so not parallel.For; see its package doc).
			lo, hi := w*len(order)/workers, (w+1)*len(order)/workers
			// Room for the strings plus the keys and numbers: a passage
			// rarely needs more, and growing a large buffer costs copies.
			size := 0
			for _, i := range order[lo:hi] {
				p := &ps[i]
				size += len(p.Text) + len(p.Title) + 2*len(p.Path) + len(p.Anchor) + 640
				for _, h := range p.Heading {
					size += len(h) + 3
				}
				for _, a := range p.AlsoAt {
					size += len(a) + 3
				}
			}
			buf := make([]byte, 0, size+size/16)
			ends := make([]int, 0, hi-lo)
			for _, i := range order[lo:hi] {
				p := ps[i]
				if p.Heading == nil {
					p.Heading = []string{} // "heading" is always an array
				}
				var ok bool
				if buf, ok = appendPassage(buf, &p); !ok {
					var line bytes.Buffer
					enc := json.NewEncoder(&line)
					enc.SetEscapeHTML(false)
					if err := enc.Encode(&p); err != nil {
						errs[w] = fmt.Errorf("passage %s: %w", p.ID, err)
						return
					}
					buf = append(buf, line.Bytes()...)
				}
				ends = append(ends, len(buf))
			}
			all, start := buf, 0
			for k, end := range ends {
				lines[lo+k] = all[start:end:end]
				start = end
			}
		})
	}
	wg.Wait()
	return lines, errors.Join(errs...)
}

// reserved reports whether name is, or lies under, one of the bundle's own
// files.
func reserved(name string) bool {
	switch name {
	case ManifestFile, PassagesFile, LinesFile, SchemaFile, IndexDir, DeltaFile:
		return true
	}
	return strings.HasPrefix(name, IndexDir+"/")
}

// checkInput checks the extra file paths and the passages against the
// promises of passages.schema.json, before anything is written.
func checkInput(in *Input) error {
	names := make([]string, 0, len(in.Files))
	for name := range in.Files {
		if !fs.ValidPath(name) || name == "." || strings.Contains(name, `\`) {
			return fmt.Errorf("invalid file path %q", name)
		}
		if reserved(name) {
			return fmt.Errorf("file path %q clashes with the bundle's own files", name)
		}
		names = append(names, name)
	}
	slices.Sort(names)
	for i := 1; i < len(names); i++ {
		if strings.HasPrefix(names[i], names[i-1]+"/") {
			return fmt.Errorf("file path %q lies under file %q", names[i], names[i-1])
		}
	}

	var errs []*sources.Error
	bad := func(p *build.Passage, format string, args ...any) {
		errs = append(errs, &sources.Error{Path: p.Path, Line: p.Line, Msg: fmt.Sprintf(format, args...)})
	}
	// The text checks read every byte: on all cores.
	badText := make([]bool, len(in.Passages))
	parallel.For(len(in.Passages), func(i int) { badText[i] = !validUTF8(&in.Passages[i]) })
	seen := make(map[string]bool, len(in.Passages))
	for i := range in.Passages {
		p := &in.Passages[i]
		switch {
		case p.ID == "":
			bad(p, "passage has no id")
		case seen[p.ID]:
			bad(p, "passage id %s is used twice", p.ID)
		}
		seen[p.ID] = true
		if p.Path == "" {
			bad(p, "passage %s has no path", p.ID)
		}
		if p.Line < 1 || p.EndLine < p.Line {
			bad(p, "passage %s has lines %d-%d", p.ID, p.Line, p.EndLine)
		}
		if p.Tokens < 0 {
			bad(p, "passage %s has %d tokens", p.ID, p.Tokens)
		}
		if badText[i] {
			bad(p, "passage %s holds invalid UTF-8", p.ID)
		}
		if !isHexHash(p.Hash) {
			bad(p, "passage %s has hash %q, want 64 lower-case hex digits", p.ID, p.Hash)
		}
	}
	if len(errs) == 0 {
		return nil
	}
	sources.SortErrors(errs)
	joined := make([]error, len(errs))
	for i, e := range errs {
		joined[i] = e
	}
	return fmt.Errorf("%d bad passages:\n%w", len(errs), errors.Join(joined...))
}

// validUTF8 reports whether all of p's strings are valid UTF-8, so that
// passages.jsonl holds them unchanged (JSON would replace bad bytes).
func validUTF8(p *build.Passage) bool {
	for _, h := range p.Heading {
		if !utf8.ValidString(h) {
			return false
		}
	}
	return utf8.ValidString(p.ID) && utf8.ValidString(p.Path) && utf8.ValidString(p.Anchor) &&
		utf8.ValidString(p.Title) && utf8.ValidString(p.Text)
}

func isHexHash(s string) bool {
	if len(s) != 2*sha256.Size {
		return false
	}
	for i := 0; i < len(s); i++ {
		if c := s[i]; !('0' <= c && c <= '9' || 'a' <= c && c <= 'f') {
			return false
		}
	}
	return true
}

// CheckTarget reports why the folder dir must not be replaced by a
// bundle, or nil when it may be: dir does not exist, is an empty folder,
// or holds a readable kbc manifest (manifest.json with a "format" number
// and a 64-hex-digit "bundle_id"). A file that is merely named
// manifest.json (a web app has one) does not make a folder a bundle.
// Write, Install and the commands that write a bundle call it before they
// touch anything.
func CheckTarget(dir string) error {
	fi, err := os.Lstat(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("cannot use it: %w", err)
	}
	if !fi.IsDir() {
		return errors.New("it exists and is not a folder")
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	if len(entries) == 0 {
		return nil
	}
	why := isBundleManifest(filepath.Join(dir, ManifestFile))
	if why == "" {
		return nil
	}
	return fmt.Errorf("refusing to replace %s: not a kbc bundle: %s; it holds %s", dir, why, listEntries(entries))
}

// checkTarget is CheckTarget for Write and Install.
func checkTarget(out string) error { return CheckTarget(out) }

// isBundleManifest returns "" when the file at p is a kbc manifest, else
// what is wrong with it. Only the two fields every format version has
// are read: the file may come from a newer kbc.
func isBundleManifest(p string) string {
	fi, err := os.Lstat(p)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return "no manifest.json"
	case err != nil:
		return fmt.Sprintf("its manifest.json cannot be read (%v)", err)
	case !fi.Mode().IsRegular():
		return "its manifest.json is not a regular file"
	case fi.Size() > 64<<20:
		return "its manifest.json is too large for a kbc manifest"
	}
	data, err := os.ReadFile(p)
	if err != nil {
		return fmt.Sprintf("its manifest.json cannot be read (%v)", err)
	}
	var m struct {
		Format   *int   `json:"format"`
		BundleID string `json:"bundle_id"`
	}
	if err := json.Unmarshal(data, &m); err != nil {
		return "its manifest.json is not JSON"
	}
	if m.Format == nil || *m.Format < 1 {
		return `its manifest.json has no kbc "format" number`
	}
	if len(m.BundleID) != 64 || strings.Trim(m.BundleID, "0123456789abcdef") != "" {
		return `its manifest.json has no kbc "bundle_id"`
	}
	return ""
}

// listEntries names a folder's entries for an error: folders end in
// "/", at most five are named.
func listEntries(entries []fs.DirEntry) string {
	var names []string
	for i, e := range entries {
		if i == 5 {
			names = append(names, fmt.Sprintf("and %d more", len(entries)-5))
			break
		}
		n := e.Name()
		if e.IsDir() {
			n += "/"
		}
		names = append(names, n)
	}
	return strings.Join(names, ", ")
}

// sortedOrder returns the indexes of ps in passage order
// (build.ComparePassages: by path and line). Ties
// keep the order of ps, which build.Run gives in reading order: the parts
// of a one-line paragraph must not be shuffled by their ids.
func sortedOrder(ps []build.Passage) []int {
	order := make([]int, len(ps))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return build.ComparePassages(&ps[a], &ps[b]) })
	return order
}

// writeTree writes the whole bundle into the empty folder dir and flushes
// it to stable storage.
// It also returns the catalog of the bundle's passages and the delta
// against in.Prior.
func writeTree(dir string, in *Input) (*Manifest, *catalog, *Delta, error) {
	if err := os.Chmod(dir, 0o755); err != nil {
		return nil, nil, nil, err
	}
	var settings json.RawMessage
	var err error
	if in.Settings != nil {
		settings, err = canonicalJSON(in.Settings)
	}
	if err != nil {
		return nil, nil, nil, fmt.Errorf("settings: %w", err)
	}
	m := &Manifest{
		Format:       FormatVersion,
		Tool:         in.Tool,
		SourceCommit: in.SourceCommit,
		SourceDirty:  in.SourceDirty,
		Settings:     settings,
		Counts:       make(map[string]int, len(in.Counts)+3),
		Files:        make(map[string]string),
	}
	if !in.BuiltAt.IsZero() {
		m.BuiltAt = in.BuiltAt.UTC().Truncate(time.Second)
	}
	for k, v := range in.Counts {
		m.Counts[k] = v
	}
	order := sortedOrder(in.Passages)
	tokens := 0
	paths := 0
	for j, i := range order {
		tokens += in.Passages[i].Tokens
		if j == 0 || in.Passages[i].Path != in.Passages[order[j-1]].Path {
			paths++
		}
	}
	m.Counts["passages"] = len(order)
	m.Counts["tokens"] = tokens
	if _, ok := m.Counts["documents"]; !ok {
		m.Counts["documents"] = paths
	}

	// passages.jsonl: one compact JSON object per line. The catalog
	// records where each line lies.
	cat := &catalog{Entries: make([]catalogEntry, len(order))}
	sums := contentSums(in.Passages, order)
	lines, err := encodeLines(in.Passages, order)
	if err != nil {
		return nil, nil, nil, err
	}
	m.Files[PassagesFile], err = writeFile(dir, PassagesFile, func(w io.Writer) error {
		bw := bufio.NewWriterSize(w, 1<<16)
		var off int64
		for j, line := range lines {
			if _, err := bw.Write(line); err != nil {
				return err
			}
			id := in.Passages[order[j]].ID
			cat.Entries[j] = catalogEntry{ID: id, Content: sums[j], Off: off, Len: int64(len(line))}
			off += int64(len(line))
		}
		cat.Size = off
		return bw.Flush()
	})
	if err != nil {
		return nil, nil, nil, err
	}
	m.BundleID = strings.TrimPrefix(m.Files[PassagesFile], "sha256:")
	cat.BundleID = m.BundleID

	// passages.lines: where each line lies, for Open.
	ids := make([]string, len(cat.Entries))
	spans := make([]span, len(cat.Entries))
	for j, e := range cat.Entries {
		ids[j], spans[j] = e.ID, span{e.Off, int(e.Len) - 1} // without its newline
	}
	m.Files[LinesFile], err = writeFile(dir, LinesFile, func(w io.Writer) error { return encodeLineTable(w, ids, spans, cat.Size) })
	if err != nil {
		return nil, nil, nil, err
	}

	// delta.json: what changed against the bundle this one replaces.
	prior := &catalog{}
	if in.Prior != nil {
		if in.Prior.ID == m.BundleID {
			prior = cat // the same bytes: nothing to compare
		} else if prior, err = in.Prior.catalog(); err != nil {
			return nil, nil, nil, fmt.Errorf("reading the bundle replaced: %w", err)
		}
	}
	d := diffCatalogs(prior, cat)
	if in.Prior != nil {
		d.From = in.Prior.ID
	}
	d.To = m.BundleID
	m.Files[DeltaFile], err = writeFile(dir, DeltaFile, func(w io.Writer) error {
		data, err := MarshalReport(d)
		if err != nil {
			return err
		}
		_, err = w.Write(data)
		return err
	})
	if err != nil {
		return nil, nil, nil, err
	}

	m.Files[SchemaFile], err = writeFile(dir, SchemaFile, bytesWriter(schema))
	if err != nil {
		return nil, nil, nil, err
	}

	indexDir := filepath.Join(dir, filepath.FromSlash(IndexDir))
	var stats []byte
	content := indexContent(cat)
	if !reuseIndex(in.Prior, indexDir, content) {
		st, err := updateIndex(in.Prior, indexDir, in.Passages, order, cat, content)
		if err != nil {
			st, err = buildIndex(indexDir, in.Passages, order, content)
		}
		if err != nil {
			return nil, nil, nil, err
		}
		stats, err = json.MarshalIndent(st, "", "  ")
		if err != nil {
			return nil, nil, nil, err
		}
		stats = append(stats, '\n')
	}
	// The index's own files: hashed, made 0644 and flushed here.
	err = filepath.WalkDir(indexDir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			return os.Chmod(p, 0o755)
		}
		rel, err := filepath.Rel(dir, p)
		if err != nil {
			return err
		}
		ref, err := syncFile(p)
		m.Files[filepath.ToSlash(rel)] = ref
		return err
	})
	if err != nil {
		return nil, nil, nil, fmt.Errorf("index: %w", err)
	}
	if stats != nil {
		m.Files[StatsFile], err = writeFile(dir, StatsFile, bytesWriter(stats))
		if err != nil {
			return nil, nil, nil, err
		}
	}

	for name, data := range in.Files {
		if err := os.MkdirAll(filepath.Join(dir, filepath.FromSlash(path.Dir(name))), 0o755); err != nil {
			return nil, nil, nil, err
		}
		m.Files[name], err = writeFile(dir, name, bytesWriter(data))
		if err != nil {
			return nil, nil, nil, err
		}
	}

	if err := m.seal(dir); err != nil {
		return nil, nil, nil, err
	}
	data, err := m.marshal()
	if err != nil {
		return nil, nil, nil, err
	}
	if _, err := writeFile(dir, ManifestFile, bytesWriter(data)); err != nil {
		return nil, nil, nil, err
	}
	return m, cat, d, syncDirs(dir)
}

func bytesWriter(data []byte) func(io.Writer) error {
	return func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	}
}

// writeFile creates the new file name (slash path) in dir, fills it with
// fill, flushes it to stable storage and returns its hash reference.
func writeFile(dir, name string, fill func(io.Writer) error) (string, error) {
	f, err := os.OpenFile(filepath.Join(dir, filepath.FromSlash(name)), os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return "", err
	}
	h := sha256.New()
	err = fill(io.MultiWriter(f, h))
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return "", fmt.Errorf("%s: %w", name, err)
	}
	return hashRef(h), nil
}

// syncFile makes the existing file p 0644, hashes it, flushes it to stable
// storage and returns its hash reference.
func syncFile(p string) (string, error) {
	if err := os.Chmod(p, 0o644); err != nil {
		return "", err
	}
	f, err := os.OpenFile(p, os.O_RDWR, 0)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	if err := f.Sync(); err != nil {
		return "", err
	}
	return hashRef(h), f.Close()
}

// syncDirs flushes dir and every folder under it, so that the entries
// (file names) are on stable storage too, not only the files' contents.
func syncDirs(dir string) error {
	return filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || !d.IsDir() {
			return err
		}
		return syncDir(p)
	})
}

func syncDir(dir string) error {
	if runtime.GOOS == "windows" {
		return nil // folders cannot be opened for flushing there
	}
	f, err := os.Open(dir)
	if err != nil {
		return err
	}
	err = f.Sync()
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	return err
}

// place puts the complete, flushed bundle folder tmp in place of out and
// removes what out held before.
//
// Why everything was flushed first: a rename is a change to the parent
// folder only. File systems may write that change to disk before the data
// of the files it names (ext4 with delayed allocation, XFS, btrfs do so; POSIX
// does not order them), so after a crash out could name a bundle whose files
// are empty or hold garbage: the half-written bundle this package promises
// nobody sees. Flushing every file and folder (fsync) before the rename, and
// the parent folder after it, makes the rename the last thing that reaches
// the disk.
//
// When out exists, on Linux the two folders swap names in one atomic step
// (renameat2 with RENAME_EXCHANGE, from golang.org/x/sys/unix), so out never
// goes missing, even for a moment; elsewhere, or where the file system does
// not support the swap, the old folder is renamed aside and the new one
// renamed in, and a reader may find no out between the two renames.
//
// swap is exchange; tests pass one that fails to reach the fallback.
func place(tmp, out string, swap func(a, b string) error) error {
	parent := filepath.Dir(out)
	if _, err := os.Lstat(out); errors.Is(err, fs.ErrNotExist) {
		if err := os.Rename(tmp, out); err != nil {
			return err
		}
		return syncDir(parent)
	}
	err := swap(tmp, out)
	if err == nil {
		// tmp now names the old bundle.
		if err := syncDir(parent); err != nil {
			return err
		}
		os.RemoveAll(tmp) // the new bundle is in place; a leftover is only litter
		return nil
	}
	if !errors.Is(err, errNoExchange) {
		return err
	}
	old := tmp + ".old"
	if err := os.Rename(out, old); err != nil {
		return err
	}
	if err := os.Rename(tmp, out); err != nil {
		if rerr := os.Rename(old, out); rerr != nil {
			return fmt.Errorf("%w (and restoring the old bundle from %s failed: %v)", err, old, rerr)
		}
		return err
	}
	if err := syncDir(parent); err != nil {
		return err
	}
	os.RemoveAll(old)
	return nil
}

// reuseIndex copies the prior bundle's index into indexDir when it holds
// exactly the content the new bundle would index (same passages' ids,
// titles, headings and texts in the same order, same ranking settings) and
// every copied byte matches the prior manifest. It reports whether it did;
// on false indexDir does not exist and the index must be built. A build in
// which only dates or line numbers moved, or nothing changed, then skips
// the most expensive stage.
func reuseIndex(prior *Prior, indexDir, content string) bool {
	if prior == nil || prior.Dir == "" || prior.Manifest == nil {
		return false
	}
	var st indexStats
	data, err := os.ReadFile(filepath.Join(prior.Dir, filepath.FromSlash(StatsFile)))
	if err != nil || json.Unmarshal(data, &st) != nil || st.Content != content {
		return false
	}
	if err := copyIndex(prior, indexDir); err != nil {
		os.RemoveAll(indexDir)
		return false
	}
	return true
}

// copyIndex copies the prior bundle's index files into indexDir, checking
// every byte against the prior manifest.
func copyIndex(prior *Prior, indexDir string) error {
	src := filepath.Join(prior.Dir, filepath.FromSlash(IndexDir))
	return filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, err := filepath.Rel(src, p)
		if err != nil {
			return err
		}
		target := filepath.Join(indexDir, rel)
		if d.IsDir() {
			return os.MkdirAll(target, 0o755)
		}
		want, ok := prior.Manifest.Files[IndexDir+"/"+filepath.ToSlash(rel)]
		if !ok {
			return fmt.Errorf("%s is not in the prior manifest", rel)
		}
		got, err := copyHashed(p, target)
		if err != nil {
			return err
		}
		if got != want {
			return fmt.Errorf("%s does not match the prior manifest", rel)
		}
		return nil
	})
}

// copyHashed copies the file src to dst and returns "sha256:" and the hex
// SHA-256 of the bytes copied.
func copyHashed(src, dst string) (string, error) {
	in, err := os.Open(src)
	if err != nil {
		return "", err
	}
	defer in.Close()
	out, err := os.OpenFile(dst, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return "", err
	}
	h := sha256.New()
	if _, err := io.Copy(io.MultiWriter(out, h), in); err != nil {
		out.Close()
		return "", err
	}
	if err := out.Close(); err != nil {
		return "", err
	}
	return "sha256:" + hex.EncodeToString(h.Sum(nil)), nil
}
