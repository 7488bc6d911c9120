// Command kbc-bench builds a bundle from each real documentation corpus and
// prints one row per corpus: files, MB, passages, seconds, MB/s and peak
// resident memory of a clean build (no bundle, no build cache), then the
// time of a rebuild with nothing changed (cache and index reused). Each
// build runs as its own kbc process, so the peak RSS is that build's alone.
//
// Usage:
//
//	go run ./cmd/kbc-bench -corpora DIR [-runs 3] [-kbc PATH]
//
// DIR is the folder ../shared/corpora/get-corpora.sh filled. Without -kbc
// the program builds ./cmd/kbc into a temporary folder first. With several
// runs it reports the median time and the largest peak RSS.
package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"syscall"
	"time"
)

func main() {
	corpora := flag.String("corpora", os.Getenv("KBC_CORPORA"), "folder of corpora (default $KBC_CORPORA)")
	runs := flag.Int("runs", 1, "builds per corpus; the median time is reported")
	kbc := flag.String("kbc", "", "kbc binary to measure (default: build ./cmd/kbc)")
	flag.Parse()
	if err := run(*corpora, *kbc, *runs, os.Stdout); err != nil {
		fmt.Fprintln(os.Stderr, "kbc-bench:", err)
		os.Exit(1)
	}
}

func run(corpora, kbc string, runs int, w io.Writer) error {
	if corpora == "" {
		return fmt.Errorf("no corpora folder: pass -corpora or set KBC_CORPORA")
	}
	tmp, err := os.MkdirTemp("", "kbc-bench-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	if kbc == "" {
		kbc = filepath.Join(tmp, "kbc")
		cmd := exec.Command("go", "build", "-o", kbc, "./cmd/kbc")
		cmd.Stdout, cmd.Stderr = os.Stderr, os.Stderr
		if err := cmd.Run(); err != nil {
			return fmt.Errorf("building kbc: %w", err)
		}
	}
	entries, err := os.ReadDir(corpora)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "| corpus | files | MB | documents | passages | tokens | clean build s | MB/s | peak RSS MB | no-change rebuild s |\n")
	fmt.Fprintf(w, "|---|---|---|---|---|---|---|---|---|---|\n")
	for _, e := range entries {
		src := filepath.Join(corpora, e.Name())
		if st, err := os.Stat(src); err != nil || !st.IsDir() || e.Name()[0] == '.' {
			continue
		}
		var times []float64
		var peak int64
		var sum struct {
			Stats struct {
				Files, Documents, Passages, Tokens int
				SourceBytes                        int64 `json:"source_bytes"`
			}
		}
		out := filepath.Join(tmp, e.Name())
		build := func() (float64, int64, []byte, error) {
			cmd := exec.Command(kbc, "build", src, "-o", out, "--json")
			cmd.Stderr = io.Discard // per-file warnings; counted in the summary
			start := time.Now()
			data, err := cmd.Output()
			if err != nil {
				return 0, 0, nil, fmt.Errorf("%s: %v", e.Name(), err)
			}
			sec := time.Since(start).Seconds()
			var rss int64
			if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
				rss = ru.Maxrss // kilobytes on Linux
			}
			return sec, rss, data, nil
		}
		for i := 0; i < runs; i++ {
			// A clean build each time: no earlier bundle, no cache.
			os.RemoveAll(out)
			os.RemoveAll(out + ".cache")
			sec, rss, data, err := build()
			if err != nil {
				return err
			}
			times = append(times, sec)
			peak = max(peak, rss)
			if err := json.Unmarshal(data, &sum); err != nil {
				return fmt.Errorf("%s: reading summary: %v", e.Name(), err)
			}
		}
		again, _, _, err := build()
		if err != nil {
			return err
		}
		sort.Float64s(times)
		sec := times[len(times)/2]
		mb := float64(sum.Stats.SourceBytes) / (1 << 20)
		fmt.Fprintf(w, "| %s | %d | %.1f | %d | %d | %d | %.2f | %.1f | %.0f | %.2f |\n",
			e.Name(), sum.Stats.Files, mb, sum.Stats.Documents, sum.Stats.Passages, sum.Stats.Tokens,
			sec, mb/sec, float64(peak)/1024, again)
	}
	return nil
}
