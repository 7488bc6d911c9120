package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"strings"
	"time"

	"golang.org/x/net/netutil"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle/compile"
	"github.com/kbc-project/kbc/bundle/preview"
	"github.com/kbc-project/kbc/watch"
)

func runWatch(args []string, stdout, stderr io.Writer) int {
	ctx, stop := interrupted()
	defer stop()
	return watchUntil(ctx, args, stdout, stderr)
}

// watchUntil runs the watch command until ctx is done.
func watchUntil(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := newFlags("watch", "watch SRC -o OUT [flags]",
		"Watch builds the bundle like build, then watches SRC and rebuilds whenever a page\n"+
			"changes, after a quiet period. After each rebuild it prints one line: time taken,\n"+
			"passages added, changed and removed, new warnings, and changes in stale pages and\n"+
			"divergent copies. A page that does not parse while being edited is named with its\n"+
			"path:line and the last good bundle stays. The checks (--max-stale and the\n"+
			"others, or [checks] in the config) run after every rebuild: each failure is\n"+
			"printed on stderr and watching goes on. The config file is read again for each\n"+
			"rebuild. Ctrl-C stops it; the last complete\n"+
			"bundle is left in OUT.",
		"kbc watch docs -o /tmp/docs-bundle --debounce 300ms\n"+
			"kbc watch docs -o /tmp/docs-bundle --serve 127.0.0.1:8470", stderr)
	out := addOutFlag(fs)
	debounce := fs.Duration("debounce", watch.DefaultDebounce, "quiet period after the last change before a rebuild")
	serve := fs.String("serve", "", "serve a live preview page on ADDR (host:port, loopback only unless --serve-any)")
	serveAny := fs.Bool("serve-any", false, "allow --serve on an address other than loopback")
	var audiences multiFlag
	fs.Var(&audiences, "audience", "with --serve: an audience the preview's reader may see (repeatable); passages labelled for others are left out")
	asJSON := fs.Bool("json", false, "print one JSON object per build on standard output (JSON Lines); other news goes to standard error")
	sf := addSourceFlags(fs)
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	src, code := srcAndOut(fs, pos, *out, stderr)
	if code >= 0 {
		return code
	}
	var ln net.Listener
	if *serve != "" {
		if err := checkServeAddr(*serve, *serveAny); err != nil {
			return badUsage(fs, stderr, "--serve %s: %v", *serve, err)
		}
		l, err := net.Listen("tcp", *serve)
		if err != nil {
			fmt.Fprintf(stderr, "kbc watch: %v\n", err)
			return exitFailure
		}
		ln = l
		defer ln.Close()
	}
	// Never read our own output (or its cache and temporary siblings).
	ignore := func(string, bool) bool { return false }
	if rel := sf.skipOutput(src, *out); rel != "" {
		ignore = func(p string, _ bool) bool {
			return p == rel || p == rel+".cache" || strings.HasPrefix(p, rel+"/") || strings.HasPrefix(p, rel+".cache/")
		}
	}
	// The watcher starts before the first build, so edits made during it
	// arrive as the first change.
	w, err := watch.New(src, watch.Options{Debounce: *debounce, Ignore: ignore,
		OnError: func(err error) { fmt.Fprintf(stderr, "kbc watch: %v\n", err) }})
	if err != nil {
		if st, serr := os.Stat(src); serr != nil || !st.IsDir() {
			return badUsage(fs, stderr, "source %s: not a folder", src)
		}
		fmt.Fprintf(stderr, "kbc watch: %v\n", err)
		return exitFailure
	}
	defer w.Close()

	cfg, code := sf.configFor(src, stderr)
	if code >= 0 {
		return code
	}
	// The build cache stays in memory between rebuilds and is saved once,
	// when watching stops.
	sess := &compile.Session{}
	defer func() {
		if err := sess.Save(*out); err != nil {
			fmt.Fprintf(stderr, "kbc: could not save the build cache: %v\n", err)
		}
	}()
	wb := &watchBuilds{sf: sf, src: src, out: *out, cfg: cfg, sess: sess, asJSON: *asJSON, stdout: stdout, stderr: stderr, seen: map[string]bool{}}
	news := stdout // lines about watching; with --json stdout holds only the builds
	if *asJSON {
		news = stderr
	}
	wb.rebuild(ctx)
	if ln != nil {
		stop, err := wb.servePreview(ln, audiences)
		if err != nil {
			fmt.Fprintf(stderr, "kbc watch: %v\n", err)
			return exitFailure
		}
		defer stop()
		fmt.Fprintf(news, "preview on http://%s/\n", ln.Addr())
	}
	fmt.Fprintf(news, "watching %s (Ctrl-C to stop)\n", src)
	err = w.Run(ctx, func(ctx context.Context, c watch.Change) error {
		wb.rebuild(ctx)
		return nil
	})
	if err != nil {
		fmt.Fprintf(stderr, "kbc watch: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(news, "stopped; the last complete bundle is in %s\n", *out)
	return exitOK
}

// watchBuilds is what watch carries from one build to the next: the
// config (read again for each rebuild), the build cache, the warnings
// already shown, the last result, and the live preview when serving.
type watchBuilds struct {
	sf             *sourceFlags
	src, out       string
	cfg            *compile.Config
	sess           *compile.Session
	asJSON         bool
	stdout, stderr io.Writer

	reload bool // the first build uses the config read when watch started
	seen   map[string]bool
	last   *build.Result
	pv     *preview.Server
}

// rebuild builds the bundle, prints what changed, runs the checks and
// hands the new bundle to the preview. A build that fails leaves the last
// good bundle in place.
func (wb *watchBuilds) rebuild(ctx context.Context) {
	stderr := wb.stderr
	start := time.Now()
	now, err := buildTime(os.Getenv("SOURCE_DATE_EPOCH"), time.Now)
	if err != nil {
		fmt.Fprintf(stderr, "kbc watch: %v\n", err)
		return
	}
	// The config is read again for each rebuild, so an edit to a kbc.toml
	// inside SRC applies at once (one outside SRC is not watched: its
	// edits apply with the next change in SRC).
	if wb.reload {
		if wb.cfg, err = wb.sf.load(wb.src); err != nil {
			fmt.Fprintf(stderr, "kbc watch: %v (the last good bundle stays)\n", err)
			return
		}
	}
	wb.reload = true
	bar := newProgress(stderr)
	r, err := compile.Build(ctx, compile.Job{Src: wb.src, Out: wb.out, Config: wb.cfg, Now: now, FixedTime: os.Getenv("SOURCE_DATE_EPOCH") != "",
		Tool: "kbc " + version, Force: true, Session: wb.sess, Progress: bar.update, Warn: warnTo(stderr)})
	bar.finish()
	fresh := 0
	if r != nil {
		for _, p := range r.Problems {
			if !wb.seen[p] {
				wb.seen[p] = true
				fresh++
				fmt.Fprintln(stderr, p)
			}
		}
	}
	if err != nil {
		fmt.Fprintf(stderr, "kbc watch: %v (the last good bundle stays)\n", err)
		return
	}
	res, delta := r.Build, r.Delta
	ev := watchEvent{Event: "rebuilt", Time: time.Now().UTC().Format(time.RFC3339), Seconds: time.Since(start).Seconds(),
		Added: len(delta.Added), Changed: len(delta.Changed), Removed: len(delta.Removed), NewWarnings: fresh,
		BundleID: r.BundleID, Stale: res.Stats.Stale, Expired: res.Stats.Expired, Divergent: res.Stats.Divergent}
	if wb.last == nil {
		ev.Event = "built"
	}
	for _, f := range r.Failures {
		ev.FailedChecks = append(ev.FailedChecks, f.Msg)
		fmt.Fprintf(stderr, "kbc watch: %s\n", f.Msg)
	}
	if wb.asJSON {
		json.NewEncoder(wb.stdout).Encode(ev)
	} else {
		fmt.Fprintln(wb.stdout, ev.line(wb.last, res))
	}
	wb.last = res
	if wb.pv != nil {
		wb.pv.SetWarnings(res.Problems)
		if err := wb.pv.Reload(wb.out); err != nil {
			fmt.Fprintf(stderr, "kbc watch: preview: %v\n", err)
		}
	}
}

// servePreview starts the live preview of the bundle on ln, and returns
// the function that stops it.
func (wb *watchBuilds) servePreview(ln net.Listener, audiences []string) (stop func(), err error) {
	pv, err := preview.New(wb.out, audiences...)
	if err != nil {
		return nil, err
	}
	// The preview shows a hit's source lines from SRC, and the first
	// build's warnings until the next one.
	pv.Source = wb.src
	if wb.last != nil {
		pv.SetWarnings(wb.last.Problems)
	}
	wb.pv = pv
	// Idle keep-alive connections are closed after a while, and the
	// connections open at once are capped (beyond the event streams' own
	// cap, which answers 503), so a flood of connections waits in the
	// kernel's queue instead of using up file descriptors.
	hs := &http.Server{Handler: pv.Handler(), ReadHeaderTimeout: 10 * time.Second, IdleTimeout: time.Minute}
	go func() {
		if err := hs.Serve(netutil.LimitListener(ln, 2*preview.DefaultMaxStreams)); !errors.Is(err, http.ErrServerClosed) {
			fmt.Fprintf(wb.stderr, "kbc watch: preview: %v\n", err)
		}
	}()
	return func() {
		pv.Close() // ends the pages' event streams, so Shutdown need not wait for them
		sctx, cancel := context.WithTimeout(context.Background(), time.Second)
		defer cancel()
		hs.Shutdown(sctx)
	}, nil
}

// watchEvent is one build of watch: what --json prints, one per line.
type watchEvent struct {
	Event       string  `json:"event"` // "built" for the first build, then "rebuilt"
	Time        string  `json:"time"`
	Seconds     float64 `json:"seconds"`
	Added       int     `json:"added"`
	Changed     int     `json:"changed"`
	Removed     int     `json:"removed"`
	NewWarnings int     `json:"new_warnings"`
	BundleID    string  `json:"bundle_id"`
	Stale       int     `json:"stale"`
	Expired     int     `json:"expired"`
	Divergent   int     `json:"divergent_copies"`
	// FailedChecks are the checks this build failed, one line each (also
	// printed on stderr); watching goes on.
	FailedChecks []string `json:"failed_checks,omitempty"`
}

// line is the event as one line of text; against the last build it names
// the changes in stale and expired pages and divergent copies.
func (ev watchEvent) line(last, res *build.Result) string {
	t, _ := time.Parse(time.RFC3339, ev.Time)
	line := fmt.Sprintf("%s %s in %.2fs: %d added, %d changed, %d removed; %d new warning(s); bundle %.12s",
		t.Local().Format("15:04:05"), ev.Event, ev.Seconds, ev.Added, ev.Changed, ev.Removed, ev.NewWarnings, ev.BundleID)
	if last != nil {
		if d := res.Stats.Stale - last.Stats.Stale; d != 0 {
			line += fmt.Sprintf("; stale %+d (now %d)", d, res.Stats.Stale)
		}
		if d := res.Stats.Expired - last.Stats.Expired; d != 0 {
			line += fmt.Sprintf("; expired %+d (now %d)", d, res.Stats.Expired)
		}
		if d := res.Stats.Divergent - last.Stats.Divergent; d != 0 {
			line += fmt.Sprintf("; divergent copies %+d (now %d)", d, res.Stats.Divergent)
		}
	}
	return line
}

// checkServeAddr checks that addr (host:port) is a loopback address, unless
// anyHost allows every address.
func checkServeAddr(addr string, anyHost bool) error {
	host, _, err := net.SplitHostPort(addr)
	if err != nil || anyHost {
		return err
	}
	if ip := net.ParseIP(host); host != "localhost" && (ip == nil || !ip.IsLoopback()) {
		return errors.New("not a loopback address (use 127.0.0.1:PORT, or add --serve-any to serve other hosts)")
	}
	return nil
}
