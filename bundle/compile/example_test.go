package compile_test

import (
	"context"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"time"

	"github.com/kbc-project/kbc/bundle/compile"
)

// ExampleBuild compiles a small source folder into a bundle with a check
// on stale pages, then builds it again with nothing changed.
func ExampleBuild() {
	tmp, err := os.MkdirTemp("", "compile-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(tmp)
	src, out := filepath.Join(tmp, "depot-docs"), filepath.Join(tmp, "bundles", "depot")
	pages := map[string]string{
		"loading.md": "---\nupdated: 2026-11-02\nowner: depot-north\n---\n# Loading bay\n\n" +
			"The loading bay opens at 06:00. Trailers are checked in at the gatehouse first.\n",
		"keys.md": "---\nupdated: 2024-03-01\nowner: depot-north\n---\n# Key cabinet\n\n" +
			"The key cabinet sits beside the dispatch desk; sign each key out in the book.\n",
	}
	os.MkdirAll(src, 0o755)
	for name, text := range pages {
		os.WriteFile(filepath.Join(src, name), []byte(text), 0o644)
	}
	os.WriteFile(filepath.Join(src, "kbc.toml"), []byte("[checks]\nmax_stale = \"0\"\n"), 0o644)

	cfg, err := compile.LoadConfig(src, "") // finds depot-docs/kbc.toml
	if err != nil {
		log.Fatal(err)
	}
	job := compile.Job{Src: src, Out: out, Config: cfg, Tool: "example v1",
		Now: time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC), FixedTime: true}
	for range 2 {
		res, err := compile.Build(context.Background(), job)
		if err != nil {
			log.Fatal(err)
		}
		if res.UpToDate {
			fmt.Println("up to date")
		} else {
			fmt.Printf("built %d passages, %d added\n", res.Summary.Stats.Passages, len(res.Delta.Added))
		}
		for _, f := range res.Failures {
			fmt.Println(f.Msg)
		}
	}
	// Output:
	// built 2 passages, 2 added
	// check max-stale failed: 1 of 2 documents stale or expired (50.0%), limit 0 (over by 1)
	// up to date
	// check max-stale failed: 1 of 2 documents stale or expired (50.0%), limit 0 (over by 1)
}
