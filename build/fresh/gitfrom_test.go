package fresh

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

// TestGitDatesFrom grows a random history (edits, additions, deletions,
// pure renames, renames with edits, files moved in and out of docs/, side
// branches merged back, some forked before the last build and some after,
// a branch switch and committer dates out of order) and, after every
// commit, checks that GitDatesFrom, started from the history of the
// commit before and of one several commits back, gives exactly what a
// full GitDates read gives. The reference is GitDates itself, whose
// dates TestGitDates checks by hand.
func TestGitDatesFrom(t *testing.T) {
	gitEnv(t, hostileConfig)
	r := &repo{tb: t, git: realGit(t), dir: t.TempDir()}
	r.run(nil, "init", "-q")
	runs := shim(t, r.git)
	docs := filepath.Join(r.dir, "docs")
	rnd := rand.New(rand.NewPCG(11, 12))
	long := func(n int) string {
		var b strings.Builder
		for i := range 12 {
			fmt.Fprintf(&b, "Line %d of the reefer manual, revision %d.\n", i, n)
		}
		return b.String()
	}
	var files []string // tracked, relative to the repository root
	exists := func(name string) bool { return slices.Contains(files, name) }
	add := func(name string, n int) {
		r.write(name, long(n))
		if !exists(name) {
			files = append(files, name)
		}
	}
	remove := func(name string) {
		r.run(nil, "rm", "-q", name)
		files = slices.DeleteFunc(files, func(f string) bool { return f == name })
	}
	move := func(from, to string, edit bool, n int) {
		if err := os.MkdirAll(filepath.Dir(filepath.Join(r.dir, to)), 0o755); err != nil {
			t.Fatal(err)
		}
		r.run(nil, "mv", from, to)
		files = slices.DeleteFunc(files, func(f string) bool { return f == from })
		files = append(files, to)
		if edit {
			r.write(to, strings.Replace(long(n), "Line 3", "Line three", 1))
		}
	}
	when := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	commit := func(n int) {
		// Mostly forward, sometimes back: --date-order must not matter.
		when = when.Add(time.Duration(rnd.IntN(48)-6) * time.Hour)
		r.commit(when.Format(time.RFC3339), fmt.Sprintf("c%d", n))
	}
	head := func() string { return strings.TrimSpace(r.run(nil, "rev-parse", "HEAD")) }

	for i := range 6 {
		add(fmt.Sprintf("docs/page%d.md", i), 0)
	}
	add("other/outside.md", 0)
	commit(0)
	ctx := context.Background()
	var past []*GitHistory
	_, h0, err := GitDatesFrom(ctx, docs, nil)
	if err != nil || h0 == nil {
		t.Fatalf("first read: %v, history %v", err, h0)
	}
	past = append(past, h0)

	incremental := 0
	for n := 1; n <= 40; n++ {
		op := rnd.IntN(10)
		t.Logf("commit %d: op %d", n, op)
		switch {
		case n == 25:
			// Switch to a branch forked long ago: not a descendant.
			r.run(nil, "checkout", "-q", "-b", fmt.Sprintf("old%d", n), "HEAD~6")
			files = strings.Fields(strings.ReplaceAll(r.run(nil, "ls-files", "-z"), "\x00", " "))
			add(fmt.Sprintf("docs/branch%d.md", n), n)
			commit(n)
		case op < 3:
			add(files[rnd.IntN(len(files))], n)
			commit(n)
		case op == 3:
			add(fmt.Sprintf("docs/new%d.md", n), n)
			commit(n)
		case op == 4 && len(files) > 3:
			remove(files[rnd.IntN(len(files))])
			commit(n)
		case op == 5:
			from := files[rnd.IntN(len(files))]
			move(from, fmt.Sprintf("docs/moved%d/renamed%d.md", n%3, n), rnd.IntN(2) == 0, n)
			commit(n)
		case op == 6:
			// A side branch merged back: forked now, or a few commits ago.
			base := "HEAD"
			if rnd.IntN(2) == 0 {
				base = "HEAD~2"
			}
			side := fmt.Sprintf("side%d", n)
			r.run(nil, "branch", side, base)
			cur := strings.TrimSpace(r.run(nil, "rev-parse", "--abbrev-ref", "HEAD"))
			r.run(nil, "checkout", "-q", side)
			files = strings.Fields(strings.ReplaceAll(r.run(nil, "ls-files", "-z"), "\x00", " "))
			add(fmt.Sprintf("docs/side%d.md", n), n)
			add(files[rnd.IntN(len(files))], n)
			commit(n)
			r.run(nil, "checkout", "-q", cur)
			when = when.Add(time.Hour)
			r.run([]string{"GIT_COMMITTER_DATE=" + when.Format(time.RFC3339)}, "merge", "-q", "--no-ff", "-m", fmt.Sprintf("merge %d", n), side)
			files = strings.Fields(strings.ReplaceAll(r.run(nil, "ls-files", "-z"), "\x00", " "))
		default:
			// Several commits at once before the next build.
			for k := range 3 {
				add(files[rnd.IntN(len(files))], n*10+k)
				commit(n*10 + k)
			}
		}
		want, err := GitDates(ctx, docs)
		if err != nil {
			t.Fatal(err)
		}
		for _, back := range []int{1, 4} {
			if back > len(past) {
				continue
			}
			before := runs()
			log := logRuns(t)
			got, next, err := GitDatesFrom(ctx, docs, past[len(past)-back])
			if err != nil {
				t.Fatalf("commit %d, from %d back: %v", n, back, err)
			}
			if d := diffDates(got, want); d != "" {
				t.Fatalf("commit %d, from %d back: dates differ from a full read:\n%s\nprev head %s\n%s", n, back, d, past[len(past)-back].Head,
					(&repo{tb: t, git: r.git, dir: docs}).run(nil, "log", "--format=%h %cI %s", "--name-status", "--no-merges", "--date-order", "-M", "--relative", "-n", "8", "--", "."))
			}
			if next == nil || next.Head != head() {
				t.Fatalf("commit %d: next history %+v", n, next)
			}
			if runs()-before > 4 {
				t.Errorf("commit %d: %d git processes", n, runs()-before)
			}
			if strings.Contains(strings.Join(logRuns(t)[len(log):], "\n"), "..") {
				incremental++
			}
		}
		_, h, err := GitDatesFrom(ctx, docs, nil)
		if err != nil {
			t.Fatal(err)
		}
		past = append(past, h)
	}
	// Unmoved HEAD: one git process, no log.
	before := runs()
	got, _, err := GitDatesFrom(ctx, docs, past[len(past)-1])
	if err != nil {
		t.Fatal(err)
	}
	want, _ := GitDates(ctx, docs)
	if d := diffDates(got, want); d != "" || runs()-before != 2 { // rev-parse, and the GitDates just above
		t.Errorf("unmoved HEAD: %d git processes; dates differ:\n%s", runs()-before-1, d)
	}
	if incremental < 20 {
		t.Errorf("only %d of the reads took the incremental path", incremental)
	}
	t.Logf("%d incremental reads", incremental)
}

// logRuns returns the git command lines the shim logged so far.
func logRuns(t *testing.T) []string {
	t.Helper()
	for _, dir := range filepath.SplitList(os.Getenv("PATH")) {
		if b, err := os.ReadFile(filepath.Join(dir, "runs.log")); err == nil {
			return strings.Split(strings.TrimSpace(string(b)), "\n")
		}
	}
	return nil
}

// BenchmarkGitDatesFrom times a build's git read on the generated
// repository of BenchmarkGitDates (2000 files, 2000 commits): a full read,
// a read after one new commit (the incremental path), and one where HEAD
// has not moved.
func BenchmarkGitDatesFrom(b *testing.B) {
	gitEnv(b, hostileConfig)
	git := realGit(b)
	dir := b.TempDir()
	files := generateRepo(b, git, dir, 2000, 2000)
	r := &repo{tb: b, git: git, dir: dir}
	ctx := context.Background()
	_, base, err := GitDatesFrom(ctx, dir, nil)
	if err != nil || base == nil || len(base.Dates) != files {
		b.Fatalf("first read: %v", err)
	}
	r.write("section-01/page-0001.md", "# Page 1\n\nOne more revision.\n")
	r.commit("2031-01-01T00:00:00Z", "one more")
	check := func(d map[string]time.Time, err error) {
		if err != nil || len(d) != files {
			b.Fatalf("%d files, %v; want %d", len(d), err, files)
		}
	}
	b.Run("full", func(b *testing.B) {
		for b.Loop() {
			d, _, err := GitDatesFrom(ctx, dir, nil)
			check(d, err)
		}
	})
	b.Run("one-new-commit", func(b *testing.B) {
		for b.Loop() {
			d, _, err := GitDatesFrom(ctx, dir, base)
			check(d, err)
		}
	})
	_, now, _ := GitDatesFrom(ctx, dir, nil)
	b.Run("unmoved", func(b *testing.B) {
		for b.Loop() {
			d, _, err := GitDatesFrom(ctx, dir, now)
			check(d, err)
		}
	})
}
