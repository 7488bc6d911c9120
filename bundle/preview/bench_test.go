package preview

import (
	"context"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// benchQueries are the queries the page benchmarks render.
var benchQueries = []struct{ name, ferry, python string }{
	{"words", "lifejacket drill", "asyncio event loop"},
	{"question", "when does the last crossing leave", "how to open a file for writing"},
	{"no-hits", "zebra giraffe", "zzzqqq xyzzyx"},
	{"empty", "", ""},
}

// BenchmarkPage renders the full page for a query, search included;
// MB/s is HTML written. With KBC_CORPORA set it also builds the
// python-3.11-html corpus into a bundle (outside the timer) and serves
// that.
func BenchmarkPage(b *testing.B) {
	s, _, _ := newTestServer(b)
	run := func(b *testing.B, s *Server, q string) {
		h := s.Handler()
		query, filters, _ := strings.Cut(q, "&")
		target := "/?q=" + url.QueryEscape(query)
		if filters != "" {
			target += "&" + filters
		}
		var n int
		for b.Loop() {
			r := httptest.NewRequest("GET", target, nil)
			r.Host = "127.0.0.1"
			w := httptest.NewRecorder()
			h.ServeHTTP(w, r)
			if w.Code != 200 {
				b.Fatalf("status %d", w.Code)
			}
			n = w.Body.Len()
		}
		b.SetBytes(int64(n))
	}
	for _, q := range benchQueries {
		b.Run("ferry/"+q.name, func(b *testing.B) { run(b, s, q.ferry) })
	}
	py := pythonBundle(b)
	if py == "" {
		return
	}
	ps, err := New(py)
	if err != nil {
		b.Fatal(err)
	}
	defer ps.Close()
	for _, q := range benchQueries {
		b.Run("python/"+q.name, func(b *testing.B) { run(b, ps, q.python) })
	}
	// A filter that few hits pass makes the search look deeper.
	b.Run("python/filtered", func(b *testing.B) { run(b, ps, "asyncio event loop&path=c-api/") })
}

// BenchmarkReload measures Reload: opening a bundle and swapping it in.
// MB/s is passages.jsonl read.
func BenchmarkReload(b *testing.B) {
	run := func(b *testing.B, dir string) {
		s, err := New(dir)
		if err != nil {
			b.Fatal(err)
		}
		defer s.Close()
		st, err := os.Stat(filepath.Join(dir, bundle.PassagesFile))
		if err != nil {
			b.Fatal(err)
		}
		b.SetBytes(st.Size())
		for b.Loop() {
			if err := s.Reload(dir); err != nil {
				b.Fatal(err)
			}
		}
	}
	_, _, out := newTestServer(b)
	b.Run("ferry", func(b *testing.B) { run(b, out) })
	if py := pythonBundle(b); py != "" {
		b.Run("python", func(b *testing.B) { run(b, py) })
	}
}

// pythonBundle builds KBC_CORPORA/python-3.11-html into a bundle and
// returns its folder, or "" (after saying why) when the corpus is missing.
func pythonBundle(b *testing.B) string {
	b.Helper()
	root := os.Getenv("KBC_CORPORA")
	src := filepath.Join(root, "python-3.11-html")
	if st, err := os.Stat(src); root == "" || err != nil || !st.IsDir() {
		b.Logf("skipping the python corpus: set KBC_CORPORA to a folder filled by shared/corpora/get-corpora.sh")
		return ""
	}
	opts := build.DefaultOptions()
	opts.Now = testNow
	res, err := build.Run(context.Background(), os.DirFS(src), opts)
	if err != nil {
		b.Fatal(err)
	}
	out := filepath.Join(b.TempDir(), "python")
	if _, err := writeResult(res, out); err != nil {
		b.Fatal(err)
	}
	return out
}

// BenchmarkReportPages renders the staleness, duplicates and warnings
// pages and a source view; MB/s is HTML written. With KBC_CORPORA set it
// also serves the python-3.11-html corpus.
func BenchmarkReportPages(b *testing.B) {
	run := func(b *testing.B, s *Server, target string) {
		h := s.Handler()
		var n int
		for b.Loop() {
			r := httptest.NewRequest("GET", target, nil)
			r.Host = "127.0.0.1"
			w := httptest.NewRecorder()
			h.ServeHTTP(w, r)
			if w.Code != 200 {
				b.Fatalf("%s: status %d", target, w.Code)
			}
			n = w.Body.Len()
		}
		b.SetBytes(int64(n))
	}
	pages := func(b *testing.B, name string, s *Server, src, query string) {
		hits, err := s.cur.b.Query(query, bundle.SearchOptions{K: 1})
		if err != nil || len(hits) == 0 {
			b.Fatalf("no hit for %q: %v", query, err)
		}
		s.Source = src
		for _, p := range []string{"/stale", "/duplicates", "/warnings", "/source?id=" + url.QueryEscape(hits[0].ID) + "&q=" + url.QueryEscape(query)} {
			path, _, _ := strings.Cut(p, "?")
			b.Run(name+path, func(b *testing.B) { run(b, s, p) })
		}
	}
	s, src, _ := newTestServer(b)
	pages(b, "ferry", s, src, "lifejacket drill")
	py := pythonBundle(b)
	if py == "" {
		return
	}
	ps, err := New(py)
	if err != nil {
		b.Fatal(err)
	}
	defer ps.Close()
	pages(b, "python", ps, filepath.Join(os.Getenv("KBC_CORPORA"), "python-3.11-html"), "asyncio event loop")
}
