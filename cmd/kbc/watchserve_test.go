package main

import (
	"context"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// TestWatchServe drives kbc watch --serve: the preview's warnings page
// follows the rebuilds (a broken page's path:line appears, then goes when
// it is fixed), and a hit links to its source lines, read from SRC.
func TestWatchServe(t *testing.T) {
	src := t.TempDir()
	out := filepath.Join(t.TempDir(), "b")
	write := func(name, s string) {
		t.Helper()
		if err := os.WriteFile(filepath.Join(src, name), []byte(s), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("seals.md", "---\nowner: workshop\n---\n# Door seals\n\nSeals are checked every 30 days by the workshop.\n")
	ctx, cancel := context.WithCancel(context.Background())
	var stdout, stderr lockedBuffer
	done := make(chan int)
	go func() {
		done <- watchUntil(ctx, []string{src, "-o", out, "--debounce", "20ms", "--serve", "127.0.0.1:0"}, &stdout, &stderr)
	}()
	defer func() {
		cancel()
		select {
		case code := <-done:
			if code != exitOK {
				t.Errorf("exit %d; stderr:\n%s", code, stderr.String())
			}
		case <-time.After(5 * time.Second):
			t.Error("watch did not stop within 5 s of cancel")
		}
	}()
	waitFor(t, &stdout, "watching ", 1)
	m := regexp.MustCompile(`preview on (http://[^/]+)/`).FindStringSubmatch(stdout.String())
	if m == nil {
		t.Fatalf("no preview address in:\n%s", stdout.String())
	}
	base := m[1]
	get := func(path string) string {
		t.Helper()
		resp, err := http.Get(base + path)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		body, _ := io.ReadAll(resp.Body)
		if resp.StatusCode != 200 {
			t.Fatalf("GET %s: %s\n%s", path, resp.Status, body)
		}
		return string(body)
	}
	// until waits for the page at path to hold want (or not).
	until := func(path, want string, holds bool) {
		t.Helper()
		deadline := time.Now().Add(20 * time.Second)
		for {
			body := get(path)
			if strings.Contains(body, want) == holds {
				return
			}
			if time.Now().After(deadline) {
				t.Fatalf("GET %s: holds %q is %v after 20 s:\n%s", path, want, !holds, body)
			}
			time.Sleep(20 * time.Millisecond)
		}
	}

	until("/warnings", `id="no-warnings"`, true)
	write("bad.md", "---\ntitle: [\n---\n# Half written\n\nText.\n")
	until("/warnings", `<code class="where">bad.md:2</code> front matter`, true)
	write("bad.md", "---\ntitle: Half written\n---\n# Half written\n\nText.\n")
	until("/warnings", "bad.md:2", false)

	body := get("/?q=seals")
	link := regexp.MustCompile(`href="(/source\?[^"]+)"`).FindStringSubmatch(body)
	if link == nil {
		t.Fatalf("no source link in:\n%s", body)
	}
	if src := get(strings.ReplaceAll(link[1], "&amp;", "&")); !strings.Contains(src, "<mark>Seals</mark> are checked every 30 days") {
		t.Errorf("source view:\n%s", src)
	}
	if stale := get("/stale"); !strings.Contains(stale, "<td>workshop</td>") {
		t.Errorf("staleness page:\n%s", stale)
	}
}
