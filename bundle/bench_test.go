package bundle

import (
	"bytes"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/blevesearch/bleve/v2"

	"github.com/kbc-project/kbc/build"
)

// corpusPassages cuts the real documentation corpora under $KBC_CORPORA
// (shared/corpora/get-corpora.sh) into passages of about 200 words, crudely
// (paragraphs; HTML tags dropped; the last Markdown heading as the trail):
// good enough to feed the index real text at its real size. It skips the
// benchmark when the corpora are not there.
func corpusPassages(b *testing.B) []build.Passage {
	root := os.Getenv("KBC_CORPORA")
	if root == "" {
		b.Skip("KBC_CORPORA is not set: fetch corpora with shared/corpora/get-corpora.sh DIR and set KBC_CORPORA=DIR")
	}
	if _, err := os.Stat(root); err != nil {
		b.Skipf("KBC_CORPORA=%s: %v", root, err)
	}
	var ps []build.Passage
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if strings.HasPrefix(d.Name(), ".") && p != root {
				return filepath.SkipDir
			}
			return nil
		}
		ext := filepath.Ext(p)
		switch ext {
		case ".md", ".mdx", ".txt", ".html", ".htm":
		default:
			return nil
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		if ext == ".html" || ext == ".htm" {
			data = stripTags(data)
		}
		rel, _ := filepath.Rel(root, p)
		title := strings.TrimSuffix(filepath.Base(p), ext)
		var heading []string
		var cur strings.Builder
		words, line, start := 0, 1, 1
		emit := func() {
			if words > 0 {
				ps = append(ps, mkPassage(fmt.Sprintf("%s#%d", rel, start), filepath.ToSlash(rel), start, title, heading, cur.String()))
			}
			cur.Reset()
			words = 0
		}
		for _, para := range strings.Split(string(data), "\n\n") {
			para = strings.TrimSpace(para)
			if h, ok := strings.CutPrefix(para, "#"); ok && !strings.Contains(para, "\n") {
				emit()
				heading = []string{strings.TrimLeft(h, "# ")}
			} else if para != "" {
				if words == 0 {
					start = line
				} else {
					cur.WriteString("\n\n")
				}
				cur.WriteString(para)
				words += len(strings.Fields(para))
				if words >= 200 {
					emit()
				}
			}
			line += strings.Count(para, "\n") + 2
		}
		emit()
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	return ps
}

// stripTags drops HTML tags and the contents of script and style elements.
func stripTags(src []byte) []byte {
	out := make([]byte, 0, len(src)/2)
	for i := 0; i < len(src); {
		if src[i] != '<' {
			out = append(out, src[i])
			i++
			continue
		}
		for _, el := range []string{"script", "style"} {
			if bytes.HasPrefix(src[i+1:], []byte(el)) {
				if end := bytes.Index(src[i:], []byte("</"+el+">")); end >= 0 {
					i += end
				}
			}
		}
		end := bytes.IndexByte(src[i:], '>')
		if end < 0 {
			break
		}
		i += end + 1
	}
	return out
}

func dirSize(b *testing.B, dir string) int64 {
	var n int64
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		fi, err := d.Info()
		n += fi.Size()
		return err
	})
	if err != nil {
		b.Fatal(err)
	}
	return n
}

func textBytes(ps []build.Passage) int64 {
	var n int64
	for _, p := range ps {
		n += int64(len(p.Text))
	}
	return n
}

// BenchmarkIndex measures Write (passages.jsonl, index, manifest, all
// flushed to disk); MB/s counts passage text. The "corpora" case needs
// KBC_CORPORA.
func BenchmarkIndex(b *testing.B) {
	cases := []struct {
		name string
		ps   func(b *testing.B) []build.Passage
	}{
		{"generated-5k", func(*testing.B) []build.Passage { return genPassages(5000, 1) }},
		{"corpora", corpusPassages},
	}
	for _, c := range cases {
		b.Run(c.name, func(b *testing.B) {
			ps := c.ps(b)
			dir := b.TempDir()
			var size int64
			b.SetBytes(textBytes(ps))
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; b.Loop(); i++ {
				out := filepath.Join(dir, fmt.Sprint(i))
				if _, err := Write(out, &Input{Passages: ps}); err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				size = dirSize(b, filepath.Join(out, IndexDir))
				os.RemoveAll(out)
				b.StartTimer()
			}
			b.ReportMetric(float64(len(ps))*float64(b.N)/b.Elapsed().Seconds(), "passages/s")
			b.ReportMetric(float64(len(ps)), "passages")
			b.ReportMetric(float64(size)/1e6, "index-MB")
		})
	}
}

// BenchmarkSearch measures one warm query, top 10, against 5000 generated
// passages (queries of their words, some very common) and against the
// corpora (English queries a reader might type; needs KBC_CORPORA).
func BenchmarkSearch(b *testing.B) {
	b.Run("generated-5k", func(b *testing.B) {
		ps := genPassages(5000, 1)
		var queries []string
		for i := 0; i < 100; i++ {
			w := strings.Fields(ps[i*37].Text)
			queries = append(queries, w[i%len(w)]+" "+w[(i*3)%len(w)]+" "+ps[i].Heading[0])
		}
		benchSearch(b, ps, queries)
	})
	b.Run("corpora", func(b *testing.B) {
		benchSearch(b, corpusPassages(b), []string{
			"install package manager", "configure proxy server", "exception handling",
			"environment variables", "git rebase interactive", "server side rendering cache",
			"unicode string encoding", "how to run tests", "merge conflict", "websocket",
		})
	})
}

func benchSearch(b *testing.B, ps []build.Passage, queries []string) {
	dir := filepath.Join(b.TempDir(), "b")
	mustWrite(b, dir, &Input{Passages: ps})
	bd := mustOpen(b, dir)
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		if _, err := bd.Search(queries[i%len(queries)], 10); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkOpen measures opening a bundle of 5000 generated passages
// (index, statistics, and the scan of passages.jsonl).
func BenchmarkOpen(b *testing.B) {
	ps := genPassages(5000, 1)
	dir := filepath.Join(b.TempDir(), "b")
	mustWrite(b, dir, &Input{Passages: ps})
	fi, _ := os.Stat(filepath.Join(dir, PassagesFile))
	b.SetBytes(fi.Size())
	for b.Loop() {
		bd, err := Open(dir)
		if err != nil {
			b.Fatal(err)
		}
		bd.Close()
	}
}

// BenchmarkIndexReference indexes the same passages the way PERF-FLOOR.md
// section 5 measured its floor (bleve.New with the lean mapping, default
// zap 17 segments, batches of 1000, then Close), for a ratio against
// BenchmarkIndex within one run on a noisy machine.
func BenchmarkIndexReference(b *testing.B) {
	cases := []struct {
		name string
		ps   func(b *testing.B) []build.Passage
	}{
		{"generated-5k", func(*testing.B) []build.Passage { return genPassages(5000, 1) }},
		{"corpora", corpusPassages},
	}
	for _, c := range cases {
		b.Run(c.name, func(b *testing.B) {
			ps := c.ps(b)
			dir := b.TempDir()
			b.SetBytes(textBytes(ps))
			for i := 0; b.Loop(); i++ {
				path := filepath.Join(dir, fmt.Sprint(i))
				idx, err := bleve.New(path, newMapping())
				if err != nil {
					b.Fatal(err)
				}
				batch := idx.NewBatch()
				for j := range ps {
					if err := batch.IndexAdvanced(indexDocument(&ps[j])); err != nil {
						b.Fatal(err)
					}
					if batch.Size() == batchSize || j == len(ps)-1 {
						if err := idx.Batch(batch); err != nil {
							b.Fatal(err)
						}
						batch.Reset()
					}
				}
				if err := idx.Close(); err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				os.RemoveAll(path)
				b.StartTimer()
			}
			b.ReportMetric(float64(len(ps))*float64(b.N)/b.Elapsed().Seconds(), "passages/s")
		})
	}
}
