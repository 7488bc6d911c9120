package preview_test

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/preview"
)

// ExampleServer builds a one-page bundle, serves its preview and asks for
// the results of a query, as the page does after a rebuild.
func ExampleServer() {
	tmp, err := os.MkdirTemp("", "preview-example")
	if err != nil {
		panic(err)
	}
	defer os.RemoveAll(tmp)
	src := filepath.Join(tmp, "docs")
	os.Mkdir(src, 0o755)
	os.WriteFile(filepath.Join(src, "boarding.md"), []byte("---\nupdated: 2026-05-02\nowner: terminal-ops\n---\n"+
		"# Boarding\n\n## Ticket checks\n\nDeckhands check every ticket at the gangway.\n"), 0o644)
	opts := build.DefaultOptions()
	opts.Now = time.Date(2026, 6, 1, 0, 0, 0, 0, time.UTC)
	res, err := build.Run(context.Background(), os.DirFS(src), opts)
	if err != nil {
		panic(err)
	}
	out := filepath.Join(tmp, "bundle")
	if _, err := bundle.Write(out, &bundle.Input{Passages: res.Passages}); err != nil {
		panic(err)
	}

	s, err := preview.New(out)
	if err != nil {
		panic(err)
	}
	defer s.Close()
	ts := httptest.NewServer(s.Handler())
	defer ts.Close()

	resp, err := http.Get(ts.URL + "/results?q=gangway")
	if err != nil {
		panic(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	fmt.Println(resp.Status)
	_, ref, _ := strings.Cut(string(body), `<code class="ref">`)
	ref, _, _ = strings.Cut(ref, "</code>")
	fmt.Println(ref)
	// Output:
	// 200 OK
	// boarding.md#ticket-checks
}
