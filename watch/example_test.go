package watch_test

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"strings"
	"syscall"
	"time"

	"github.com/kbc-project/kbc/watch"
)

// Example watches a documentation folder and rebuilds what changed until
// Ctrl-C. It has no Output because it watches a real folder.
func Example() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()

	w, err := watch.New("docs", watch.Options{
		Debounce: 100 * time.Millisecond,
		// Keep the output and its cache out of the watch when they lie
		// inside the source folder.
		Ignore: func(rel string, isDir bool) bool {
			return rel == "_bundle" || strings.HasPrefix(rel, "_bundle.")
		},
		OnError: func(err error) { fmt.Fprintln(os.Stderr, err) },
	})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		return
	}
	defer w.Close()

	// The initial full build goes here: edits made meanwhile are queued and
	// arrive as the first change.

	err = w.Run(ctx, func(ctx context.Context, c watch.Change) error {
		start := time.Now()
		// Re-read c.Paths (or everything when c.All), publish the bundle.
		fmt.Printf("rebuilt %d paths in %v\n", len(c.Paths), time.Since(start))
		return nil
	})
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
	}
}
