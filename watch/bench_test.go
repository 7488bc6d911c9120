package watch

import (
	"context"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"
)

// BenchmarkLatency measures the time from a file write to the start of the
// rebuild it causes, with the default debounce, and reports p50 and p95.
// Run it with a fixed count: go test -run ^$ -bench Latency -benchtime 50x ./watch/
func BenchmarkLatency(b *testing.B) {
	root := b.TempDir()
	w, err := New(root, Options{})
	if err != nil {
		b.Fatal(err)
	}
	defer w.Close()
	starts := make(chan time.Time)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	go w.Run(ctx, func(ctx context.Context, c Change) error {
		select {
		case starts <- time.Now():
		case <-ctx.Done():
		}
		return nil
	})
	path := filepath.Join(root, "page.md")
	lat := make([]time.Duration, 0, b.N)
	for i := 0; b.Loop(); i++ {
		t0 := time.Now()
		if err := os.WriteFile(path, []byte(fmt.Sprint("# Page ", i)), 0o644); err != nil {
			b.Fatal(err)
		}
		select {
		case t := <-starts:
			lat = append(lat, t.Sub(t0))
		case <-time.After(10 * time.Second):
			b.Fatal("no rebuild")
		}
	}
	b.StopTimer()
	slices.Sort(lat)
	// Nearest-rank percentiles.
	pct := func(p float64) float64 {
		k := int(p*float64(len(lat))+0.999999) - 1
		return float64(lat[max(k, 0)].Microseconds()) / 1000
	}
	b.ReportMetric(pct(0.50), "p50-ms")
	b.ReportMetric(pct(0.95), "p95-ms")
	b.ReportMetric(pct(0.95)-DefaultDebounce.Seconds()*1000, "p95-over-debounce-ms")
}

// BenchmarkNew measures setting up watches on a real corpus (walk plus one
// inotify watch per folder). The corpora come from
// shared/corpora/get-corpora.sh; set KBC_CORPORA to their folder.
func BenchmarkNew(b *testing.B) {
	dir := os.Getenv("KBC_CORPORA")
	if dir == "" {
		b.Skip("KBC_CORPORA is not set: fetch the corpora with shared/corpora/get-corpora.sh and point KBC_CORPORA at them")
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		b.Skipf("KBC_CORPORA=%s: %v", dir, err)
	}
	for _, e := range entries {
		if !e.IsDir() || skipName(e.Name()) {
			continue
		}
		root := filepath.Join(dir, e.Name())
		folders := 0
		filepath.WalkDir(root, func(_ string, d fs.DirEntry, err error) error {
			if err == nil && d.IsDir() {
				folders++
			}
			return nil
		})
		b.Run(e.Name(), func(b *testing.B) {
			for b.Loop() {
				w, err := New(root, Options{})
				if err != nil {
					b.Fatal(err)
				}
				w.Close()
			}
			b.ReportMetric(float64(folders), "folders")
		})
	}
}
