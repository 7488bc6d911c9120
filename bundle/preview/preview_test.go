package preview

import (
	"bufio"
	"context"
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
)

// get serves one request through s's handler.
func get(t testing.TB, s *Server, method, target, host string) *httptest.ResponseRecorder {
	t.Helper()
	r := httptest.NewRequest(method, target, nil)
	r.Host = cmpOr(host, "127.0.0.1:8080")
	w := httptest.NewRecorder()
	s.Handler().ServeHTTP(w, r)
	return w
}

func TestPage(t *testing.T) {
	s, _, _ := newTestServer(t)
	id := s.cur.b.Manifest().BundleID
	tests := []struct {
		name, method, target, host string
		status                     int
		want, notWant              []string
	}{
		{name: "empty query shows the bundle", target: "/", status: 200,
			want: []string{`<input id="q" name="q" type="search" value=""`, "<th>bundle id</th><td><code>" + id, "<th>built at</th><td>2026-06-01T12:00:00Z", "<th>passages</th><td>8</td>", "kbc test",
				"<th>copies that disagree</th><td>0</td>", "<th>stale pages</th><td>2</td>", "<th>expired pages</th><td>1</td>", `<a href="/stale">Staleness <span class="count">3 stale or expired</span></a>`},
			notWant: []string{`class="hit"`, "divergent_copies", "stale_documents"}},
		{name: "blank query shows the bundle", target: "/?q=++", status: 200, want: []string{"<th>passages</th>"}},
		{name: "query", target: "/?q=gangway+ticket", status: 200,
			want: []string{`value="gangway ticket"`, `<span class="rank">#1</span>`, `<code class="ref">boarding.md#ticket-checks-at-the-gangway</code>`,
				"lines 8–11", `<span class="title">Boarding the harbour ferry</span> › Boarding › <mark>Ticket</mark> checks at the <mark>gangway</mark>`, "owner: terminal-ops", `st-fresh`, ">fresh<",
				"Deckhands check every <mark>ticket</mark> at the <mark>gangway</mark> before the ramp is raised.",
				`<a class="src" href="/source?id=`}},
		{name: "trail leaves out a heading that repeats the title", target: "/results?q=funnel", status: 200,
			want:    []string{`<div class="trail"><span class="title">Muster stations</span></div>`},
			notWant: []string{`› Muster stations`}},
		{name: "filter by owner", target: "/results?q=lifejacket+drill+muster&owner=safety-desk", status: 200,
			want: []string{"safety/muster.md"}, notWant: []string{`<code class="ref">crew/`}},
		{name: "filter by status", target: "/results?q=crossing+night+strike&status=expired", status: 200,
			want: []string{"notices/strike.md"}, notWant: []string{"timetable.md"}},
		{name: "filter by path", target: "/results?q=lifejacket+drill+muster&path=safety/", status: 200,
			want: []string{"safety/"}, notWant: []string{`<code class="ref">crew/`}},
		{name: "filter that leaves nothing", target: "/results?q=strike&owner=planning", status: 200, want: []string{"No passage matches <q>strike</q>, owner planning"}},
		{name: "k chosen in the form", target: "/?q=lifejacket&k=20", status: 200, want: []string{"<option selected>20</option>", `data-part="/results?k=20&amp;q=lifejacket"`}},
		{name: "k above the bound", target: "/?q=lifejacket&k=100000", status: 200, want: []string{"<option selected>50</option>"}},
		{name: "owner menu", target: "/", status: 200, want: []string{"<option>safety-desk</option>", "<option>terminal-ops</option>"}},
		{name: "no hits", target: "/?q=zebra+giraffe", status: 200, want: []string{"No passage matches <q>zebra giraffe</q>"}},
		{name: "stop words only", target: "/?q=the+of", status: 200, want: []string{"No passage matches"}},
		{name: "due soon", target: "/results?q=night+crossing+north+pier", status: 200, want: []string{"timetable.md#night-crossings", ">due soon<", "review by 2026-06-20"}},
		{name: "stale", target: "/results?q=muster+funnel", status: 200, want: []string{"safety/muster.md#muster-stations", ">stale<"}},
		{name: "expired", target: "/results?q=strike", status: 200, want: []string{"notices/strike.md#strike-notice", ">expired<", "expires 2026-05-31"}},
		{name: "duplicate aliases", target: "/results?q=lifejacket+drill", status: 200, want: []string{"crew/drill-copy.md#monthly-drill", "also at: <code>safety/lifejackets.md#monthly-drill</code>"}},
		{name: "passage html is text", target: "/results?q=kiosk+snippet", status: 200,
			want:    []string{"crew/handbook.md#announcements", `&lt;script&gt;alert(&#34;boarding&#34;)&lt;/script&gt;&lt;b&gt;now boarding&lt;/b&gt;`},
			notWant: []string{"<script>alert", "<b>now"}},
		{name: "query is escaped", target: "/?q=%3Cscript%3Ealert(1)%3C/script%3E%22%3E", status: 200,
			want:    []string{`value="&lt;script&gt;alert(1)&lt;/script&gt;&#34;&gt;"`, "<q>&lt;script&gt;alert(1)&lt;/script&gt;&#34;&gt;</q>"},
			notWant: []string{"<script>alert(1)"}},
		{name: "k bounds the results", target: "/results?q=lifejacket+crossing+drill+kiosk&k=1", status: 200, want: []string{"1 passage for"}, notWant: []string{`<span class="rank">#2</span>`}},
		{name: "results is a fragment", target: "/results?q=strike", status: 200, notWant: []string{"<html", "<script", "<form"}},
		{name: "part=main is a fragment", target: "/stale?part=main", status: 200, want: []string{"<h1>Staleness</h1>"}, notWant: []string{"<html", "<script"}},
		{name: "head", method: "HEAD", target: "/", status: 200},
		{name: "unknown path", target: "/passages.jsonl", status: 404},
		{name: "post", method: "POST", target: "/", status: 405},
		{name: "localhost name", target: "/", host: "localhost:8080", status: 200},
		{name: "ipv6 loopback", target: "/", host: "[::1]:8080", status: 200},
		{name: "foreign host name", target: "/", host: "docs.attacker.example:8080", status: 403},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			w := get(t, s, cmpOr(tt.method, "GET"), tt.target, tt.host)
			if w.Code != tt.status {
				t.Fatalf("status %d, want %d; body:\n%s", w.Code, tt.status, w.Body)
			}
			body := w.Body.String()
			for _, want := range tt.want {
				if !strings.Contains(body, want) {
					t.Errorf("body lacks %q; body:\n%s", want, body)
				}
			}
			for _, bad := range tt.notWant {
				if strings.Contains(body, bad) {
					t.Errorf("body holds %q; body:\n%s", bad, body)
				}
			}
		})
	}
}

func cmpOr(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

// TestPolicy checks that the page's inline style and script are exactly
// those the Content-Security-Policy names by hash, so the browser runs them.
func TestPolicy(t *testing.T) {
	s, _, _ := newTestServer(t)
	w := get(t, s, "GET", "/?q=strike", "")
	body, csp := w.Body.String(), w.Header().Get("Content-Security-Policy")
	if !strings.Contains(body, "<script>"+pageJS+"</script>") || !strings.Contains(body, "<style>"+pageCSS+"</style>") {
		t.Errorf("the page does not hold the script and style verbatim")
	}
	// hashSource was checked against OpenSSL once by hand:
	//   openssl dgst -sha256 -binary page.js | base64
	// printed the same value as hashSource(pageJS) (and likewise for
	// page.css). TestBrowser checks that Chromium, which enforces the
	// policy, runs the script and applies the style.
	for _, want := range []string{"script-src '" + hashSource(pageJS) + "'", "style-src '" + hashSource(pageCSS) + "'", "default-src 'none'"} {
		if !strings.Contains(csp, want) {
			t.Errorf("Content-Security-Policy %q lacks %q", csp, want)
		}
	}
	if n := strings.Count(body, "<script"); n != 1 {
		t.Errorf("page has %d script elements, want 1", n)
	}
}

var tookRE = regexp.MustCompile(`in [0-9.]+ ms|\([0-9.]+ ms\)`)

// TestGolden pins the rendered results of a few queries.
func TestGolden(t *testing.T) {
	s, _, _ := newTestServer(t)
	for _, q := range []string{"lifejacket drill", "kiosk snippet", "zebra", ""} {
		name := strings.ReplaceAll(cmpOr(q, "empty"), " ", "-")
		t.Run(name, func(t *testing.T) {
			w := get(t, s, "GET", "/results?q="+strings.ReplaceAll(q, " ", "+"), "")
			got := tookRE.ReplaceAllString(w.Body.String(), "in N ms")
			path := filepath.Join("testdata", "results-"+name+".golden.html")
			if *update {
				if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (run with -update to create it)", err)
			}
			if got != string(want) {
				t.Errorf("results differ from %s (run with -update to rewrite):\n%s", path, got)
			}
		})
	}
}

// readEvent reads one event (up to a blank line) from an event stream.
func readEvent(t testing.TB, r *bufio.Reader) string {
	t.Helper()
	var b strings.Builder
	for {
		line, err := r.ReadString('\n')
		if err != nil {
			t.Fatalf("reading the event stream: %v (read %q)", err, b.String())
		}
		if line == "\n" {
			return b.String()
		}
		b.WriteString(line)
	}
}

// openEvents connects to /events and reads the opening comment, after
// which the stream is subscribed.
func openEvents(t testing.TB, base, query string) (*bufio.Reader, func()) {
	t.Helper()
	resp, err := http.Get(base + "/events" + query)
	if err != nil {
		t.Fatal(err)
	}
	if resp.StatusCode != 200 || resp.Header.Get("Content-Type") != "text/event-stream" {
		t.Fatalf("GET /events: %s, Content-Type %q", resp.Status, resp.Header.Get("Content-Type"))
	}
	r := bufio.NewReader(resp.Body)
	if got := readEvent(t, r); got != ": kbc preview\nretry: 1000\n" {
		t.Fatalf("opening of the stream: %q", got)
	}
	return r, func() { resp.Body.Close() }
}

func TestEvents(t *testing.T) {
	s, src, out := newTestServer(t)
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	oldID := s.cur.b.Manifest().BundleID

	r, stop := openEvents(t, ts.URL, "?bundle="+oldID)
	defer stop()
	if err := os.WriteFile(filepath.Join(src, "notices", "strike.md"), []byte("---\nupdated: 2026-05-31\n---\n# Strike notice\n\nThe strike is over; crossings run every twenty minutes.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	m := buildBundle(t, src, out)
	if m.BundleID == oldID {
		t.Fatal("the edit did not change the bundle")
	}
	if err := s.Reload(out); err != nil {
		t.Fatal(err)
	}
	if got, want := readEvent(t, r), "id: "+m.BundleID+"\nevent: reload\ndata: "+m.BundleID+"\n"; got != want {
		t.Errorf("event after Reload:\n%q, want\n%q", got, want)
	}
	if body := get(t, s, "GET", "/results?q=strike", "").Body.String(); !strings.Contains(body, "is over; crossings run every twenty minutes") {
		t.Errorf("results after Reload do not show the edit:\n%s", body)
	}

	t.Run("a page of an older bundle reloads at once", func(t *testing.T) {
		r, stop := openEvents(t, ts.URL, "?bundle="+oldID)
		defer stop()
		if got := readEvent(t, r); !strings.Contains(got, "event: reload\ndata: "+m.BundleID) {
			t.Errorf("got %q, want a reload to %s", got, m.BundleID)
		}
	})
	t.Run("Last-Event-ID wins over ?bundle", func(t *testing.T) {
		req, _ := http.NewRequest("GET", ts.URL+"/events?bundle="+oldID, nil)
		req.Header.Set("Last-Event-ID", m.BundleID)
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		br := bufio.NewReader(resp.Body)
		readEvent(t, br) // the opening
		s.notify("next") // a marker: the first event must be this one
		if got := readEvent(t, br); !strings.Contains(got, "data: next") {
			t.Errorf("got %q, want no reload before the marker", got)
		}
	})
	t.Run("Close ends the stream", func(t *testing.T) {
		r, stop := openEvents(t, ts.URL, "")
		defer stop()
		done := make(chan error, 1)
		go func() { _, err := io.ReadAll(r); done <- err }()
		if err := s.Close(); err != nil {
			t.Fatal(err)
		}
		select {
		case err := <-done:
			if err != nil {
				t.Errorf("stream ended with %v, want EOF", err)
			}
		case <-time.After(5 * time.Second):
			t.Fatal("the event stream did not end after Close")
		}
		if resp, err := http.Get(ts.URL + "/events"); err != nil || resp.StatusCode != http.StatusServiceUnavailable {
			t.Errorf("GET /events after Close: %v %v, want 503", resp.Status, err)
		}
	})
}

// TestEventsContext checks that a stream ends when its request does.
func TestEventsContext(t *testing.T) {
	s, _, _ := newTestServer(t)
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, stop := openEvents(t, ts.URL, "")
	if n := s.subscribers(); n != 1 {
		t.Fatalf("%d subscribers, want 1", n)
	}
	stop()
	deadline := time.Now().Add(5 * time.Second)
	for s.subscribers() != 0 {
		if time.Now().After(deadline) {
			t.Fatal("the handler did not return after the client left")
		}
		time.Sleep(10 * time.Millisecond)
	}
}

func TestReloadBroken(t *testing.T) {
	s, _, out := newTestServer(t)
	id := s.cur.b.Manifest().BundleID
	corrupt := filepath.Join(t.TempDir(), "corrupt")
	if err := os.CopyFS(corrupt, os.DirFS(out)); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(corrupt, "manifest.json"), []byte("{not json"), 0o644); err != nil {
		t.Fatal(err)
	}
	noIndex := filepath.Join(t.TempDir(), "noindex")
	if err := os.CopyFS(noIndex, os.DirFS(out)); err != nil {
		t.Fatal(err)
	}
	if err := os.RemoveAll(filepath.Join(noIndex, "index")); err != nil {
		t.Fatal(err)
	}
	for name, dir := range map[string]string{
		"missing":          filepath.Join(t.TempDir(), "nothing-here"),
		"empty":            t.TempDir(),
		"corrupt manifest": corrupt,
		"no index":         noIndex,
	} {
		t.Run(name, func(t *testing.T) {
			if err := s.Reload(dir); err == nil {
				t.Fatal("Reload succeeded")
			} else if !strings.HasPrefix(err.Error(), "preview: opening bundle: ") {
				t.Errorf("error %q does not say what failed", err)
			}
			if got := s.cur.b.Manifest().BundleID; got != id {
				t.Errorf("bundle %s after a failed Reload, want the old %s", got, id)
			}
			if body := get(t, s, "GET", "/results?q=strike", "").Body.String(); !strings.Contains(body, "notices/strike.md") {
				t.Errorf("search after a failed Reload:\n%s", body)
			}
		})
	}
}

func TestClose(t *testing.T) {
	s, _, out := newTestServer(t)
	if err := s.Close(); err != nil {
		t.Fatal(err)
	}
	if err := s.Close(); err != nil {
		t.Errorf("second Close: %v", err)
	}
	if err := s.Reload(out); !errors.Is(err, ErrClosed) {
		t.Errorf("Reload after Close: %v, want ErrClosed", err)
	}
	if w := get(t, s, "GET", "/?q=strike", ""); w.Code != http.StatusServiceUnavailable {
		t.Errorf("page after Close: %d, want 503", w.Code)
	}
}

// TestConcurrentReload searches from several goroutines while bundles are
// swapped; run with -race. Every search must see a whole bundle, old or new.
func TestConcurrentReload(t *testing.T) {
	s, _, outA := newTestServer(t)
	docs := writeDocs(t, map[string]string{"strike.md": "---\nupdated: 2026-05-31\n---\n# Strike notice\n\nThe strike is over.\n"})
	outB := filepath.Join(t.TempDir(), "b")
	buildBundle(t, docs, outB)
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	_, stopEvents := openEvents(t, ts.URL, "")
	defer stopEvents()

	stop := make(chan struct{})
	var wg sync.WaitGroup
	errs := make(chan error, 100)
	for range 4 {
		wg.Go(func() {
			for {
				select {
				case <-stop:
					return
				default:
				}
				w := get(t, s, "GET", "/results?q=strike", "")
				body := w.Body.String()
				if w.Code != 200 || !strings.Contains(body, "strike") {
					errs <- errors.New(body)
					return
				}
			}
		})
	}
	for i := range 20 {
		if err := s.Reload([]string{outB, outA}[i%2]); err != nil {
			t.Fatal(err)
		}
	}
	close(stop)
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Errorf("search during Reload failed: %v", err)
	}
}

func TestSnippet(t *testing.T) {
	tests := []struct {
		name, text string
		lines, n   int
		want       string
		cut        bool
	}{
		{"short", "one line", 3, 100, "one line", false},
		{"lines", "a\nb\nc\nd", 2, 100, "a\nb", true},
		{"bytes", "abcdefgh", 3, 4, "abcd", true},
		{"rune boundary", "aé", 3, 2, "a", true},
		{"trailing newline", "a\nb\n", 2, 100, "a\nb", true},
		{"empty", "", 3, 10, "", false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, cut := snippet(tt.text, tt.lines, tt.n)
			if got != tt.want || cut != tt.cut {
				t.Errorf("snippet(%q, %d, %d) = %q, %v; want %q, %v", tt.text, tt.lines, tt.n, got, cut, tt.want, tt.cut)
			}
		})
	}
}

// TestEventStreamLimit is the regression test for event streams without a
// cap (20,000 of them ran the process out of file descriptors): over real
// loopback connections, the streams beyond the cap get 503 at once, and a
// freed slot is usable again.
func TestEventStreamLimit(t *testing.T) {
	s, _, _ := newTestServer(t)
	s.MaxStreams = 5
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()
	var stops []func()
	defer func() {
		for _, stop := range stops {
			stop()
		}
	}()
	for range s.MaxStreams {
		_, stop := openEvents(t, ts.URL, "")
		stops = append(stops, stop)
	}
	c := &http.Client{Timeout: 10 * time.Second}
	resp, err := c.Get(ts.URL + "/events")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusServiceUnavailable || resp.Header.Get("Retry-After") == "" {
		t.Fatalf("stream %d: %s (Retry-After %q), want 503 with Retry-After", s.MaxStreams+1, resp.Status, resp.Header.Get("Retry-After"))
	}
	if n := s.subscribers(); n != s.MaxStreams {
		t.Errorf("%d subscribers, want %d", n, s.MaxStreams)
	}
	// The page itself is still served while the streams are full.
	if resp, err := c.Get(ts.URL + "/"); err != nil || resp.StatusCode != http.StatusOK {
		t.Fatalf("GET / with the streams full: %v %v", resp, err)
	} else {
		resp.Body.Close()
	}
	stops[0]()
	stops = stops[1:]
	deadline := time.Now().Add(5 * time.Second)
	for s.subscribers() >= s.MaxStreams {
		if time.Now().After(deadline) {
			t.Fatal("a closed stream did not free its slot")
		}
		time.Sleep(10 * time.Millisecond)
	}
	_, stop := openEvents(t, ts.URL, "")
	stops = append(stops, stop)
}

// TestAudience: the preview obeys the audience rule of bundle.Query: a
// passage labelled for an audience shows only on a server started for it.
func TestAudience(t *testing.T) {
	docs := map[string]string{
		"crew/pay.md":  "---\ntitle: Crew pay\naudience: payroll\n---\n# Crew pay\n\nNight crossings are paid at the harbour night rate.\n",
		"timetable.md": "---\ntitle: Timetable\n---\n# Timetable\n\nNight crossings leave the north pier at 23:40.\n",
	}
	out := filepath.Join(t.TempDir(), "bundle")
	buildBundle(t, writeDocs(t, docs), out)
	for _, tt := range []struct {
		audiences []string
		want      bool
	}{{nil, false}, {[]string{"deckhands"}, false}, {[]string{"payroll"}, true}} {
		s, err := New(out, tt.audiences...)
		if err != nil {
			t.Fatal(err)
		}
		body := get(t, s, "GET", "/results?q=night+crossings", "").Body.String()
		if !strings.Contains(body, "timetable.md") || strings.Contains(body, "crew/pay.md") != tt.want {
			t.Errorf("audiences %q: pay page shown %v, want %v\n%s", tt.audiences, strings.Contains(body, "crew/pay.md"), tt.want, body)
		}
		s.Close()
	}
}

// TestConflictShown: a hit whose copy elsewhere states another figure
// says so, naming the copy and the words, as kbc query does.
func TestConflictShown(t *testing.T) {
	page := func(n string) string {
		return "---\ntitle: Drill\nupdated: 2026-05-01\n---\n# Drill\n\n## Monthly drill\n\nEvery crew member fastens a lifejacket in under " + n + " seconds during the monthly drill, and the master signs the drill log.\n"
	}
	docs := map[string]string{"safety/drill.md": page("40"), "crew/drill.md": page("60")}
	src := writeDocs(t, docs)
	out := filepath.Join(t.TempDir(), "bundle")
	opts := build.DefaultOptions()
	opts.Now = testNow
	res, err := build.Run(context.Background(), os.DirFS(src), opts)
	if err != nil {
		t.Fatal(err)
	}
	dup, err := json.Marshal(res.Duplicates)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := bundle.Write(out, &bundle.Input{Passages: res.Passages, Files: map[string][]byte{bundle.DuplicatesJSON: dup}}); err != nil {
		t.Fatal(err)
	}
	s, err := New(out)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	body := get(t, s, "GET", "/results?q=lifejacket+drill", "").Body.String()
	for _, want := range []string{`disputed by <code>safety/drill.md#monthly-drill</code>: “40 seconds” there, “60 seconds” here`,
		`disputed by <code>crew/drill.md#monthly-drill</code>: “60 seconds” there, “40 seconds” here`} {
		if !strings.Contains(body, want) {
			t.Errorf("results lack %s:\n%s", want, body)
		}
	}
}
