package eval_test

import (
	"fmt"
	"log"
	"strings"

	"github.com/kbc-project/kbc/bundle/eval"
)

// This example scores a two-query run against graded judgements. The
// queries and documents are invented (the Polarline Freight handbook).
func ExampleEvaluate() {
	qrels, err := eval.ReadQrels(strings.NewReader(`
seals 0 fleet/reefer-door-seals.md#weekly-check 2
seals 0 fleet/reefer-door-seals.md#replacing 1
keys  0 depots/north/overview.md#keys 1
`), "handbook.qrels")
	if err != nil {
		log.Fatal(err)
	}
	run, err := eval.ReadRun(strings.NewReader(`
seals Q0 fleet/reefer-door-seals.md#replacing   1 7.5 demo
seals Q0 fleet/reefer-door-seals.md#weekly-check 2 6.1 demo
keys  Q0 depots/south/overview.md#keys           1 4.0 demo
keys  Q0 depots/north/overview.md#keys           2 3.2 demo
`), "demo.run")
	if err != nil {
		log.Fatal(err)
	}
	rep, err := eval.Evaluate(qrels, run, eval.Options{})
	if err != nil {
		log.Fatal(err)
	}
	for _, m := range []string{"map", "recip_rank", "P_1", "ndcg_cut_5"} {
		fmt.Printf("%-11s %.4f  (keys %.4f, seals %.4f)\n", m, rep.Mean[m], rep.PerQuery["keys"][m], rep.PerQuery["seals"][m])
	}
	// Output:
	// map         0.7500  (keys 0.5000, seals 1.0000)
	// recip_rank  0.7500  (keys 0.5000, seals 1.0000)
	// P_1         0.5000  (keys 0.0000, seals 1.0000)
	// ndcg_cut_5  0.7453  (keys 0.6309, seals 0.8597)
}

// A line that does not parse is an error at file:line.
func ExampleReadRun() {
	_, err := eval.ReadRun(strings.NewReader("q1 Q0 d1 1 0.5 t\nq1 Q0 d2 2 much t\n"), "bad.run")
	fmt.Println(err)
	// Output:
	// bad.run:2: score "much" is not a number
}

// Results are ranked by score, ties by document id in descending order;
// the rank a file gives is ignored.
func ExampleRank() {
	for i, r := range eval.Rank([]eval.Result{{"a", 1}, {"c", 2}, {"b", 2}}) {
		fmt.Println(i+1, r.Doc)
	}
	// Output:
	// 1 c
	// 2 b
	// 3 a
}
