package dedupe_test

import (
	"fmt"
	"strings"

	"github.com/kbc-project/kbc/build/dedupe"
)

func ExampleBands() {
	b, r := dedupe.Bands(128, 0.8)
	fmt.Printf("%d bands of %d rows\n", b, r)
	fmt.Printf("caught at J=0.8: %.4f\n", dedupe.CatchProbability(0.8, b, r))
	fmt.Printf("caught at J=0.5: %.4f\n", dedupe.CatchProbability(0.5, b, r))
	// Output:
	// 21 bands of 6 rows
	// caught at J=0.8: 0.9983
	// caught at J=0.5: 0.2816
}

// The S-curve of Mining of Massive Datasets, Fig. 3.8: 20 bands of 5 rows.
func ExampleCatchProbability() {
	for _, s := range []float64{0.2, 0.4, 0.6, 0.8} {
		fmt.Printf("%.1f %.4f\n", s, dedupe.CatchProbability(s, 20, 5))
	}
	// Output:
	// 0.2 0.0064
	// 0.4 0.1860
	// 0.6 0.8019
	// 0.8 0.9996
}

func ExampleDivergent() {
	diffs, ok := dedupe.Divergent(
		"Access keys expire after 30 days. Rotate them from the Keys page.",
		"Access keys expire after 90 days. Rotate them on the Keys page.")
	for _, d := range diffs {
		fmt.Printf("%q -> %q fact=%v\n", d.A, d.B, d.Fact)
	}
	fmt.Println("divergent:", ok)
	// Output:
	// "30 days" -> "90 days" fact=true
	// "from" -> "on" fact=false
	// divergent: true
}

func ExampleFind() {
	sentence := "Tidewater brokers keep every message in a journal on disk and replay it after a restart, "
	texts := []string{
		strings.Repeat(sentence, 4) + "so no acknowledged message is lost.",
		"Queues are created on first use.",
		strings.Repeat(sentence, 4) + "so no acknowledged message is ever lost.",
		"QUEUES are created on first use!",
	}
	res, err := dedupe.Find(len(texts), func(i int) string { return texts[i] }, dedupe.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range res.Clusters {
		fmt.Println(c.Members, "exact:", c.Exact)
		for _, p := range c.Pairs {
			fmt.Printf("  %d~%d J=%.3f\n", p.A, p.B, p.Jaccard)
		}
	}
	// Output:
	// [0 2] exact: false
	//   0~2 J=0.875
	// [1 3] exact: true
	//   1~3 J=1.000
}
