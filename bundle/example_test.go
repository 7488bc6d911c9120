package bundle_test

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"log"
	"os"
	"path/filepath"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/bundle/eval"
)

func passage(id, path string, line int, heading []string, text string) build.Passage {
	sum := sha256.Sum256([]byte(text))
	return build.Passage{ID: id, Path: path, Title: "Depot handbook", Heading: heading, Text: text,
		Line: line, EndLine: line, Tokens: 8, Hash: hex.EncodeToString(sum[:])}
}

// This example writes a bundle of two passages into a temporary folder,
// checks it, and searches it. It has no Output section because it writes
// real files.
func Example() {
	dir, err := os.MkdirTemp("", "kbc-example-")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	out := filepath.Join(dir, "bundle")

	m, err := bundle.Write(out, &bundle.Input{
		Passages: []build.Passage{
			passage("seals-1", "fleet/reefer-door-seals.md", 12, []string{"Reefer door seals", "Weekly check"},
				"Inspect each door seal for cracks and replace seals that fail the paper test."),
			passage("keys-1", "depots/north/overview.md", 3, []string{"Keys"},
				"The key cabinet sits beside the dispatch desk."),
		},
		Tool:     "kbc example",
		Settings: map[string]any{"max_tokens": 400},
	})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("passages:", m.Counts["passages"])

	problems, err := bundle.Verify(out)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("problems:", len(problems))

	b, err := bundle.Open(out)
	if err != nil {
		log.Fatal(err)
	}
	defer b.Close()
	hits, err := b.Search("replacing door seals", 5)
	if err != nil {
		log.Fatal(err)
	}
	for _, h := range hits {
		fmt.Printf("%s %s:%d %.3f\n", h.ID, h.Path, h.Line, h.Score)
	}
}

// This example checks a bundle folder against its manifest and prints what
// differs. It has no Output section because it reads a real folder.
func ExampleVerify() {
	problems, err := bundle.Verify("out/bundle")
	if err != nil {
		log.Fatal(err)
	}
	for _, p := range problems {
		fmt.Printf("%s: %s\n", p.File, p.Problem)
	}
}

// This example runs a question set on a bundle and scores it against
// judgements at section level, as kbc eval does. It has no Output section
// because it reads real files.
func ExampleBundle_Evaluate() {
	open := func(name string) *os.File {
		f, err := os.Open(name)
		if err != nil {
			log.Fatal(err)
		}
		return f
	}
	qf, jf := open("questions.tsv"), open("questions.qrels")
	defer qf.Close()
	defer jf.Close()
	qs, err := eval.ReadQueries(qf, qf.Name())
	if err != nil {
		log.Fatal(err) // every bad line, as file:line: message
	}
	qrels, err := eval.ReadQrels(jf, jf.Name())
	if err != nil {
		log.Fatal(err)
	}
	b, err := bundle.Open("out/bundle")
	if err != nil {
		log.Fatal(err)
	}
	defer b.Close()
	rep, _, err := b.Evaluate(qs, qrels, bundle.EvalOptions{Level: bundle.LevelSection})
	if err != nil {
		log.Fatal(err)
	}
	for _, m := range eval.Measures() {
		fmt.Printf("%-12s %.4f\n", m, rep.Mean[m])
	}
	if len(rep.Unjudged) > 0 {
		fmt.Println("skipped, no judgements:", rep.Unjudged)
	}
}
