package preview

import (
	"bytes"
	"cmp"
	"crypto/sha256"
	_ "embed"
	"encoding/base64"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"html/template"
	"io"
	"net"
	"net/http"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// ErrClosed is returned by Reload after Close.
var ErrClosed = errors.New("preview: server closed")

// Defaults of a Server.
const (
	// DefaultResults is how many passages a query shows unless ?k= asks
	// for another number (at most MaxResults).
	DefaultResults = 10
	// MaxResults bounds ?k=.
	MaxResults = 50
	// heartbeat is how often an idle event stream gets a comment line, so
	// that a client gone without closing its connection is noticed. A
	// proxy commonly drops a connection idle for a minute (common
	// practice, no source).
	heartbeat = 25 * time.Second
	// snippetLines and snippetBytes bound the text shown for one result.
	snippetLines = 6
	snippetBytes = 600
	// DefaultMaxStreams is how many event streams a Server keeps open at
	// once unless MaxStreams says otherwise: one per open preview tab, so
	// a writer with a few dozen tabs is far below it, while a flood of
	// connections stops long before the process runs out of file
	// descriptors (the usual soft limit is 1024; common practice, no
	// source).
	DefaultMaxStreams = 256
	// retryAfter is the Retry-After (seconds) of a 503 over the cap.
	retryAfter = "10"
)

//go:embed page.html.tmpl
var pageTemplate string

//go:embed page.css
var pageCSS string

//go:embed page.js
var pageJS string

// Server serves the preview page of one bundle at a time. Make one with
// New. Its methods and its handler are safe for concurrent use; after Close
// the handler answers 503 and Reload fails with ErrClosed.
type Server struct {
	// MaxStreams caps the event streams open at once; a request for one
	// more is answered 503 with Retry-After. Zero means
	// DefaultMaxStreams. Set it before the handler serves.
	MaxStreams int
	// Source is the folder the bundle is built from (kbc watch's SRC).
	// When set, a hit's source lines can be read on /source, through
	// sources.OpenDir, so never from outside it; when empty /source
	// answers 404. Set it before the handler serves.
	Source string

	tmpl *template.Template
	csp  string
	now  func() time.Time // the clock freshness is judged by
	// audiences are the audience labels the page's reader may see.
	audiences []string

	mu  sync.RWMutex
	cur *handle // nil after Close
	// warnings are the last build's problems (SetWarnings), under mu.
	warnings []warningView

	subsMu sync.Mutex
	subs   map[chan string]struct{}
	// streams counts the event streams open or being opened, against
	// MaxStreams.
	streams atomic.Int64

	done      chan struct{} // closed by Close: event streams end
	closeOnce sync.Once
}

// handle is one open bundle and the searches using it.
type handle struct {
	b       *bundle.Bundle
	dir     string
	dueSoon fresh.Duration
	users   sync.WaitGroup

	staleOnce sync.Once // reads the staleness report on first use
	stale     *build.StalenessReport
	staleErr  error
	dupOnce   sync.Once // reads the duplicate report on first use
	dup       *build.DuplicateReport
	dupErr    error
}

// New opens the bundle in dir (see bundle.Open) and returns a Server for
// it. The page shows what bundle.Query gives a caller cleared for
// audiences: passages labelled for another audience are left out. Close
// the Server when done.
func New(dir string, audiences ...string) (*Server, error) {
	h, err := openHandle(dir)
	if err != nil {
		return nil, err
	}
	tmpl, err := template.New("preview").Funcs(template.FuncMap{"join": strings.Join, "label": label}).Parse(pageTemplate)
	if err != nil {
		h.b.Close()
		return nil, fmt.Errorf("preview: page template: %w", err)
	}
	s := &Server{
		tmpl:      tmpl,
		now:       time.Now,
		audiences: audiences,
		cur:       h,
		subs:      make(map[chan string]struct{}),
		done:      make(chan struct{}),
		// CSP level 2 hash sources (W3C Content Security Policy Level 2,
		// section 4.2.5): only the inline style and script whose SHA-256
		// is named here may run, nothing may be loaded from elsewhere.
		csp: "default-src 'none'; style-src '" + hashSource(pageCSS) + "'; script-src '" + hashSource(pageJS) +
			"'; connect-src 'self'; form-action 'self'; base-uri 'none'; frame-ancestors 'none'",
	}
	return s, nil
}

func hashSource(s string) string {
	sum := sha256.Sum256([]byte(s))
	return "sha256-" + base64.StdEncoding.EncodeToString(sum[:])
}

// openHandle opens the bundle in dir and reads the due-soon window it was
// built with.
func openHandle(dir string) (*handle, error) {
	b, err := bundle.Open(dir)
	if err != nil {
		return nil, fmt.Errorf("preview: opening bundle: %w", err)
	}
	return &handle{b: b, dir: dir, dueSoon: dueSoonOf(b.Manifest())}, nil
}

// dueSoonOf returns the due-soon window recorded in the manifest's
// settings (as kbc writes them: {"freshness":{"due_soon":"30d"}}), or the
// default policy's when there is none.
func dueSoonOf(m *bundle.Manifest) fresh.Duration {
	d := fresh.DefaultPolicy().DueSoon
	var s struct {
		Freshness struct {
			DueSoon fresh.Duration `json:"due_soon"`
		} `json:"freshness"`
	}
	if len(m.Settings) > 0 && json.Unmarshal(m.Settings, &s) == nil && s.Freshness.DueSoon.Days > 0 {
		d = s.Freshness.DueSoon
	}
	return d
}

// acquire returns the current bundle, counted as in use until release
// (h.users.Done), and the warnings of the build that made it; nil after
// Close.
func (s *Server) acquire() (*handle, []warningView) {
	s.mu.RLock()
	defer s.mu.RUnlock()
	h := s.cur
	if h != nil {
		// Every Add on a handle happens under the read lock while it is
		// current, so before the write lock that retires it, and so
		// before retire's Wait, as sync.WaitGroup requires.
		h.users.Add(1)
	}
	return h, s.warnings
}

// SetWarnings records the problems of the build that made the bundle
// (build.Result.Problems: path:line and what is wrong), for the warnings
// page. It tells no page: call it before Reload, which does. A page that
// shows warnings shows those of the last call.
func (s *Server) SetWarnings(problems []*sources.Error) {
	ws := make([]warningView, len(problems))
	for i, p := range problems {
		ws[i] = newWarningView(p)
	}
	s.mu.Lock()
	s.warnings = ws
	s.mu.Unlock()
}

// retire waits for the searches on h to finish, then closes its bundle.
func (h *handle) retire() error {
	h.users.Wait()
	return h.b.Close()
}

// Reload opens the bundle in dir (normally the same folder, after a
// rebuild put a new bundle there), makes it the one searched, closes the
// old one once the searches using it have finished, and sends "reload" to
// every open page. When the bundle cannot be opened Reload returns the
// error and the old bundle stays.
func (s *Server) Reload(dir string) error {
	h, err := openHandle(dir)
	if err != nil {
		return err
	}
	s.mu.Lock()
	old := s.cur
	if old == nil {
		s.mu.Unlock()
		h.b.Close()
		return ErrClosed
	}
	s.cur = h
	state := stateID(h.b.Manifest().BundleID, s.warnings)
	s.mu.Unlock()
	err = old.retire()
	s.notify(state)
	if err != nil {
		return fmt.Errorf("preview: closing the previous bundle: %w", err)
	}
	return nil
}

// Close ends every event stream, waits for the searches in flight and
// closes the bundle. Calling it again does nothing.
func (s *Server) Close() error {
	s.closeOnce.Do(func() { close(s.done) })
	s.mu.Lock()
	h := s.cur
	s.cur = nil
	s.mu.Unlock()
	if h == nil {
		return nil
	}
	return h.retire()
}

// notify queues a reload to bundle id for every subscriber. A subscriber
// that has not taken the last one gets only the newest.
func (s *Server) notify(id string) {
	s.subsMu.Lock()
	defer s.subsMu.Unlock()
	for ch := range s.subs {
		select {
		case <-ch:
		default:
		}
		ch <- id
	}
}

func (s *Server) subscribe() chan string {
	ch := make(chan string, 1)
	s.subsMu.Lock()
	s.subs[ch] = struct{}{}
	s.subsMu.Unlock()
	return ch
}

func (s *Server) unsubscribe(ch chan string) {
	s.subsMu.Lock()
	delete(s.subs, ch)
	s.subsMu.Unlock()
}

// subscribers returns the number of open event streams.
func (s *Server) subscribers() int {
	s.subsMu.Lock()
	defer s.subsMu.Unlock()
	return len(s.subs)
}

// Handler returns the handler of the page, /results and /events.
func (s *Server) Handler() http.Handler {
	mux := http.NewServeMux()
	for path, kind := range routes {
		mux.HandleFunc("GET "+path, func(w http.ResponseWriter, r *http.Request) { s.render(w, r, kind) })
	}
	// /results is the search page's results alone, as /?part=main.
	mux.HandleFunc("GET /results", func(w http.ResponseWriter, r *http.Request) { s.render(w, r, kindResults) })
	mux.HandleFunc("GET /events", s.serveEvents)
	return localOnly(mux)
}

// localOnly refuses requests whose Host is a name other than localhost:
// a page on another site that rebinds its own DNS name to 127.0.0.1 sends
// that name, and would otherwise read the preview (the DNS rebinding
// attack; Jackson et al., "Protecting Browsers from DNS Rebinding
// Attacks", 2007). IP addresses are let through, for --serve-any.
func localOnly(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		host := r.Host
		if h, _, err := net.SplitHostPort(host); err == nil {
			host = h
		}
		host = strings.TrimSuffix(strings.ToLower(host), ".")
		if net.ParseIP(strings.Trim(host, "[]")) == nil && host != "localhost" && !strings.HasSuffix(host, ".localhost") {
			http.Error(w, "preview: refused: use an IP address or localhost in the address bar", http.StatusForbidden)
			return
		}
		next.ServeHTTP(w, r)
	})
}

// render gathers the view of kind for r and executes its template into a
// buffer, holding the bundle only while it does. With ?part=main (or for
// kindResults) only the page's main part is written: the fragment the
// page's script swaps in after a rebuild.
func (s *Server) render(w http.ResponseWriter, r *http.Request, kind string) {
	h, ws := s.acquire()
	if h == nil {
		http.Error(w, "preview: server closed", http.StatusServiceUnavailable)
		return
	}
	v, status := s.view(h, ws, kind, r.URL.Query())
	name := "page"
	if kind == kindResults || r.URL.Query().Get("part") == "main" {
		name = "main"
	}
	var buf bytes.Buffer
	err := s.tmpl.ExecuteTemplate(&buf, name, v)
	h.users.Done()
	if err != nil {
		http.Error(w, "preview: rendering the page: "+err.Error(), http.StatusInternalServerError)
		return
	}
	hd := w.Header()
	hd.Set("Content-Type", "text/html; charset=utf-8")
	hd.Set("Content-Security-Policy", s.csp)
	hd.Set("X-Content-Type-Options", "nosniff")
	hd.Set("Referrer-Policy", "no-referrer")
	hd.Set("Cache-Control", "no-store")
	if status != http.StatusOK {
		w.WriteHeader(status)
	}
	w.Write(buf.Bytes())
}

// serveEvents streams Server-Sent Events (WHATWG HTML Living Standard,
// section 9.2): an "id:" line with the state id (stateID: the bundle id,
// and a digest of the warnings when there are some) and "event: reload"
// after each rebuild. A client that names an older state, by ?bundle= on its
// first connection or by the Last-Event-ID header the EventSource sends
// when it reconnects, gets a reload at once, so a rebuild that happened
// while it was not connected is not missed.
func (s *Server) serveEvents(w http.ResponseWriter, r *http.Request) {
	h, ws := s.acquire()
	if h == nil {
		// Any status but 200 makes an EventSource stop reconnecting.
		http.Error(w, "preview: server closed", http.StatusServiceUnavailable)
		return
	}
	id := stateID(h.b.Manifest().BundleID, ws)
	h.users.Done()
	defer s.streams.Add(-1)
	if n := s.streams.Add(1); n > int64(cmp.Or(s.MaxStreams, DefaultMaxStreams)) {
		w.Header().Set("Retry-After", retryAfter)
		http.Error(w, "preview: too many open pages; close some and reload", http.StatusServiceUnavailable)
		return
	}
	ch := s.subscribe()
	defer s.unsubscribe(ch)

	hd := w.Header()
	hd.Set("Content-Type", "text/event-stream")
	hd.Set("Cache-Control", "no-store")
	hd.Set("X-Content-Type-Options", "nosniff")
	rc := http.NewResponseController(w)
	// The stream lives as long as the page: no write deadline.
	rc.SetWriteDeadline(time.Time{})
	seen := r.Header.Get("Last-Event-ID")
	if seen == "" {
		seen = r.URL.Query().Get("bundle")
	}
	msg := ": kbc preview\nretry: 1000\n\n"
	if seen != "" && seen != id {
		msg += event(id)
	}
	if _, err := io.WriteString(w, msg); err != nil || rc.Flush() != nil {
		return
	}
	tick := time.NewTicker(heartbeat)
	defer tick.Stop()
	for {
		select {
		case <-r.Context().Done():
			return
		case <-s.done:
			return
		case id := <-ch:
			msg = event(id)
		case <-tick.C:
			msg = ": ping\n\n"
		}
		if _, err := io.WriteString(w, msg); err != nil || rc.Flush() != nil {
			return
		}
	}
}

// stateID names what the pages show: the bundle id, and when the build
// had warnings a digest of them after a "-", so that a page that missed a
// rebuild which changed only the warnings still reloads when it comes
// back (see serveEvents).
func stateID(bundleID string, ws []warningView) string {
	if len(ws) == 0 {
		return bundleID
	}
	sum := sha256.New()
	for _, w := range ws {
		fmt.Fprintf(sum, "%s\x00%s\n", w.Where, w.Msg)
	}
	return bundleID + "-" + hex.EncodeToString(sum.Sum(nil))[:16]
}

// event is a reload event for state id. A state id is hex and "-", so it
// cannot break the line format.
func event(id string) string {
	return "id: " + id + "\nevent: reload\ndata: " + id + "\n\n"
}
