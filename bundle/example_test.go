package bundle_test

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"time"

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
		Settings: &bundle.Settings{Settings: build.Settings{MaxTokens: 400}},
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

// This example is the serving side of an assistant: open a bundle once,
// answer questions with Query (freshness status, audience rule) and
// assemble a cited context within a token budget for the model. Query and
// Context are safe for concurrent use; after a pull swaps the folder,
// open it again.
func Example_serving() {
	dir, err := os.MkdirTemp("", "kbc-example-")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	out := filepath.Join(dir, "bundle")

	reviewed := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	seals := passage("seals-1", "fleet/reefer-door-seals.md", 12, []string{"Reefer door seals", "Weekly check"},
		"Inspect each reefer door seal every week. Replace a seal that fails the paper test.")
	seals.Anchor, seals.Updated, seals.ReviewBy = "weekly-check", reviewed, reviewed.AddDate(0, 6, 0)
	pay := passage("pay-1", "office/overtime.md", 4, []string{"Overtime"},
		"Overtime on reefer night runs is paid at the night rate.")
	pay.Audience = "payroll"
	if _, err := bundle.Write(out, &bundle.Input{Passages: []build.Passage{seals, pay}, Tool: "kbc example"}); err != nil {
		log.Fatal(err)
	}

	b, err := bundle.Open(out)
	if err != nil {
		log.Fatal(err)
	}
	defer b.Close()
	now := time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)

	// A driver's question: the payroll passage is not theirs to see, and
	// the seal check is past its review date.
	hits, err := b.Query("reefer seal check", bundle.SearchOptions{K: 5, Audiences: []string{"drivers"}, Now: now})
	if err != nil {
		log.Fatal(err)
	}
	for _, h := range hits {
		fmt.Printf("%s#%s %s\n", h.Path, h.Anchor, h.Status)
	}

	c, err := b.Context("reefer seal check", bundle.ContextOptions{
		SearchOptions: bundle.SearchOptions{Audiences: []string{"drivers"}, Now: now}, Budget: 200})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Print(c.Markdown())
	// Output:
	// fleet/reefer-door-seals.md#weekly-check stale
	// [1] fleet/reefer-door-seals.md#weekly-check, lines 12-12, updated 2026-03-02
	// > warning: stale: review was due 2026-09-02
	//
	// Inspect each reefer door seal every week. Replace a seal that fails the paper test.
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

// Open on a docs folder, not a bundle, says which it is.
func ExampleNotBundleError() {
	src, err := os.MkdirTemp("", "kbc-example-")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(src)
	if err := os.WriteFile(filepath.Join(src, "yard.md"), []byte("# Yard\n"), 0o644); err != nil {
		log.Fatal(err)
	}
	_, err = bundle.Open(src)
	var nb *bundle.NotBundleError
	fmt.Println(errors.As(err, &nb), nb.Source)
	// Output:
	// true true
}
