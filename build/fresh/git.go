package fresh

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"
)

// ErrShallow is returned, wrapped and together with a usable map, by
// GitDates when the history of a shallow clone ends before some files'
// last change (a CI checkout with fetch depth 1, say). The dates of those
// files are the date of the commit where the history was cut: an upper
// bound of the true date, so stale pages may look fresh. Fetching the full
// history (git fetch --unshallow) cures it.
var ErrShallow = errors.New("git history is shallow")

// gitLogArgs are the arguments of the one git run of GitDates, after
// "git -C dir". Each one is there for a reason:
//
//   - log.showSignature=false: a signature check would print into the log;
//   - --no-color, --no-ext-diff, --no-textconv: plain output whatever the
//     user's configuration (--name-status needs no content, but an
//     external diff driver must never run);
//   - -z: paths verbatim, NUL-terminated, never quoted (git-log(1), "-z"),
//     so core.quotePath and odd names (spaces, non-ASCII, newlines) do not
//     matter;
//   - --format=%x01%H %ct: a header per commit that no status token can
//     look like (statuses are letters), with the commit id (to spot a
//     shallow boundary) and the committer date in Unix seconds;
//   - --name-status -M: one status letter and the path(s) per changed
//     file, renames detected with git's default 50% similarity; R100 is a
//     pure rename;
//   - --root: the first commit lists its files even when log.showRoot is
//     off;
//   - --no-merges: git log shows no diff for a merge commit unless asked,
//     so merges would only cost a header; the side branch's own commits
//     are walked and carry its changes;
//   - --date-order: children before parents (needed to follow renames
//     backwards), otherwise newest first;
//   - --relative and the pathspec ".": only files under dir, with paths
//     relative to it.
var gitLogArgs = []string{
	"-c", "log.showSignature=false",
	"log", "--no-color", "--no-ext-diff", "--no-textconv",
	"-z", "--format=%x01%H %ct", "--name-status", "-M", "--root",
	"--no-merges", "--date-order", "--relative", "--", ".",
}

// GitDates returns, for every file under dir that is tracked by git, the
// committer date (UTC) of the last commit that changed its content, keyed
// by its path now, relative to dir and slash-separated. It starts exactly
// one git process for the whole tree, whatever its size, and reads its
// output as it comes.
//
// Renames are followed: a file renamed from a.md to b.md is keyed b.md and
// dated by its last content change, under either name. A pure rename
// (100% similar, R100) is not a content change and does not date the
// file; a rename with edits does. A file moved into dir from outside it
// counts as added by that commit. Deleted files are absent, and so are
// untracked ones; uncommitted edits are not seen (the file time tells of
// them).
//
// The repository is the one that holds dir, found as git finds it from
// there; GIT_DIR and GIT_WORK_TREE in the environment (set when git runs
// a hook) are ignored. When dir is not inside a git work tree, or git is
// not installed,
// GitDates returns (nil, nil): a plain folder simply has no git dates. A
// repository with no commit yet gives an empty map. Any other failure of
// git is an error. In a shallow clone whose history is cut before some
// files' last change, it returns the map and an error wrapping ErrShallow.
//
// Merges are walked through their parents (git log's default history
// simplification), so on a side branch a file gets the date of the side
// branch's commit, not of the merge.
func GitDates(ctx context.Context, dir string) (map[string]time.Time, error) {
	h, err := readLog(ctx, dir, nil)
	if h == nil || err != nil {
		return nil, err
	}
	return h.dates, h.shallowErr()
}

// readLog runs git log (gitLogArgs) over revs, HEAD when nil, and reads
// it. It returns nil and no error when dir is not in a git work tree or
// git is not installed, and an empty history for a repository with no
// commit yet.
func readLog(ctx context.Context, dir string, revs []string) (*history, error) {
	exe, err := exec.LookPath("git")
	if err != nil {
		return nil, nil
	}
	args := append([]string{"-C", dir}, gitLogArgs[:len(gitLogArgs)-2]...)
	args = append(append(args, revs...), gitLogArgs[len(gitLogArgs)-2:]...)
	cmd := exec.CommandContext(ctx, exe, args...)
	cmd.Env = gitEnviron(os.Environ())
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.StdoutPipe()
	if err != nil {
		return nil, fmt.Errorf("git dates for %s: %w", dir, err)
	}
	if err := cmd.Start(); err != nil {
		return nil, fmt.Errorf("git dates for %s: %w", dir, err)
	}
	h := newHistory(shallowCommits(dir))
	perr := h.read(bufio.NewReaderSize(out, 64<<10))
	if perr != nil {
		// Let git finish so Wait does not hang on a full pipe.
		_, _ = io.Copy(io.Discard, out)
	}
	werr := cmd.Wait()
	if werr != nil {
		msg := strings.TrimSpace(stderr.String())
		switch {
		case ctx.Err() != nil:
			return nil, fmt.Errorf("git dates for %s: %w", dir, ctx.Err())
		case strings.Contains(msg, "not a git repository"):
			return nil, nil
		case strings.Contains(msg, "does not have any commits yet"):
			return newHistory(nil), nil
		}
		if msg == "" {
			msg = werr.Error()
		}
		return nil, fmt.Errorf("git dates for %s: git log failed: %s", dir, firstLine(msg))
	}
	if perr != nil {
		return nil, fmt.Errorf("git dates for %s: reading git log: %w", dir, perr)
	}
	return h, nil
}

// shallowErr is the ErrShallow error for a history read to a shallow
// clone's cut, or nil.
func (h *history) shallowErr() error {
	if len(h.cut) == 0 {
		return nil
	}
	return fmt.Errorf("%w: %d files are dated by commit %.12s where the history is cut; fetch the full history (git fetch --unshallow) for their real dates", ErrShallow, len(h.cut), h.cutAt)
}

// GitHistory is what GitDatesFrom learned of a folder's git history, for
// the next build to start from (see GitDatesFrom). Its fields are exported
// so that a build cache can save it.
type GitHistory struct {
	Dir   string               // the folder, absolute
	Head  string               // the commit HEAD named
	Dates map[string]time.Time // GitDates of Dir at Head
}

// GitDatesFrom returns what GitDates returns, reading as little history
// as it can, and the GitHistory to give it on the next build (nil when
// there is nothing worth keeping: no repository, a shallow history, an
// error).
//
// With prev from a build of the same folder: when HEAD has not moved, no
// history is read at all; when every commit since prev.Head descends
// from it (new commits on top, or merges of branches started after it)
// only those commits are read, and the older dates are carried forward
// through their renames and deletions; otherwise (a rebase, a branch
// switch, a merge of an older branch) the whole history is read again.
// A file's date is the latest of its content changes (see GitDates), and
// the older history's latest changes are carried forward, so the dates
// are exactly those of a full read
// (TestGitDatesFrom checks it on random histories). It starts up to four
// git processes: rev-parse for HEAD, rev-list twice to check the descent,
// and log.
func GitDatesFrom(ctx context.Context, dir string, prev *GitHistory) (map[string]time.Time, *GitHistory, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, nil, err
	}
	head := GitOutput(ctx, dir, "rev-parse", "--verify", "-q", "HEAD^{commit}")
	if head == "" {
		// No repository, no commit, no git: GitDates says which.
		d, err := GitDates(ctx, dir)
		return d, nil, err
	}
	if prev != nil && prev.Dir == abs && prev.Dates != nil {
		if prev.Head == head {
			return copyDates(prev.Dates), prev, nil
		}
		if descends(ctx, dir, prev.Head, head) {
			h, err := readLog(ctx, dir, []string{prev.Head + ".." + head})
			if err == nil && h != nil && len(h.cut) == 0 {
				h.carry(prev.Dates)
				return copyDates(h.dates), &GitHistory{Dir: abs, Head: head, Dates: h.dates}, nil
			}
		}
	}
	h, err := readLog(ctx, dir, []string{head})
	if h == nil || err != nil {
		return nil, nil, err
	}
	if err := h.shallowErr(); err != nil {
		return h.dates, nil, err
	}
	return copyDates(h.dates), &GitHistory{Dir: abs, Head: head, Dates: h.dates}, nil
}

// carry adds the dates of the history before the commits h read, keyed
// by path as of the newest commit of that history: each file keeps the
// later of its dates under its name now (as set does while reading, since
// a file's date is its latest content change on any branch); files h saw
// deleted are left out.
func (h *history) carry(older map[string]time.Time) {
	for p, d := range older {
		now := h.current([]byte(p))
		if now == "" {
			continue
		}
		if cur, ok := h.dates[now]; !ok || d.After(cur) {
			h.dates[now] = d
		}
	}
}

// descends reports whether every commit reachable from head and not from
// base descends from base: git lists as many commits for base..head as
// for --ancestry-path base..head, and at least one.
func descends(ctx context.Context, dir, base, head string) bool {
	all := GitOutput(ctx, dir, "rev-list", "--count", base+".."+head)
	path := GitOutput(ctx, dir, "rev-list", "--count", "--ancestry-path", base+".."+head)
	return all != "" && all != "0" && all == path
}

// gitOutput runs git in dir and returns its output, trimmed, or "" when
// it fails.
func GitOutput(ctx context.Context, dir string, args ...string) string {
	exe, err := exec.LookPath("git")
	if err != nil {
		return ""
	}
	cmd := exec.CommandContext(ctx, exe, append([]string{"-C", dir}, args...)...)
	cmd.Env = gitEnviron(os.Environ())
	out, err := cmd.Output()
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(out))
}

func copyDates(m map[string]time.Time) map[string]time.Time {
	out := make(map[string]time.Time, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}

// gitEnviron returns env for the git run: messages in English, to
// recognise "not a git repository", and without the variables that point
// git at a repository (GIT_DIR and friends). git sets those when it runs a
// hook, with GIT_DIR often relative (".git"); left in place they would
// override the discovery from dir that GitDates promises, and a relative
// one would not even resolve after -C dir.
func gitEnviron(env []string) []string {
	out := make([]string, 0, len(env)+2)
	for _, kv := range env {
		name, _, _ := strings.Cut(kv, "=")
		switch name {
		case "GIT_DIR", "GIT_WORK_TREE", "GIT_COMMON_DIR", "GIT_PREFIX", "GIT_INDEX_FILE", "LC_ALL", "LANGUAGE":
			continue
		}
		out = append(out, kv)
	}
	return append(out, "LC_ALL=C", "LANGUAGE=C")
}

func firstLine(s string) string {
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		return s[:i]
	}
	return s
}

// history follows git log's output from the newest commit back.
type history struct {
	dates map[string]time.Time // result: path now -> last content change
	// names maps a path as it was at the point of history being read to
	// the path of the same file now; "" means the file no longer exists
	// (it was deleted, or the name belonged to another, older file). A
	// path not in names has not been renamed or deleted by any newer
	// commit, so it is the file's name now.
	names map[string]string
	// shallow holds the boundary commits of a shallow clone (nil for a
	// complete history); cut the paths dated by one of them, and cutAt
	// one such commit.
	shallow map[string]bool
	cut     map[string]bool
	cutAt   string
	// The commit being read.
	when     time.Time
	boundary bool
	hash     string
}

func newHistory(shallow map[string]bool) *history {
	return &history{dates: map[string]time.Time{}, names: map[string]string{}, shallow: shallow, cut: map[string]bool{}}
}

// read parses the NUL-separated output of gitLogArgs: per commit a token
// "\x01<hash> <unix seconds>", then per changed file a status token
// (a letter, with a similarity score for R and C; git puts a newline
// before the first) and one path, or two for R and C.
func (h *history) read(r *bufio.Reader) error {
	inCommit := false
	for {
		tok, err := readToken(r)
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		tok = bytes.TrimLeft(tok, "\n")
		if len(tok) == 0 {
			continue
		}
		if tok[0] == 1 {
			hash, secs, ok := bytes.Cut(tok[1:], []byte(" "))
			n, ok2 := parseSeconds(secs)
			if !ok || !ok2 {
				return fmt.Errorf("bad commit header %q", tok)
			}
			h.when = time.Unix(n, 0).UTC()
			h.boundary = h.shallow[string(hash)]
			if h.boundary {
				h.hash = string(hash)
			}
			inCommit = true
			continue
		}
		if !inCommit {
			return fmt.Errorf("file status %q before any commit", tok)
		}
		status := tok[0]
		pure := status == 'R' && string(tok[1:]) == "100"
		p1, err := readToken(r)
		if err == nil && len(p1) == 0 {
			err = errors.New("empty path")
		}
		if err != nil {
			return fmt.Errorf("file status %q without a path: %w", tok, noEOF(err))
		}
		switch status {
		case 'R', 'C':
			from := string(p1)
			p2, err := readToken(r)
			if err == nil && len(p2) == 0 {
				err = errors.New("empty path")
			}
			if err != nil {
				return fmt.Errorf("file status %q without a second path: %w", tok, noEOF(err))
			}
			if status == 'C' {
				// Not asked for (no -C), but harmless: the copy is new.
				h.touch(p2)
				continue
			}
			to := string(p2)
			now := h.current(p2)
			if now != "" && !pure {
				h.set(now)
			}
			// Older commits knew the file as from, and the name to was
			// not this file before this commit.
			h.names[to] = ""
			h.names[from] = now
		case 'D':
			// Older commits touching this name touch a file that is gone
			// (or was replaced later, which the newer A already dated).
			h.names[string(p1)] = ""
		default:
			// A (added), M (modified), T (type change), U, X, B: a
			// content change. An added name needs no mark for older
			// commits: in a line of history the name was free before
			// it was added, so an older commit that touches it is
			// older than the D or R that freed it, and that D or R
			// has already set names.
			h.touch(p1)
		}
	}
}

// parseSeconds reads a decimal Unix time, maybe negative.
func parseSeconds(b []byte) (int64, bool) {
	neg := len(b) > 0 && b[0] == '-'
	if neg {
		b = b[1:]
	}
	if len(b) == 0 || len(b) > 18 {
		return 0, false
	}
	var n int64
	for _, c := range b {
		if c < '0' || c > '9' {
			return 0, false
		}
		n = n*10 + int64(c-'0')
	}
	if neg {
		n = -n
	}
	return n, true
}

// current returns the path now of the file named p at the commit being
// read, or "" when that file no longer exists.
func (h *history) current(p []byte) string {
	if now, ok := h.names[string(p)]; ok {
		return now
	}
	return string(p)
}

// touch records a content change, in the commit being read, of the file
// named p at that commit. It allocates only when it stores a new path:
// looking a map up with string(p) does not copy p.
func (h *history) touch(p []byte) {
	if now, ok := h.names[string(p)]; ok {
		if now != "" {
			h.set(now)
		}
		return
	}
	if old, ok := h.dates[string(p)]; ok && !h.when.After(old) {
		return // dated by a newer commit already
	}
	h.set(string(p))
}

// set dates the file at path now by the commit being read, unless it has
// a later date. Commits come newest first, but across branches
// --date-order only promises children before parents, so the latest date
// is kept.
func (h *history) set(now string) {
	if old, ok := h.dates[now]; ok && !h.when.After(old) {
		return
	}
	h.dates[now] = h.when
	if h.boundary {
		h.cut[now], h.cutAt = true, h.hash
	} else if h.shallow != nil {
		delete(h.cut, now)
	}
}

// readToken returns the bytes up to the next NUL, without it. The slice
// is valid until the next read. Output ending without a NUL still gives
// its last token.
func readToken(r *bufio.Reader) ([]byte, error) {
	tok, err := r.ReadSlice(0)
	if err == bufio.ErrBufferFull {
		// A token longer than the buffer (a path over 64 KiB): collect it.
		buf := append([]byte(nil), tok...)
		for err == bufio.ErrBufferFull {
			tok, err = r.ReadSlice(0)
			buf = append(buf, tok...)
		}
		tok = buf
	}
	if err == io.EOF && len(tok) > 0 {
		return tok, nil
	}
	if err != nil {
		return nil, err
	}
	return tok[:len(tok)-1], nil
}

func noEOF(err error) error {
	if err == io.EOF {
		return io.ErrUnexpectedEOF
	}
	return err
}

// shallowCommits returns the boundary commits of a shallow clone holding
// dir, from the "shallow" file of its git directory (gitrepository-
// layout(5)), or nil when the repository is complete. It reads files
// instead of asking git, so that GitDates stays one git run; it finds the
// git directory the way git does by default, walking up from dir to a
// ".git" folder or a ".git" file ("gitdir: <path>", used by work trees and
// submodules, whose "commondir" file then names the shared directory).
func shallowCommits(dir string) map[string]bool {
	d, err := filepath.Abs(dir)
	if err != nil {
		return nil
	}
	gitDir := ""
	for {
		p := filepath.Join(d, ".git")
		if fi, err := os.Stat(p); err == nil {
			if fi.IsDir() {
				gitDir = p
			} else if b, err := os.ReadFile(p); err == nil {
				s, ok := strings.CutPrefix(strings.TrimSpace(string(b)), "gitdir:")
				if !ok {
					return nil
				}
				gitDir = strings.TrimSpace(s)
				if !filepath.IsAbs(gitDir) {
					gitDir = filepath.Join(d, gitDir)
				}
			}
			break
		}
		parent := filepath.Dir(d)
		if parent == d {
			return nil
		}
		d = parent
	}
	if gitDir == "" {
		return nil
	}
	if b, err := os.ReadFile(filepath.Join(gitDir, "commondir")); err == nil {
		c := strings.TrimSpace(string(b))
		if !filepath.IsAbs(c) {
			c = filepath.Join(gitDir, c)
		}
		gitDir = c
	}
	b, err := os.ReadFile(filepath.Join(gitDir, "shallow"))
	if err != nil {
		return nil
	}
	m := map[string]bool{}
	for _, l := range strings.Fields(string(b)) {
		m[l] = true
	}
	return m
}
