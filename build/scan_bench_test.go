package build

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/kbc-project/kbc/sources"
)

// BenchmarkScanCorpus compares, on each real corpus under $KBC_CORPORA,
// the cost of the safety passes (secrets, lints) with that of reading and
// normalising the same pages: their share of the per-page work is what
// they add to a clean build. Run with
//
//	KBC_CORPORA=/tmp/kbc-corpora go test ./build -run '^$' -bench ScanCorpus -benchtime 3x
func BenchmarkScanCorpus(b *testing.B) {
	dir := os.Getenv("KBC_CORPORA")
	if dir == "" {
		b.Skip("KBC_CORPORA is not set: fetch the corpora with shared/corpora/get-corpora.sh and point KBC_CORPORA at them")
	}
	for _, name := range []string{"python-3.11-html", "git-2.39-html", "nextjs-docs", "bun-docs"} {
		root := filepath.Join(dir, name)
		fsys := os.DirFS(root)
		files, _ := sources.Walk(fsys, sources.WalkOptions{MaxSize: 10 << 20})
		if len(files) == 0 {
			continue
		}
		var datas [][]byte
		var paths []string
		for _, f := range files {
			if data, err := sources.ReadFile(fsys, f, 10<<20); err == nil {
				datas, paths = append(datas, data), append(paths, f.Path)
			}
		}
		var docs []*sources.Document
		b.Run(name+"/read+normalise", func(b *testing.B) {
			for b.Loop() {
				docs = docs[:0]
				for i, data := range datas {
					d, err := sources.Parse(paths[i], data)
					if err != nil {
						continue
					}
					Normalize(d)
					docs = append(docs, d)
				}
			}
		})
		b.Run(name+"/secrets+lints", func(b *testing.B) {
			for b.Loop() {
				for _, d := range docs {
					cp := *d
					cp.Blocks = append([]sources.Block(nil), d.Blocks...)
					cp.Headings = append([]sources.Heading(nil), d.Headings...)
					cp.Secrets, cp.Lints = nil, nil
					redactSecrets(&cp)
					lintAssistant(&cp)
				}
			}
		})
	}
}
