package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// lockedBuffer is a bytes.Buffer safe for one writer and one reader.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// waitFor polls until out holds want n times, or fails after a generous
// timeout (the machine may be loaded; nothing here measures speed).
func waitFor(t *testing.T, out *lockedBuffer, want string, n int) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for strings.Count(out.String(), want) < n {
		if time.Now().After(deadline) {
			t.Fatalf("waited for %d x %q; output:\n%s", n, want, out.String())
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// TestWatchCommand drives kbc watch with real file events: the first
// build, an edit, a broken page that keeps the last good bundle, a fix,
// and a clean stop that leaves a complete bundle.
func TestWatchCommand(t *testing.T) {
	src := t.TempDir()
	out := filepath.Join(t.TempDir(), "b")
	page := filepath.Join(src, "seals.md")
	write := func(p, s string) {
		t.Helper()
		if err := os.WriteFile(p, []byte(s), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write(page, "# Door seals\n\nSeals are checked every 30 days by the workshop, and after any impact to the rear doors.\n")
	ctx, cancel := context.WithCancel(context.Background())
	var stdout, stderr lockedBuffer
	done := make(chan int)
	go func() { done <- watchUntil(ctx, []string{src, "-o", out, "--debounce", "20ms"}, &stdout, &stderr) }()

	waitFor(t, &stdout, "watching ", 1)
	// The first build is "built", the ones after it "rebuilt".
	if !strings.Contains(stdout.String(), " built in ") || strings.Contains(stdout.String(), "rebuilt") {
		t.Errorf("first build: stdout:\n%s", stdout.String())
	}
	write(page, "# Door seals\n\nSeals are checked every 90 days by the workshop, and after any impact to the rear doors.\n")
	waitFor(t, &stdout, "0 added, 1 changed, 0 removed", 1)
	waitFor(t, &stdout, " rebuilt in ", 1)

	// A page that breaks while being edited is named; the bundle stays.
	write(filepath.Join(src, "bad.md"), "---\ntitle: [\n---\n# Half written\n\nText.\n")
	waitFor(t, &stderr, "bad.md:2: front matter", 1)
	waitFor(t, &stdout, "1 new warning(s)", 1)

	cancel()
	select {
	case code := <-done:
		if code != exitOK {
			t.Fatalf("exit %d; stderr:\n%s", code, stderr.String())
		}
	case <-time.After(5 * time.Second):
		t.Fatal("watch did not stop within 5 s of cancel")
	}
	if !strings.Contains(stdout.String(), "stopped; the last complete bundle is in") {
		t.Errorf("stdout:\n%s", stdout.String())
	}
	var o, e bytes.Buffer
	if code := run([]string{"verify", out}, &o, &e); code != exitOK {
		t.Errorf("verify after watch: exit %d\n%s%s", code, o.String(), e.String())
	}
}

// TestWatchJSON: with --json, standard output holds one JSON object per
// build and nothing else.
func TestWatchJSON(t *testing.T) {
	src := t.TempDir()
	out := filepath.Join(t.TempDir(), "b")
	page := filepath.Join(src, "ramps.md")
	if err := os.WriteFile(page, []byte("# Ramps\n\nDock ramps are raised before a trailer leaves the bay, every time.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var stdout, stderr lockedBuffer
	done := make(chan int)
	go func() {
		done <- watchUntil(ctx, []string{src, "-o", out, "--debounce", "20ms", "--json"}, &stdout, &stderr)
	}()
	waitFor(t, &stderr, "watching ", 1)
	if err := os.WriteFile(page, []byte("# Ramps\n\nDock ramps are raised before a trailer leaves the bay, and logged.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	waitFor(t, &stdout, `"event":"rebuilt"`, 1)
	cancel()
	if code := <-done; code != exitOK {
		t.Fatalf("exit %d; stderr:\n%s", code, stderr.String())
	}
	lines := strings.Split(strings.TrimSpace(stdout.String()), "\n")
	if len(lines) != 2 {
		t.Fatalf("want 2 lines on stdout, got:\n%s", stdout.String())
	}
	for i, want := range []watchEvent{{Event: "built", Added: 1}, {Event: "rebuilt", Changed: 1}} {
		var ev watchEvent
		if err := json.Unmarshal([]byte(lines[i]), &ev); err != nil {
			t.Fatalf("line %d: %v: %s", i+1, err, lines[i])
		}
		if ev.Event != want.Event || ev.Added != want.Added || ev.Changed != want.Changed || len(ev.BundleID) != 64 {
			t.Errorf("line %d: %+v", i+1, ev)
		}
	}
	if !strings.Contains(stderr.String(), "stopped; the last complete bundle is in") {
		t.Errorf("stderr:\n%s", stderr.String())
	}
}

// TestWatchChecks: the check flags watch accepts run after every rebuild;
// a failure is printed and watching goes on.
func TestWatchChecks(t *testing.T) {
	src := t.TempDir()
	out := filepath.Join(t.TempDir(), "b")
	t.Setenv("SOURCE_DATE_EPOCH", "1796083200") // 2026-12-01
	page := func(name, updated string) {
		t.Helper()
		text := "---\nupdated: " + updated + "\n---\n# " + name + "\n\nThe " + name + " rota is pinned by the dock office door every Monday.\n"
		if err := os.WriteFile(filepath.Join(src, name+".md"), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	page("fresh", "2026-11-01")
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var stdout, stderr lockedBuffer
	done := make(chan int)
	go func() {
		done <- watchUntil(ctx, []string{src, "-o", out, "--debounce", "20ms", "--max-stale", "0"}, &stdout, &stderr)
	}()
	waitFor(t, &stdout, "watching ", 1)
	if strings.Contains(stderr.String(), "check max-stale failed") {
		t.Fatalf("the check failed with nothing stale:\n%s", stderr.String())
	}
	page("old", "2020-01-01")
	waitFor(t, &stderr, "kbc watch: check max-stale failed: 1 of 2 documents stale or expired (50.0%), limit 0 (over by 1)", 1)
	cancel()
	if code := <-done; code != exitOK {
		t.Fatalf("exit %d; stderr:\n%s", code, stderr.String())
	}
}
