package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

var updateGolden = flag.Bool("update-golden", false, "rewrite testdata/golden from the example knowledge base")

// readPassages reads a bundle's passages.jsonl.
func readPassages(t *testing.T, dir string) []build.Passage {
	t.Helper()
	f, err := os.Open(filepath.Join(dir, "passages.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []build.Passage
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<26)
	for sc.Scan() {
		var p build.Passage
		if err := json.Unmarshal(sc.Bytes(), &p); err != nil {
			t.Fatalf("passages.jsonl line %d: %v", len(out)+1, err)
		}
		out = append(out, p)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

func mustBuild(t *testing.T, src, out string, extra ...string) (stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	if code := run(append([]string{"build", src, "-o", out}, extra...), &o, &e); code != exitOK {
		t.Fatalf("kbc build %s: exit %d\n%s", src, code, e.String())
	}
	return o.String(), e.String()
}

// stableManifest returns manifest.json without the fields that change with
// the clock or the commit of this repository.
func stableManifest(t *testing.T, dir string) []byte {
	t.Helper()
	data, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"built_at", "source_commit", "source_dirty"} {
		delete(m, k)
	}
	out, _ := json.MarshalIndent(m, "", "  ")
	return append(out, '\n')
}

// TestExampleGolden pins the bundle built from the example knowledge base:
// its passages, its manifest and its reports.
// Rewrite with: go test ./cmd/kbc -run TestExampleGolden -update-golden
//
// The handbook is copied out of this repository first, with every file
// time set to one instant: pages without a date in their front matter are
// then dated by that file time, not by this repository's git history,
// which changes with every commit and may be shallow in CI.
func TestExampleGolden(t *testing.T) {
	src := copyTree(t, "../../examples/handbook", time.Date(2026, 11, 20, 9, 0, 0, 0, time.UTC))
	out := filepath.Join(t.TempDir(), "b")
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200") // 2026-12-01T00:00:00Z
	mustBuild(t, src, out)
	files := map[string][]byte{
		"passages.jsonl": mustRead(t, filepath.Join(out, "passages.jsonl")),
		"manifest.json":  stableManifest(t, out),
	}
	for _, r := range []string{bundle.StalenessJSON, bundle.StalenessMarkdown, bundle.DuplicatesJSON, bundle.DuplicatesMD, bundle.BoilerplateJSON, bundle.BoilerplateMD,
		bundle.SecretsJSON, bundle.SecretsMD, bundle.HiddenJSON, bundle.HiddenMD, bundle.ReportsHTML} {
		files[r] = mustRead(t, filepath.Join(out, filepath.FromSlash(r)))
	}
	for name, got := range files {
		golden := filepath.Join("../../testdata/golden/handbook", filepath.FromSlash(name))
		if *updateGolden {
			if err := os.MkdirAll(filepath.Dir(golden), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(golden, got, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(golden)
		if err != nil {
			t.Fatalf("%v (rewrite with -update-golden)", err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from %s (rewrite with -update-golden after checking the diff)", name, golden)
		}
	}
}

// TestExampleQueries checks that the questions in examples/queries.jsonl,
// written with the handbook, find the section that answers them. A hit
// answers when it is that section (same path and anchor) or holds the
// section's heading line, as when a tiny section joined its neighbour.
// BM25 is lexical: a question worded far from the page can miss (the
// handbook's questions deliberately avoid the headings' words), so the test
// wants at least 60% answered in the top 3 and 80% in the top 10, and logs
// every miss. The floors are our judgement; the log shows the real figures.
func TestExampleQueries(t *testing.T) {
	const kb = "../../examples/handbook"
	out := filepath.Join(t.TempDir(), "b")
	mustBuild(t, kb, out)
	b, err := bundle.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	data := mustRead(t, "../../examples/queries.jsonl")
	var n, top3, top10 int
	var rr float64
	for i, line := range strings.Split(strings.TrimSpace(string(data)), "\n") {
		var q struct{ Query, Expect string }
		if err := json.Unmarshal([]byte(line), &q); err != nil {
			t.Fatalf("queries.jsonl:%d: %v", i+1, err)
		}
		path, anchor, _ := strings.Cut(q.Expect, "#")
		heading := headingLine(t, filepath.Join(kb, path), anchor)
		hits, err := b.Search(q.Query, 10)
		if err != nil {
			t.Fatal(err)
		}
		n++
		rank := 0
		var got []string
		for j, h := range hits {
			got = append(got, fmt.Sprintf("%s#%s:%d-%d", h.Path, h.Anchor, h.Line, h.EndLine))
			if rank == 0 && h.Path == path && (h.Anchor == anchor || h.Line <= heading && heading <= h.EndLine) {
				rank = j + 1
			}
		}
		switch {
		case rank == 0:
			t.Logf("queries.jsonl:%d: %q: %s (line %d) not in the top 10: %q", i+1, q.Query, q.Expect, heading, got)
		case rank > 3:
			t.Logf("queries.jsonl:%d: %q: %s at rank %d", i+1, q.Query, q.Expect, rank)
		}
		if rank > 0 {
			rr += 1 / float64(rank)
		}
		if rank > 0 && rank <= 3 {
			top3++
		}
		if rank > 0 {
			top10++
		}
	}
	t.Logf("%d of %d questions answered in the top 3; mean reciprocal rank %.3f", top3, n, rr/float64(n))
	if float64(top3) < 0.6*float64(n) || float64(top10) < 0.8*float64(n) {
		t.Errorf("%d of %d questions answered in the top 3 and %d in the top 10; want at least 60%% and 80%%", top3, n, top10)
	}
}

// headingLine returns the source line of the heading with the given anchor.
func headingLine(t *testing.T, file, anchor string) int {
	t.Helper()
	doc, err := sources.Parse(filepath.Base(file), mustRead(t, file))
	if err != nil {
		t.Fatal(err)
	}
	for _, h := range doc.Headings {
		if h.Anchor == anchor {
			return h.Line
		}
	}
	t.Fatalf("%s has no heading with anchor %q", file, anchor)
	return 0
}

// copyTree copies the folder src into a temporary folder, setting every
// file's modification time to mtime.
func copyTree(t *testing.T, src string, mtime time.Time) string {
	t.Helper()
	dst := t.TempDir()
	err := filepath.WalkDir(src, func(p string, d os.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		target := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(target, 0o755)
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		if err := os.WriteFile(target, data, 0o644); err != nil {
			return err
		}
		return os.Chtimes(target, mtime, mtime)
	})
	if err != nil {
		t.Fatal(err)
	}
	return dst
}

func mustRead(t *testing.T, p string) []byte {
	t.Helper()
	data, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// navLines are lines that only site navigation or page chrome produce; no
// passage of a real corpus may hold one as a whole line.
var navLines = []string{
	"previous topic", "next topic", "this page", "show source", "quick search",
	"report a bug", "edit this page",
	"index | modules |", "theme auto light dark", "skip to main content",
}

// corpora returns $KBC_CORPORA and the corpus folders in it, or skips the
// test when it is not set or cannot be read.
func corpora(t *testing.T) (dir string, names []string) {
	t.Helper()
	dir = os.Getenv("KBC_CORPORA")
	if dir == "" {
		t.Skip("KBC_CORPORA is not set: fetch the corpora with ../shared/corpora/get-corpora.sh DIR and set KBC_CORPORA=DIR")
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Skipf("KBC_CORPORA=%s: %v", dir, err)
	}
	for _, e := range entries {
		if e.IsDir() && !strings.HasPrefix(e.Name(), ".") {
			names = append(names, e.Name())
		}
	}
	return dir, names
}

// TestCorpora builds every real corpus in $KBC_CORPORA with default
// settings and checks what a user relies on: every passage traces back to
// its file and lines, no page chrome gets in, two builds give the same
// bundle id, and verify catches a flipped byte.
func TestCorpora(t *testing.T) {
	dir, names := corpora(t)
	for _, name := range names {
		src := filepath.Join(dir, name)
		t.Run(name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "b")
			mustBuild(t, src, out)
			ps := readPassages(t, out)
			if len(ps) == 0 {
				t.Fatal("no passages")
			}
			lines := map[string]int{}
			for _, p := range ps {
				n, ok := lines[p.Path]
				if !ok {
					data, err := os.ReadFile(filepath.Join(src, filepath.FromSlash(p.Path)))
					if err != nil {
						t.Fatalf("passage %s names %s: %v", p.ID, p.Path, err)
					}
					n = bytes.Count(data, []byte("\n")) + 1
					lines[p.Path] = n
				}
				if p.Line < 1 || p.Line > p.EndLine || p.EndLine > n {
					t.Errorf("%s:%d-%d: line range outside the file's %d lines", p.Path, p.Line, p.EndLine, n)
				}
				if strings.TrimSpace(p.Text) == "" {
					t.Errorf("%s:%d: empty passage", p.Path, p.Line)
				}
				if p.Tokens > build.DefaultSettings().MaxTokens {
					t.Errorf("%s:%d: %d tokens, over the budget", p.Path, p.Line, p.Tokens)
				}
				inCode := false
				for _, l := range strings.Split(p.Text, "\n") {
					if strings.HasPrefix(l, "```") {
						inCode = !inCode
						continue
					}
					if inCode {
						continue
					}
					low := strings.ToLower(strings.TrimSpace(l))
					for _, nav := range navLines {
						if low == nav {
							t.Errorf("%s:%d: navigation line %q in a passage", p.Path, p.Line, l)
						}
					}
				}
			}
			m1, err := bundle.ReadManifest(out)
			if err != nil {
				t.Fatal(err)
			}
			out2 := filepath.Join(t.TempDir(), "b2")
			mustBuild(t, src, out2)
			m2, err := bundle.ReadManifest(out2)
			if err != nil {
				t.Fatal(err)
			}
			if m1.BundleID != m2.BundleID {
				t.Errorf("two builds, two bundle ids: %s and %s", m1.BundleID, m2.BundleID)
			}
			if bad, err := bundle.Verify(out); err != nil || len(bad) != 0 {
				t.Fatalf("verify of a fresh bundle: %v %v", bad, err)
			}
			p := filepath.Join(out, "passages.jsonl")
			data := mustRead(t, p)
			data[len(data)/2] ^= 1
			if err := os.WriteFile(p, data, 0o644); err != nil {
				t.Fatal(err)
			}
			if bad, err := bundle.Verify(out); err != nil || len(bad) != 1 || bad[0].File != "passages.jsonl" {
				t.Errorf("verify after one flipped bit = %v, %v; want passages.jsonl named", bad, err)
			}
			t.Logf("%d passages from %d files", len(ps), len(lines))
		})
	}
}

// TestCorporaIncremental: on each real corpus, one edited page gives a
// rebuild from the cache whose bundle is byte for byte a clean build's,
// whose delta.json lists exactly what changed (checked against Diff of the
// two bundles' passages), all on the edited page, and whose index, updated
// in place, finds the new sentence.
func TestCorporaIncremental(t *testing.T) {
	dir, names := corpora(t)
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200")
	for _, name := range names {
		t.Run(name, func(t *testing.T) {
			src := copyTree(t, filepath.Join(dir, name), time.Date(2026, 10, 1, 8, 0, 0, 0, time.UTC))
			out := filepath.Join(t.TempDir(), "b")
			mustBuild(t, src, out)
			before := readPassages(t, out)
			mid := before[len(before)/2]
			page := mid.Path
			file := filepath.Join(src, filepath.FromSlash(page))
			data := mustRead(t, file)
			note := "A note added for the incremental test: quokka seals are checked every 30 days."
			if strings.HasSuffix(page, ".html") || strings.HasSuffix(page, ".htm") {
				// A paragraph just before the line a passage starts on:
				// inside the page's content, not its chrome.
				lines := bytes.SplitAfter(data, []byte("\n"))
				at := mid.Line - 1
				lines[at] = append([]byte("<p>"+note+"</p>\n"), lines[at]...)
				data = bytes.Join(lines, nil)
			} else {
				data = append(data, "\n\n"+note+"\n"...)
			}
			if err := os.WriteFile(file, data, 0o644); err != nil {
				t.Fatal(err)
			}
			stdout, _ := mustBuild(t, src, out)
			if !strings.Contains(stdout, "unchanged, taken from the cache") {
				t.Errorf("the rebuild took nothing from the cache:\n%s", stdout)
			}
			clean := filepath.Join(t.TempDir(), "clean")
			mustBuild(t, src, clean)
			if a, b := mustRead(t, filepath.Join(out, "passages.jsonl")), mustRead(t, filepath.Join(clean, "passages.jsonl")); !bytes.Equal(a, b) {
				t.Fatal("passages.jsonl of the rebuild differs from a clean build's")
			}
			after := readPassages(t, out)
			var delta bundle.Delta
			if err := json.Unmarshal(mustRead(t, filepath.Join(out, bundle.DeltaFile)), &delta); err != nil {
				t.Fatal(err)
			}
			want := bundle.Diff(before, after)
			if !reflect.DeepEqual(delta.Added, want.Added) || !reflect.DeepEqual(delta.Changed, want.Changed) || !reflect.DeepEqual(delta.Removed, want.Removed) {
				t.Errorf("delta.json %+v\nDiff gives %+v", delta, want)
			}
			if delta.Empty() {
				t.Error("the edit is not in the delta")
			}
			// A passage of another page may enter the delta only through
			// folding: it was or is a copy folded into one of the edited
			// page's passages, or the other way round.
			pathOf := map[string]string{}
			folded := map[string]bool{} // ids folded with the edited page
			onPage := func(ref string) bool { return ref == page || strings.HasPrefix(ref, page+"#") }
			for _, ps := range [][]build.Passage{before, after} {
				for _, p := range ps {
					pathOf[p.ID] = p.Path
					if slices.ContainsFunc(p.AlsoAt, onPage) {
						folded[p.ID] = true
					}
				}
			}
			for _, ps := range [][]build.Passage{before, after} {
				for _, p := range ps {
					if p.Path != page {
						continue
					}
					for _, q := range append(append([]build.Passage{}, before...), after...) {
						for _, ref := range p.AlsoAt {
							if ref == q.Path || ref == q.Path+"#"+q.Anchor {
								folded[q.ID] = true
							}
						}
					}
				}
			}
			ids := append(append([]string{}, delta.Added...), delta.Removed...)
			for _, c := range delta.Changed {
				ids = append(ids, c.ID)
			}
			for _, id := range ids {
				if pathOf[id] != page && !folded[id] {
					t.Errorf("delta names %s of %s; only %s was edited", id, pathOf[id], page)
				}
			}
			b, err := bundle.Open(out)
			if err != nil {
				t.Fatal(err)
			}
			defer b.Close()
			hits, err := b.Search("quokka", 3)
			if err != nil || len(hits) == 0 || hits[0].Path != page {
				t.Errorf("search for the new sentence: %+v, %v", hits, err)
			}
			if bad, err := bundle.Verify(out); err != nil || len(bad) > 0 {
				t.Errorf("verify: %v %v", bad, err)
			}
		})
	}
}

// TestIncrementalEqualsClean: a rebuild that takes unchanged documents from
// the build cache gives the same bundle id as a clean build of the same
// tree, after an edit, a new page, a removed page and a settings change;
// a corrupt cache is reported and rebuilt.
func TestIncrementalEqualsClean(t *testing.T) {
	src := copyTree(t, "../../examples/handbook", time.Date(2026, 11, 20, 9, 0, 0, 0, time.UTC))
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200")
	out := filepath.Join(t.TempDir(), "b")
	var stdout string
	check := func(step string, extra ...string) {
		t.Helper()
		stdout, _ = mustBuild(t, src, out, extra...)
		clean := filepath.Join(t.TempDir(), "clean")
		mustBuild(t, src, clean, extra...)
		a, err := bundle.ReadManifest(out)
		if err != nil {
			t.Fatal(err)
		}
		b, err := bundle.ReadManifest(clean)
		if err != nil {
			t.Fatal(err)
		}
		if a.BundleID != b.BundleID {
			t.Errorf("%s: incremental bundle %s, clean build %s", step, a.BundleID, b.BundleID)
		}
		if bad, err := bundle.Verify(out); err != nil || len(bad) > 0 {
			t.Errorf("%s: verify: %v %v", step, bad, err)
		}
		t.Logf("%s: %s", step, strings.SplitN(strings.TrimSpace(stdout), "\n", 2)[0])
	}
	check("first build")
	check("no change")
	// The files are older than a second, so their sizes and times vouch
	// for them: the bundle is checked and left as it is.
	if !strings.HasPrefix(stdout, "up to date: ") {
		t.Errorf("no change: want an up-to-date build, got:\n%s", stdout)
	}
	// A bundle altered since is never left as it is: it is rebuilt.
	pj := filepath.Join(out, "passages.jsonl")
	data := mustRead(t, pj)
	data[len(data)/3] ^= 1
	if err := os.WriteFile(pj, data, 0o644); err != nil {
		t.Fatal(err)
	}
	check("bundle tampered with")
	if strings.HasPrefix(stdout, "up to date: ") {
		t.Error("a tampered bundle was taken as up to date")
	}
	page := filepath.Join(src, "fleet", "reefer-door-seals.md")
	data = mustRead(t, page)
	if err := os.WriteFile(page, append(data, "\nA late note: seals on trailers older than ten years are checked every 20 days.\n"...), 0o644); err != nil {
		t.Fatal(err)
	}
	check("one page edited")
	// A page changed within a second of the build's look at it is not
	// vouched for by its size and time, but by its bytes, checked against
	// those the build read: a build right after an edit is up to date, and
	// other bytes of the same size and time are still seen. (The page's
	// time is set ahead, so that it counts as just changed however slow
	// the machine.)
	ahead := time.Now().Add(3 * time.Second)
	if err := os.Chtimes(page, ahead, ahead); err != nil {
		t.Fatal(err)
	}
	check("page touched")
	check("no change after a touch")
	if !strings.HasPrefix(stdout, "up to date: ") {
		t.Errorf("no change after a touch: want an up-to-date build, got:\n%s", stdout)
	}
	data = mustRead(t, page)
	data[len(data)-4] ^= 'a' ^ 'b'
	if err := os.WriteFile(page, data, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Chtimes(page, ahead, ahead); err != nil {
		t.Fatal(err)
	}
	check("same size and time, other bytes")
	if strings.HasPrefix(stdout, "up to date: ") {
		t.Error("a page rewritten with the same size and time was taken as unchanged")
	}
	if err := os.WriteFile(filepath.Join(src, "fleet", "new.md"), []byte("# Tail lifts\n\nTail lifts are inspected every six months under the lifting equipment rules, by the workshop.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	check("page added")
	if err := os.Remove(filepath.Join(src, "onboarding", "glossary.md")); err != nil {
		t.Fatal(err)
	}
	check("page removed")
	check("settings changed", "--passage-tokens", "200")
	if err := os.WriteFile(filepath.Join(bundle.CacheDir(out), "entries-00.gob"), []byte("not a cache"), 0o644); err != nil {
		t.Fatal(err)
	}
	var o, e bytes.Buffer
	if code := run([]string{"build", src, "-o", out}, &o, &e); code != exitOK || !strings.Contains(e.String(), "build cache unreadable") {
		t.Errorf("corrupt cache: exit %d, stderr %q", code, e.String())
	}
	check("after a corrupt cache")
}
