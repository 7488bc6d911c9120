// Command kbc-bench measures kbc on real documentation corpora and prints
// four tables.
//
// The first has one row per corpus: files, MB, passages, and the time,
// MB/s and peak resident memory of a clean build (no bundle, no build
// cache; the median of -runs), then the time of a rebuild with nothing
// changed and of a rebuild after one page was edited (medians of -runs
// rounds), each also as a share of the clean build. Each build runs as its own kbc process, so the peak
// RSS is that build's alone. Corpora are copied to a temporary folder
// first, so the edits never touch the originals.
//
// The second and third are the clean build of all corpora together into
// one bundle (time and peak RSS) and latency on that bundle: fresh kbc
// query and kbc context processes are run -queries times each (each of a
// few questions in turn); the table gives the passages and the p50, p95
// and max wall time from process start to exit (the results printed),
// and the mean CPU time (user + system) per process, which a busy machine
// disturbs less than wall time.
//
// The fourth is watch latency on one corpus: kbc watch runs as a child
// process, a page is edited -edits times, and for each edit the time from
// the write to the rebuilt bundle being in place (the watch line that
// reports it) is taken; p50 and p95 are printed.
//
// Usage:
//
//	go run ./cmd/kbc-bench -corpora DIR [-runs 3] [-queries 60] [-watch python-3.11-html] [-edits 50] [-kbc PATH]
//
// DIR is the folder ../shared/corpora/get-corpora.sh filled. Without -kbc
// the program builds ./cmd/kbc into a temporary folder first.
package main

import (
	"bufio"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"time"

	"github.com/kbc-project/kbc/bundle/compile"
)

func main() {
	corpora := flag.String("corpora", os.Getenv("KBC_CORPORA"), "folder of corpora (default $KBC_CORPORA)")
	runs := flag.Int("runs", 1, "clean builds per corpus; the median time is reported")
	kbc := flag.String("kbc", "", "kbc binary to measure (default: build ./cmd/kbc)")
	watchCorpus := flag.String("watch", "python-3.11-html", "corpus for the watch latency table (empty: skip it)")
	edits := flag.Int("edits", 50, "edits for the watch latency table")
	queries := flag.Int("queries", 60, "kbc query processes for the query latency table (0: skip it)")
	flag.Parse()
	b := &bench{runs: *runs, kbc: *kbc, queries: *queries, w: os.Stdout}
	if err := b.run(*corpora, *watchCorpus, *edits); err != nil {
		fmt.Fprintln(os.Stderr, "kbc-bench:", err)
		os.Exit(1)
	}
}

type bench struct {
	runs    int
	queries int
	kbc     string
	tmp     string
	w       io.Writer
}

// summary is the part of kbc build --json that the table needs: the
// counts of compile.Build's result, which kbc build prints. Each build
// runs as its own kbc process (not compile.Build in this one), so that
// its peak RSS is its own.
type summary = compile.Summary

func (b *bench) run(corpora, watchCorpus string, edits int) error {
	if corpora == "" {
		return fmt.Errorf("no corpora folder: pass -corpora or set KBC_CORPORA")
	}
	var err error
	if b.tmp, err = os.MkdirTemp("", "kbc-bench-"); err != nil {
		return err
	}
	defer os.RemoveAll(b.tmp)
	if b.kbc == "" {
		b.kbc = filepath.Join(b.tmp, "kbc")
		cmd := exec.Command("go", "build", "-o", b.kbc, "./cmd/kbc")
		cmd.Stdout, cmd.Stderr = os.Stderr, os.Stderr
		if err := cmd.Run(); err != nil {
			return fmt.Errorf("building kbc: %w", err)
		}
	}
	entries, err := os.ReadDir(corpora)
	if err != nil {
		return err
	}
	fmt.Fprintf(b.w, "| corpus | files | MB | documents | passages | tokens | clean build s | MB/s | peak RSS MB | no-change rebuild s (share) | one-page change s (share) |\n")
	fmt.Fprintf(b.w, "|---|---|---|---|---|---|---|---|---|---|---|\n")
	for _, e := range entries {
		orig := filepath.Join(corpora, e.Name())
		if st, err := os.Stat(orig); err != nil || !st.IsDir() || strings.HasPrefix(e.Name(), ".") {
			continue
		}
		src := filepath.Join(b.tmp, "src", e.Name())
		if err := copyTree(orig, src); err != nil {
			return err
		}
		if err := b.corpus(e.Name(), src); err != nil {
			return err
		}
	}
	if b.queries > 0 {
		if err := b.query(filepath.Join(b.tmp, "src")); err != nil {
			return err
		}
	}
	if watchCorpus != "" {
		return b.watch(filepath.Join(b.tmp, "src", watchCorpus), edits)
	}
	return nil
}

// latencyQueries are asked in turn by the query latency table: an
// identifier, a question, a phrase from reference docs.
var latencyQueries = []string{"os.path.join", "how do I undo the last commit", "configuration file format", "install on windows"}

// query builds every corpus under src into one bundle (its time and peak
// RSS are the table's first row), then times fresh kbc query and kbc
// context processes on it.
func (b *bench) query(src string) error {
	out := filepath.Join(b.tmp, "out-all")
	sec, rss, sum, err := b.build(src, out)
	if err != nil {
		return err
	}
	fmt.Fprintf(b.w, "\n| corpora together | passages | clean build s | peak RSS MB |\n|---|---|---|---|\n")
	fmt.Fprintf(b.w, "| all | %d | %.2f | %.0f |\n", sum.Stats.Passages, sec, float64(rss)/1024)
	fmt.Fprintf(b.w, "\n| process start to output | passages | processes | p50 ms | p95 ms | max ms | CPU ms/process |\n|---|---|---|---|---|---|---|\n")
	for _, c := range []struct {
		name string
		args func(q string) []string
	}{
		{"kbc query -k 10", func(q string) []string { return []string{"query", out, q, "-k", "10"} }},
		{"kbc context --budget 1500", func(q string) []string { return []string{"context", out, q, "--budget", "1500"} }},
	} {
		var walls []float64
		var cpu float64
		for i := 0; i < b.queries; i++ {
			cmd := exec.Command(b.kbc, c.args(latencyQueries[i%len(latencyQueries)])...)
			cmd.Stdout = io.Discard
			start := time.Now()
			if err := cmd.Run(); err != nil {
				return fmt.Errorf("%s: %w", c.name, err)
			}
			walls = append(walls, time.Since(start).Seconds()*1000)
			cpu += (cmd.ProcessState.UserTime() + cmd.ProcessState.SystemTime()).Seconds() * 1000
		}
		sort.Float64s(walls)
		fmt.Fprintf(b.w, "| %s | %d | %d | %.1f | %.1f | %.1f | %.1f |\n", c.name, sum.Stats.Passages, len(walls),
			walls[len(walls)/2], walls[min(len(walls)-1, len(walls)*95/100)], walls[len(walls)-1], cpu/float64(len(walls)))
	}
	return nil
}

// build runs one kbc build of src into out and returns its time, peak RSS
// in kilobytes and summary.
func (b *bench) build(src, out string) (float64, int64, summary, error) {
	var sum summary
	cmd := exec.Command(b.kbc, "build", src, "-o", out, "--json")
	var stderr strings.Builder // per-file warnings, counted in the summary
	cmd.Stderr = &stderr
	start := time.Now()
	data, err := cmd.Output()
	if err != nil {
		lines := strings.Split(strings.TrimSpace(stderr.String()), "\n")
		return 0, 0, sum, fmt.Errorf("kbc build %s: %v: %s", src, err, lines[len(lines)-1])
	}
	sec := time.Since(start).Seconds()
	var rss int64
	if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		rss = ru.Maxrss // kilobytes on Linux
	}
	return sec, rss, sum, json.Unmarshal(data, &sum)
}

func (b *bench) corpus(name, src string) error {
	out := filepath.Join(b.tmp, "out", name)
	var times []float64
	var peak int64
	var sum summary
	for i := 0; i < b.runs; i++ {
		// A clean build each time: no earlier bundle, no cache.
		os.RemoveAll(out)
		os.RemoveAll(out + ".cache")
		sec, rss, s, err := b.build(src, out)
		if err != nil {
			return err
		}
		times, peak, sum = append(times, sec), max(peak, rss), s
	}
	clean := median(times)
	page, err := pickPage(src)
	if err != nil {
		return err
	}
	// Then -runs rounds of a rebuild with nothing changed and one after
	// an edit of one page. Files written within a second of a build are
	// not trusted by size and time (racy), so the unchanged rebuild
	// waits until the last edit has settled, as it would in real use.
	var sames, ones []float64
	for i := 0; i < b.runs; i++ {
		time.Sleep(1100 * time.Millisecond)
		same, _, _, err := b.build(src, out)
		if err != nil {
			return err
		}
		if err := edit(page, i); err != nil {
			return err
		}
		one, _, _, err := b.build(src, out)
		if err != nil {
			return err
		}
		sames, ones = append(sames, same), append(ones, one)
	}
	same, one := median(sames), median(ones)
	mb := float64(sum.Stats.SourceBytes) / (1 << 20)
	fmt.Fprintf(b.w, "| %s | %d | %.1f | %d | %d | %d | %.2f | %.1f | %.0f | %.2f (%.0f%%) | %.2f (%.0f%%) |\n",
		name, sum.Stats.Files, mb, sum.Stats.Documents, sum.Stats.Passages, sum.Stats.Tokens,
		clean, mb/clean, float64(peak)/1024, same, 100*same/clean, one, 100*one/clean)
	return nil
}

func median(xs []float64) float64 {
	xs = append([]float64(nil), xs...)
	sort.Float64s(xs)
	return xs[len(xs)/2]
}

// watch measures the time from a page edit to the rebuilt bundle.
func (b *bench) watch(src string, edits int) error {
	out := filepath.Join(b.tmp, "watch-out")
	cmd := exec.Command(b.kbc, "watch", src, "-o", out)
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		return err
	}
	cmd.Stderr = io.Discard
	if err := cmd.Start(); err != nil {
		return err
	}
	defer func() {
		cmd.Process.Signal(syscall.SIGTERM)
		cmd.Wait()
	}()
	lines := make(chan string, 16)
	go func() {
		sc := bufio.NewScanner(stdout)
		for sc.Scan() {
			lines <- sc.Text()
		}
		close(lines)
	}()
	waitFor := func(prefix string) (time.Time, error) {
		for {
			select {
			case l, ok := <-lines:
				if !ok {
					return time.Time{}, fmt.Errorf("kbc watch stopped")
				}
				if strings.Contains(l, prefix) {
					return time.Now(), nil
				}
			case <-time.After(60 * time.Second):
				return time.Time{}, fmt.Errorf("no %q line from kbc watch within 60 s", prefix)
			}
		}
	}
	if _, err := waitFor("watching "); err != nil {
		return err
	}
	page, err := pickPage(src)
	if err != nil {
		return err
	}
	var lat []float64
	for i := 1; i <= edits; i++ {
		start := time.Now()
		if err := edit(page, i); err != nil {
			return err
		}
		end, err := waitFor(" rebuilt in ")
		if err != nil {
			return err
		}
		lat = append(lat, end.Sub(start).Seconds()*1000)
		time.Sleep(50 * time.Millisecond)
	}
	sort.Float64s(lat)
	pct := func(p float64) float64 { return lat[min(len(lat)-1, int(p*float64(len(lat))))] }
	fmt.Fprintf(b.w, "\n| watch corpus | edits | write to new bundle p50 ms | p95 ms | max ms |\n|---|---|---|---|---|\n")
	fmt.Fprintf(b.w, "| %s | %d | %.0f | %.0f | %.0f |\n", filepath.Base(src), len(lat), pct(0.50), pct(0.95), lat[len(lat)-1])
	return nil
}

// pickPage returns the first page of src in path order, the one edited.
func pickPage(src string) (string, error) {
	var page string
	err := filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil || page != "" {
			return err
		}
		switch strings.ToLower(filepath.Ext(p)) {
		case ".md", ".mdx", ".html":
			if !d.IsDir() {
				page = p
			}
		}
		return nil
	})
	if page == "" && err == nil {
		err = fmt.Errorf("%s: no page to edit", src)
	}
	return page, err
}

// edit appends a sentence to page, as an author adding a line would.
func edit(page string, n int) error {
	f, err := os.OpenFile(page, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		return err
	}
	line := fmt.Sprintf("\n\nEdited by the benchmark, revision %d: check the reefer log before loading.\n", n)
	if strings.HasSuffix(page, ".html") {
		line = fmt.Sprintf("\n<p>Edited by the benchmark, revision %d: check the reefer log before loading.</p>\n", n)
	}
	if _, err := f.WriteString(line); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}

// copyTree copies the folder src to dst, keeping file times.
func copyTree(src, dst string) error {
	return filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		target := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(target, 0o755)
		}
		if !d.Type().IsRegular() {
			return nil
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		if err := os.WriteFile(target, data, 0o644); err != nil {
			return err
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		return os.Chtimes(target, info.ModTime(), info.ModTime())
	})
}
