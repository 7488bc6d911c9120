package fresh

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"
)

// realGit returns the path of the installed git, or skips the test.
func realGit(tb testing.TB) string {
	tb.Helper()
	exe, err := exec.LookPath("git")
	if err != nil {
		tb.Skip("git is not installed: the GitDates tests need a real git to build a repository")
	}
	return exe
}

// gitEnv isolates the test's git runs, and those GitDates starts, from the
// machine's git configuration: a global configuration of the test's own
// (given as text) and no system one.
func gitEnv(tb testing.TB, config string) {
	tb.Helper()
	dir := tb.TempDir()
	cfg := filepath.Join(dir, "gitconfig")
	if err := os.WriteFile(cfg, []byte(config), 0o644); err != nil {
		tb.Fatal(err)
	}
	tb.Setenv("GIT_CONFIG_GLOBAL", cfg)
	tb.Setenv("GIT_CONFIG_NOSYSTEM", "1")
	tb.Setenv("HOME", dir)
}

// repo drives a test repository with the real git, by absolute path so
// that these runs do not go through the counting shim.
type repo struct {
	tb  testing.TB
	git string
	dir string
}

func (r *repo) run(env []string, args ...string) string {
	r.tb.Helper()
	cmd := exec.Command(r.git, append([]string{"-C", r.dir}, args...)...)
	cmd.Env = append(os.Environ(), env...)
	out, err := cmd.CombinedOutput()
	if err != nil {
		r.tb.Fatalf("git %s: %v\n%s", strings.Join(args, " "), err, out)
	}
	return string(out)
}

func (r *repo) write(name, content string) {
	r.tb.Helper()
	p := filepath.Join(r.dir, filepath.FromSlash(name))
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		r.tb.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		r.tb.Fatal(err)
	}
}

// commit commits everything staged and in the work tree (git add -A) with
// the given committer date; the author date is set years away from it, so
// a test that passes shows the committer date is the one used.
func (r *repo) commit(date, msg string) {
	r.tb.Helper()
	r.run(nil, "add", "-A")
	r.run([]string{"GIT_COMMITTER_DATE=" + date, "GIT_AUTHOR_DATE=2001-01-01T00:00:00Z"}, "commit", "-q", "-m", msg)
}

// hostileConfig is a global git configuration that changes what a plain
// "git log" prints; GitDates must not depend on any of it.
const hostileConfig = `[user]
	name = Test
	email = test@example.invalid
[init]
	defaultBranch = main
[commit]
	gpgsign = false
[core]
	quotePath = true
[color]
	ui = always
[log]
	showRoot = false
	date = relative
	decorate = full
	abbrevCommit = true
[diff]
	renames = false
	relative = false
	external = /bin/false
	noprefix = true
[format]
	pretty = oneline
`

// Names with spaces, non-ASCII letters and a double quote: git quotes
// them in its default output (core.quotePath), never with -z.
const (
	unicodeName = "space é ü.md"
	quoteName   = `odd "quoted" name.md`
	longText    = "Station wiring, line 1\nline 2\nline 3\nline 4\nline 5\nline 6\nline 7\nline 8\nline 9\nline 10\n"
)

// makeHistory builds the test repository: the documentation lives in
// docs/, a subfolder, beside files that are not part of it. Dates are
// committer dates; the comment on each commit says what it must prove.
func makeHistory(tb testing.TB) *repo {
	r := &repo{tb: tb, git: realGit(tb), dir: tb.TempDir()}
	r.run(nil, "init", "-q")
	// c1: the first commit (log.showRoot=false must not hide it).
	r.write("docs/a.md", "alpha\n")
	r.write("docs/keep.md", "kept since the start\n")
	r.write("docs/sub/deep.md", "deep v1\n")
	r.write("docs/gone.md", "deleted later\n")
	r.write("docs/edit-src.md", longText)
	r.write("docs/phoenix.md", "first life\n")
	r.write("README.md", "outside the docs\n")
	r.write("other/outside.md", "moved into docs later\n")
	r.commit("2026-01-01T10:00:00Z", "c1")
	// c2: content change of a.md, with a committer offset (+05:00).
	r.write("docs/a.md", "alpha, edited\n")
	r.run(nil, "rm", "-q", "docs/phoenix.md")
	r.commit("2026-02-01T12:00:00+05:00", "c2")
	// c3: a pure rename (R100): b.md keeps a.md's date, c2.
	r.run(nil, "mv", "docs/a.md", "docs/b.md")
	r.commit("2026-03-01T00:00:00Z", "c3")
	// c4: a rename with an edit (R9x): dated by c4.
	if err := os.MkdirAll(filepath.Join(r.dir, "docs", "guide"), 0o755); err != nil {
		tb.Fatal(err)
	}
	r.run(nil, "mv", "docs/edit-src.md", "docs/guide/edited.md")
	r.write("docs/guide/edited.md", strings.Replace(longText, "line 5", "line five", 1))
	r.commit("2026-04-01T00:00:00Z", "c4")
	// c5: an edit in a subfolder, a new file with an odd name, a
	// deletion, and a file re-added under a name deleted in c2.
	r.write("docs/sub/deep.md", "deep v2\n")
	r.write("docs/"+unicodeName, "unicode\n")
	r.write("docs/"+quoteName, "quoted\n")
	r.run(nil, "rm", "-q", "docs/gone.md")
	r.write("docs/phoenix.md", "second life, all new\n")
	r.commit("2026-05-01T00:00:00Z", "c5")
	// c6: a file moved into docs from outside: new to docs, dated c6.
	r.run(nil, "mv", "other/outside.md", "docs/from-outside.md")
	r.commit("2026-06-01T00:00:00Z", "c6")
	// c7: a change outside docs only.
	r.write("README.md", "outside, edited\n")
	r.commit("2026-07-01T00:00:00Z", "c7")
	// c8: a second pure rename of the same file: c.md still has c2's date.
	r.run(nil, "mv", "docs/b.md", "docs/c.md")
	r.commit("2026-08-01T00:00:00Z", "c8")
	// A side branch edits keep.md (s1) while main edits deep.md (c9);
	// a merge (c10) joins them. The merge's own date counts for nothing.
	r.run(nil, "checkout", "-q", "-b", "side")
	r.write("docs/keep.md", "kept, edited on a branch\n")
	r.commit("2026-08-10T00:00:00Z", "s1")
	r.run(nil, "checkout", "-q", "main")
	r.write("docs/sub/deep.md", "deep v3\n")
	r.commit("2026-08-20T00:00:00Z", "c9")
	r.run([]string{"GIT_COMMITTER_DATE=2026-08-25T00:00:00Z"}, "merge", "-q", "--no-ff", "-m", "c10", "side")
	// Untracked, and an uncommitted edit: neither is seen.
	r.write("docs/untracked.md", "not added\n")
	r.write("docs/keep.md", "edited, not committed\n")
	return r
}

// docsDates are the dates GitDates must give for docs/, worked out by hand
// from makeHistory.
var docsDates = map[string]string{
	"c.md":            "2026-02-01T07:00:00Z", // c2 in UTC, through two pure renames
	"keep.md":         "2026-08-10T00:00:00Z", // s1, on the side branch
	"sub/deep.md":     "2026-08-20T00:00:00Z", // c9
	"guide/edited.md": "2026-04-01T00:00:00Z", // c4, rename with an edit
	unicodeName:       "2026-05-01T00:00:00Z", // c5
	quoteName:         "2026-05-01T00:00:00Z", // c5
	"phoenix.md":      "2026-05-01T00:00:00Z", // c5, re-added
	"from-outside.md": "2026-06-01T00:00:00Z", // c6
}

func wantDates(tb testing.TB, prefix string, m map[string]string) map[string]time.Time {
	out := map[string]time.Time{}
	for k, v := range m {
		t, err := time.Parse(time.RFC3339, v)
		if err != nil {
			tb.Fatal(err)
		}
		out[prefix+k] = t
	}
	return out
}

func diffDates(got, want map[string]time.Time) string {
	var keys []string
	for k := range got {
		keys = append(keys, k)
	}
	for k := range want {
		if _, ok := got[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	var b strings.Builder
	for _, k := range keys {
		g, gok := got[k]
		w, wok := want[k]
		switch {
		case !gok:
			fmt.Fprintf(&b, "  %q: missing, want %s\n", k, w.Format(time.RFC3339))
		case !wok:
			fmt.Fprintf(&b, "  %q: %s, want absent\n", k, g.Format(time.RFC3339))
		case !g.Equal(w) || g.Location() != time.UTC:
			fmt.Fprintf(&b, "  %q: %s, want %s\n", k, g, w.Format(time.RFC3339))
		}
	}
	return b.String()
}

// shim puts a script named git first on PATH; it logs each run and then
// runs the real git. It returns a function giving the number of runs.
func shim(tb testing.TB, realGit string) func() int {
	tb.Helper()
	bin := tb.TempDir()
	log := filepath.Join(bin, "runs.log")
	script := fmt.Sprintf("#!/bin/sh\necho \"$*\" >> '%s'\nexec '%s' \"$@\"\n", log, realGit)
	if err := os.WriteFile(filepath.Join(bin, "git"), []byte(script), 0o755); err != nil {
		tb.Fatal(err)
	}
	tb.Setenv("PATH", bin+string(os.PathListSeparator)+os.Getenv("PATH"))
	return func() int {
		b, err := os.ReadFile(log)
		if errors.Is(err, os.ErrNotExist) {
			return 0
		}
		if err != nil {
			tb.Fatal(err)
		}
		return bytes.Count(b, []byte("\n"))
	}
}

func TestGitDates(t *testing.T) {
	gitEnv(t, hostileConfig)
	r := makeHistory(t)
	runs := shim(t, r.git)
	root := map[string]string{"README.md": "2026-07-01T00:00:00Z"}
	for k, v := range docsDates {
		root["docs/"+k] = v
	}
	// From the root, the move of c6 is a pure rename inside the tree:
	// the file keeps its c1 date. From docs/ it is a new file.
	root["docs/from-outside.md"] = "2026-01-01T10:00:00Z"
	tests := []struct {
		name string
		dir  string
		want map[string]time.Time
	}{
		{"subfolder", filepath.Join(r.dir, "docs"), wantDates(t, "", docsDates)},
		{"repository root", r.dir, wantDates(t, "", root)},
		{"deeper subfolder", filepath.Join(r.dir, "docs", "sub"), wantDates(t, "", map[string]string{"deep.md": "2026-08-20T00:00:00Z"})},
		// As in a git hook: GIT_DIR set, relative to the repository root.
		{"hook environment", filepath.Join(r.dir, "docs"), wantDates(t, "", docsDates)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if tt.name == "hook environment" {
				t.Setenv("GIT_DIR", ".git")
				t.Setenv("GIT_WORK_TREE", ".")
			}
			before := runs()
			got, err := GitDates(context.Background(), tt.dir)
			if err != nil {
				t.Fatal(err)
			}
			if d := diffDates(got, tt.want); d != "" {
				t.Errorf("GitDates(%s) differs:\n%s", tt.name, d)
			}
			if n := runs() - before; n != 1 {
				t.Errorf("GitDates started %d git processes, want exactly 1", n)
			}
		})
	}
}

func TestGitDatesNoHistory(t *testing.T) {
	gitEnv(t, hostileConfig)
	git := realGit(t)

	t.Run("not a work tree", func(t *testing.T) {
		got, err := GitDates(context.Background(), t.TempDir())
		if got != nil || err != nil {
			t.Errorf("GitDates = %v, %v; want nil, nil", got, err)
		}
	})
	t.Run("no commit yet", func(t *testing.T) {
		r := &repo{tb: t, git: git, dir: t.TempDir()}
		r.run(nil, "init", "-q")
		r.write("a.md", "x\n")
		got, err := GitDates(context.Background(), r.dir)
		if got == nil || len(got) != 0 || err != nil {
			t.Errorf("GitDates = %v, %v; want an empty map, nil", got, err)
		}
	})
	t.Run("git not installed", func(t *testing.T) {
		r := makeHistory(t)
		t.Setenv("PATH", t.TempDir())
		got, err := GitDates(context.Background(), r.dir)
		if got != nil || err != nil {
			t.Errorf("GitDates = %v, %v; want nil, nil", got, err)
		}
	})
	t.Run("missing folder is an error", func(t *testing.T) {
		dir := filepath.Join(t.TempDir(), "nowhere")
		got, err := GitDates(context.Background(), dir)
		if got != nil || err == nil || !strings.Contains(err.Error(), "git log failed: fatal: cannot change to") {
			t.Errorf("GitDates = %v, %v; want a git failure", got, err)
		}
	})
	t.Run("cancelled", func(t *testing.T) {
		r := makeHistory(t)
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		got, err := GitDates(ctx, r.dir)
		if got != nil || !errors.Is(err, context.Canceled) {
			t.Errorf("GitDates = %v, %v; want context.Canceled", got, err)
		}
	})
}

// TestGitDatesShallow clones the history with depth 1, as CI checkouts
// do: every file is then dated by the one commit there is, and GitDates
// says so with ErrShallow.
func TestGitDatesShallow(t *testing.T) {
	gitEnv(t, hostileConfig)
	r := makeHistory(t)
	clone := &repo{tb: t, git: r.git, dir: t.TempDir()}
	clone.run(nil, "clone", "-q", "--depth", "1", "--no-local", "file://"+filepath.ToSlash(r.dir), ".")
	head := strings.TrimSpace(clone.run(nil, "rev-parse", "HEAD"))
	runs := shim(t, r.git)
	got, err := GitDates(context.Background(), filepath.Join(clone.dir, "docs"))
	if !errors.Is(err, ErrShallow) {
		t.Fatalf("GitDates error = %v, want ErrShallow", err)
	}
	want := fmt.Sprintf("git history is shallow: 8 files are dated by commit %.12s where the history is cut; fetch the full history (git fetch --unshallow) for their real dates", head)
	if err.Error() != want {
		t.Errorf("error\n got %s\nwant %s", err, want)
	}
	all := map[string]string{}
	for k := range docsDates {
		all[k] = "2026-08-25T00:00:00Z" // the merge c10, HEAD
	}
	if d := diffDates(got, wantDates(t, "", all)); d != "" {
		t.Errorf("GitDates differs:\n%s", d)
	}
	if n := runs(); n != 1 {
		t.Errorf("GitDates started %d git processes, want exactly 1", n)
	}
}

// TestHistoryRead feeds the parser outputs git itself would not give in
// these tests: a copy, a type change, a header without files, output
// without a final NUL, and broken output.
func TestHistoryRead(t *testing.T) {
	tests := []struct {
		name, in string
		want     map[string]string
		err      string
	}{
		{"copy and type change",
			"\x01aaa 1000\x00\nC075\x00x.md\x00y.md\x00T\x00l.md\x00\x01bbb 900\x00\nM\x00x.md\x00",
			map[string]string{"y.md": "1970-01-01T00:16:40Z", "l.md": "1970-01-01T00:16:40Z", "x.md": "1970-01-01T00:15:00Z"}, ""},
		{"empty commit then files", "\x01aaa 1000\x00\x01bbb 900\x00\nA\x00x.md", map[string]string{"x.md": "1970-01-01T00:15:00Z"}, ""},
		{"delete then older edits", "\x01a 1000\x00\nD\x00x.md\x00\x01b 900\x00\nM\x00x.md\x00\x01c 800\x00\nA\x00x.md\x00", map[string]string{}, ""},
		{"rename target was another file", "\x01a 1000\x00\nR100\x00old.md\x00new.md\x00\x01b 900\x00\nM\x00new.md\x00\x01c 800\x00\nM\x00old.md\x00",
			map[string]string{"new.md": "1970-01-01T00:13:20Z"}, ""},
		{"status before commit", "M\x00x.md\x00", nil, `file status "M" before any commit`},
		{"bad header", "\x01abc\x00", nil, `bad commit header "\x01abc"`},
		{"rename without target", "\x01a 1\x00\nR090\x00x.md", nil, `file status "R090" without a second path: unexpected EOF`},
		{"status without path", "\x01a 1\x00\nM\x00", nil, `file status "M" without a path: unexpected EOF`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h := newHistory(nil)
			err := h.read(bufio.NewReader(strings.NewReader(tt.in)))
			if tt.err != "" {
				if err == nil || err.Error() != tt.err {
					t.Fatalf("error %v, want %s", err, tt.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if d := diffDates(h.dates, wantDates(t, "", tt.want)); d != "" {
				t.Errorf("dates differ:\n%s", d)
			}
		})
	}
}

// TestReadTokenLong checks a token longer than the reader's buffer.
func TestReadTokenLong(t *testing.T) {
	long := strings.Repeat("d/", 40) + strings.Repeat("x", 100) + ".md"
	r := bufio.NewReaderSize(strings.NewReader(long+"\x00rest"), 16)
	tok, err := readToken(r)
	if err != nil || string(tok) != long {
		t.Fatalf("readToken = %q, %v", tok, err)
	}
	tok, err = readToken(r)
	if err != nil || string(tok) != "rest" {
		t.Fatalf("readToken = %q, %v", tok, err)
	}
}

// FuzzHistoryRead checks that any output gives a result or an error,
// never a panic, and that every date comes from a commit header.
func FuzzHistoryRead(f *testing.F) {
	f.Add("\x01aaa 1000\x00\nC075\x00x.md\x00y.md\x00T\x00l.md\x00\x01bbb 900\x00\nM\x00x.md\x00")
	f.Add("\x01a 1000\x00\nR100\x00old.md\x00new.md\x00\x01b 900\x00\nM\x00new.md\x00\x01c 800\x00\nM\x00old.md\x00")
	f.Add("\x01a 1000\x00\nD\x00x.md\x00\x01b 900\x00\nM\x00x.md\x00")
	f.Fuzz(func(t *testing.T, s string) {
		h := newHistory(nil)
		if err := h.read(bufio.NewReader(strings.NewReader(s))); err != nil {
			return
		}
		seen := map[int64]bool{}
		for _, tok := range strings.Split(s, "\x00") {
			tok = strings.TrimLeft(tok, "\n")
			if _, secs, ok := strings.Cut(strings.TrimPrefix(tok, "\x01"), " "); ok && strings.HasPrefix(tok, "\x01") {
				if n, err := strconv.ParseInt(secs, 10, 64); err == nil {
					seen[n] = true
				}
			}
		}
		for p, d := range h.dates {
			if !seen[d.Unix()] || p == "" {
				t.Fatalf("path %q dated %s, not a commit date of the input", p, d)
			}
		}
	})
}

// BenchmarkGitDates times GitDates on a generated repository of 2000
// files and 500 commits (one import, a few renames and deletions), built
// once with git fast-import. MB/s counts the bytes of git log output.
func BenchmarkGitDates(b *testing.B) {
	gitEnv(b, hostileConfig)
	git := realGit(b)
	dir := b.TempDir()
	files := generateRepo(b, git, dir, 2000, 500)
	out, err := exec.Command(git, append([]string{"-C", dir}, gitLogArgs...)...).Output()
	if err != nil {
		b.Fatal(err)
	}
	b.Run("git+parse", func(b *testing.B) {
		b.SetBytes(int64(len(out)))
		for b.Loop() {
			m, err := GitDates(context.Background(), dir)
			if err != nil || len(m) != files {
				b.Fatalf("GitDates: %d files, %v; want %d", len(m), err, files)
			}
		}
		b.ReportMetric(float64(files), "files")
	})
	b.Run("parse", func(b *testing.B) {
		b.SetBytes(int64(len(out)))
		for b.Loop() {
			h := newHistory(nil)
			if err := h.read(bufio.NewReaderSize(bytes.NewReader(out), 64<<10)); err != nil || len(h.dates) != files {
				b.Fatalf("read: %d files, %v", len(h.dates), err)
			}
		}
	})
}

// generateRepo writes a history of nCommits commits over nFiles files into
// a new repository at dir with git fast-import (one process), checks it
// out, and returns the number of files at the end. After the first
// commit, each commit edits 8 files and, every 10th commit, renames one
// and deletes one while adding another.
func generateRepo(b *testing.B, git, dir string, nFiles, nCommits int) int {
	rng := rand.New(rand.NewPCG(1, 2))
	live := make([]string, 0, nFiles)
	for i := range nFiles {
		live = append(live, fmt.Sprintf("section-%02d/page-%04d.md", i%40, i))
	}
	var s bytes.Buffer
	blob := func(path, text string) {
		fmt.Fprintf(&s, "M 100644 inline %s\ndata %d\n%s\n", path, len(text)+1, text)
	}
	page := func(i, rev int) string {
		return fmt.Sprintf("# Page %d\n\nRevision %d of the page about gauge %d.\n%s", i, rev, i, strings.Repeat("Body text of a documentation page.\n", 20))
	}
	when := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC).Unix()
	next := nFiles
	for c := range nCommits {
		when += 3600 + rng.Int64N(86400)
		msg := fmt.Sprintf("c%03d", c)
		fmt.Fprintf(&s, "commit refs/heads/main\ncommitter Bench <bench@example.invalid> %d +0000\ndata %d\n%s\n", when, len(msg), msg)
		if c == 0 {
			for i, p := range live {
				blob(p, page(i, 0))
			}
			continue
		}
		for range 8 {
			i := rng.IntN(len(live))
			blob(live[i], page(i, c))
		}
		if c%10 == 0 {
			i := rng.IntN(len(live))
			to := fmt.Sprintf("section-%02d/renamed-%04d.md", i%40, c)
			fmt.Fprintf(&s, "R %s %s\n", live[i], to)
			live[i] = to
			j := rng.IntN(len(live))
			fmt.Fprintf(&s, "D %s\n", live[j])
			live[j] = fmt.Sprintf("section-%02d/page-%04d.md", next%40, next)
			blob(live[j], page(next, c))
			next++
		}
	}
	r := &repo{tb: b, git: git, dir: dir}
	r.run(nil, "init", "-q")
	cmd := exec.Command(git, "-C", dir, "fast-import", "--quiet")
	cmd.Stdin = &s
	if out, err := cmd.CombinedOutput(); err != nil {
		b.Fatalf("git fast-import: %v\n%s", err, out)
	}
	r.run(nil, "reset", "-q", "--hard", "main")
	// Sanity: the tree holds exactly the live files.
	tracked := strings.Count(r.run(nil, "ls-files"), "\n")
	if tracked != len(live) {
		b.Fatalf("generated %d files, git tracks %d", len(live), tracked)
	}
	return len(live)
}
