package eval

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
)

// The worked examples below are computed by hand from the definitions of
// Manning, Raghavan & Schütze, Introduction to Information Retrieval
// (2008), chapter 8, section 8.4 "Evaluation of ranked retrieval results"
// (precision at k, MAP with precision 0 for a relevant document never
// retrieved, NDCG with a log2(1+rank) discount; section number from
// memory), with graded gains as Järvelin & Kekäläinen (2002) define them:
// the grade itself, as trec_eval's m_ndcg_cut.c uses it ("Gain values are
// the relevance values in the qrels file"; MRS's own NDCG uses 2^grade-1,
// which agrees only for grades 0 and 1). The ordering, tie and averaging
// rules are those of trec_eval's source (usnistgov/trec_eval:
// form_res_rels.c comp_sim_docno, trec_eval.c, meas_avg.c,
// m_P.c, m_recall.c, m_map.c, m_recip_rank.c, m_ndcg_cut.c at commit
// dc0c991c, whose Makefile names version 10.0-rc2).

const qrelsText = `# worked examples
q1 0 d1 1
q1 0 d3 1
q1 0 d6 1
q1 0 d9 0
q2 0 a 3
q2 0 b 2
q2 0 c 0
q2 0 e 1
q2 0 f -1
q4 0 z 1
q5 0 n 0
`

// The rank column (4th) is deliberately wrong: only scores order a run.
const runText = `q1 Q0 d5 1 0.5 t
q1 Q0 d4 2 0.7 t
q1 Q0 d3 3 0.6 t
q1 Q0 d1 4 0.8 t
q1 Q0 d2 5 0.9 t

q2 Q0 c 1 2.0 t
q2 Q0 b 2 2.0 t
q2 Q0 x 3 3.0 t
q2 Q0 a 4 1.0 t
q2 Q0 e 5 0.5 t extra fields are ignored
q3 Q0 d1 1 1.0 t
q5 Q0 n 1 1.0 t
`

func parse(t *testing.T) (Qrels, Run) {
	t.Helper()
	q, err := ReadQrels(strings.NewReader(qrelsText), "q.qrels")
	if err != nil {
		t.Fatal(err)
	}
	r, err := ReadRun(strings.NewReader(runText), "r.run")
	if err != nil {
		t.Fatal(err)
	}
	return q, r
}

func near(a, b float64) bool { return math.Abs(a-b) < 5e-5 }

func checkScores(t *testing.T, qid string, got Scores, want map[string]float64) {
	t.Helper()
	if len(got) != len(Measures()) {
		t.Errorf("%s: %d measures, want %d", qid, len(got), len(Measures()))
	}
	for _, m := range Measures() {
		if !near(got[m], want[m]) {
			t.Errorf("%s %s = %.6f, want %.4f", qid, m, got[m], want[m])
		}
	}
}

func TestScoreBinary(t *testing.T) {
	q, r := parse(t)
	// q1, ranked by score: d2 N, d1 R, d4 N, d3 R, d5 N; relevant d1 d3 d6
	// (d6 never retrieved), d9 judged 0.
	//   P_k = relevant in top k / k, k even past the 5 retrieved
	//   recall_k = 2/3 from rank 4 on
	//   recip_rank = 1/2
	//   map = (1/2 + 2/4) / 3 = 1/3 (d6 adds precision 0)
	//   DCG = 1/log2(3) + 1/log2(5) = 0.63093 + 0.43068 = 1.06161
	//   IDCG = 1 + 1/log2(3) + 1/log2(4) = 2.13093; nDCG = 0.49819
	checkScores(t, "q1", Score(q["q1"], r["q1"]), map[string]float64{
		"map": 1.0 / 3, "recip_rank": 0.5,
		"P_1": 0, "P_3": 1.0 / 3, "P_5": 0.4, "P_10": 0.2,
		"recall_5": 2.0 / 3, "recall_10": 2.0 / 3, "recall_20": 2.0 / 3,
		"ndcg_cut_5": 0.4982, "ndcg_cut_10": 0.4982, "ndcg_cut_20": 0.4982,
	})
}

func TestScoreGradedTies(t *testing.T) {
	q, r := parse(t)
	// q2, ranked by score: x 3.0, then c and b tie at 2.0 and go in
	// descending docid order (c before b), a 1.0, e 0.5. Grades: x not
	// judged, c 0, b 2, a 3, e 1; f -1 is not relevant. Relevant: b a e.
	//   recip_rank = 1/3; P_3 = 1/3; P_5 = 3/5; P_10 = 3/10; recall = 1
	//   map = (1/3 + 2/4 + 3/5) / 3 = 0.47778
	//   DCG@5 = 2/log2(4) + 3/log2(5) + 1/log2(6) = 1 + 1.29203 + 0.38685 = 2.67888
	//   IDCG@5 = 3 + 2/log2(3) + 1/log2(4) = 3 + 1.26186 + 0.5 = 4.76186
	//   nDCG = 0.56257 (b before c, or the order of the rank column, would
	//   put b at rank 2: 0.61756)
	checkScores(t, "q2", Score(q["q2"], r["q2"]), map[string]float64{
		"map": 0.4778, "recip_rank": 1.0 / 3,
		"P_1": 0, "P_3": 1.0 / 3, "P_5": 0.6, "P_10": 0.3,
		"recall_5": 1, "recall_10": 1, "recall_20": 1,
		"ndcg_cut_5": 0.5626, "ndcg_cut_10": 0.5626, "ndcg_cut_20": 0.5626,
	})
}

func TestScoreCutoffs(t *testing.T) {
	// 25 documents, relevant at ranks 1, 6, 11 and 21 (grade 1): the
	// cutoffs 5, 10 and 20 each see one more. By hand:
	//   P_5 = 1/5, P_10 = 2/10, recall_5 = 1/4, recall_10 = 2/4, recall_20 = 3/4
	//   map = (1/1 + 2/6 + 3/11 + 4/21) / 4 = 0.44903
	//   IDCG@5 = IDCG@10 = IDCG@20 = 1 + 0.63093 + 0.5 + 0.43068 = 2.56161
	//   (the ideal top 5 holds all four), so ndcg_cut_5 = 1 / 2.56161 = 0.39038
	//   ndcg_cut_10 = (1 + 1/log2(7)) / 2.56161 = (1 + 0.35621) / 2.56161 = 0.52944
	//   ndcg_cut_20 = (1 + 0.35621 + 1/log2(12)) / 2.56161 = (1.35621 + 0.27894) / 2.56161 = 0.63833
	judged := map[string]int{}
	var results []Result
	for i := 1; i <= 25; i++ {
		doc := fmt.Sprintf("d%02d", i)
		results = append(results, Result{doc, float64(100 - i)})
		if i == 1 || i == 6 || i == 11 || i == 21 {
			judged[doc] = 1
		}
	}
	checkScores(t, "cut", Score(judged, results), map[string]float64{
		"map": (1 + 2.0/6 + 3.0/11 + 4.0/21) / 4, "recip_rank": 1,
		"P_1": 1, "P_3": 1.0 / 3, "P_5": 0.2, "P_10": 0.2,
		"recall_5": 0.25, "recall_10": 0.5, "recall_20": 0.75,
		"ndcg_cut_5": 0.3904, "ndcg_cut_10": 0.5294, "ndcg_cut_20": 0.6383,
	})
}

func TestEvaluateAveraging(t *testing.T) {
	q, r := parse(t)
	rep, err := Evaluate(q, r, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// Averaged: q1, q2 (both files) and q5 (judged, grade 0 only: scores 0
	// and counts, as in trec_eval.c, which evaluates every judged query
	// with results). q3 has no judgements, q4 no results: both skipped.
	if got := strings.Join(rep.Unjudged, ","); got != "q3" {
		t.Errorf("Unjudged = %s, want q3", got)
	}
	if got := strings.Join(rep.NotRun, ","); got != "q4" {
		t.Errorf("NotRun = %s, want q4", got)
	}
	if got := strings.Join(rep.NoRelevant, ","); got != "q5" {
		t.Errorf("NoRelevant = %s, want q5", got)
	}
	if len(rep.PerQuery) != 3 {
		t.Errorf("%d queries averaged, want 3", len(rep.PerQuery))
	}
	// map = (1/3 + 0.47778 + 0) / 3 = 0.27037
	if m := rep.Mean["map"]; !near(m, 0.2704) {
		t.Errorf("mean map = %.6f, want 0.2704", m)
	}
	// -c (meas_avg.c divides by every judged query): q4 adds a 0, so /4.
	rep, err = Evaluate(q, r, Options{Complete: true})
	if err != nil {
		t.Fatal(err)
	}
	if m := rep.Mean["map"]; !near(m, 0.2028) {
		t.Errorf("complete: mean map = %.6f, want 0.2028", m)
	}
	if s := rep.PerQuery["q4"]; s == nil || s["recall_20"] != 0 {
		t.Errorf("complete: q4 = %v, want all 0", s)
	}
	if _, err := Evaluate(Qrels{"a": {"x": 1}}, Run{"b": {{"x", 1}}}, Options{}); !errors.Is(err, ErrNoQueries) {
		t.Errorf("disjoint files: err = %v, want ErrNoQueries", err)
	}
}

func TestScoreEmpty(t *testing.T) {
	s := Score(map[string]int{"a": 1}, nil)
	for _, m := range Measures() {
		if s[m] != 0 {
			t.Errorf("%s = %v with nothing retrieved, want 0", m, s[m])
		}
	}
	// No relevant document judged: every measure 0, no division by zero.
	s = Score(map[string]int{"a": 0}, []Result{{"a", 1}})
	for _, m := range Measures() {
		if s[m] != 0 || math.IsNaN(s[m]) {
			t.Errorf("%s = %v with nothing relevant, want 0", m, s[m])
		}
	}
}

func TestReadErrors(t *testing.T) {
	for _, tc := range []struct {
		name, text, want string
		qrels            bool
	}{
		{"qrels fields", "q1 0 d1\n", "f:1: want 4 fields (qid iter docid grade), got 3", true},
		{"qrels extra", "q1 0 d1 1 x\n", "f:1: want 4 fields (qid iter docid grade), got 5", true},
		{"qrels grade", "# c\nq1 0 d1 high\n", `f:2: grade "high" is not an integer`, true},
		{"qrels dup", "q1 0 d1 1\n\nq1 0 d1 0\n", "f:3: query q1 judges d1 twice (first at line 1)", true},
		{"run fields", "q1 Q0 d1 1 2.0\n", "f:1: want 6 fields (qid Q0 docid rank score tag), got 5", false},
		{"run score", "q1 Q0 d1 1 high t\n", `f:1: score "high" is not a number`, false},
		{"run nan", "q1 Q0 d1 1 NaN t\n", `f:1: score "NaN" is not a number`, false},
		{"run dup", "q1 Q0 d1 1 2 t\nq2 Q0 d1 1 2 t\nq1 Q0 d1 2 1 t\n", "f:3: query q1 lists d1 twice (first at line 1)", false},
		{"two errors", "x\ny\n", "f:1: want 6 fields (qid Q0 docid rank score tag), got 1\nf:2: want 6 fields (qid Q0 docid rank score tag), got 1", false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var err error
			if tc.qrels {
				_, err = ReadQrels(strings.NewReader(tc.text), "f")
			} else {
				_, err = ReadRun(strings.NewReader(tc.text), "f")
			}
			if err == nil || err.Error() != tc.want {
				t.Errorf("err = %v\nwant %s", err, tc.want)
			}
		})
	}
	_, err := ReadRun(strings.NewReader(strings.Repeat("bad\n", 50)), "f")
	var list ErrorList
	if !errors.As(err, &list) || len(list) != maxErrors+1 || list[maxErrors].Msg != "too many errors" {
		t.Errorf("50 bad lines: %v", err)
	}
}

func TestWriteRunRoundTrip(t *testing.T) {
	_, r := parse(t)
	var b strings.Builder
	if err := WriteRun(&b, r, "kbc"); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(b.String(), "q1 Q0 d2 1 0.9 kbc\nq1 Q0 d1 2 0.8 kbc\n") {
		t.Errorf("run starts\n%s", b.String()[:60])
	}
	back, err := ReadRun(strings.NewReader(b.String()), "back")
	if err != nil {
		t.Fatal(err)
	}
	for qid, res := range r {
		a, z := Rank(res), back[qid]
		if fmt.Sprint(a) != fmt.Sprint(z) {
			t.Errorf("%s: %v, read back %v", qid, a, z)
		}
	}
	if err := WriteRun(&b, Run{"q": {{"a b", 1}}}, "kbc"); err == nil {
		t.Error("a docid with a space was written")
	}
}

func TestReadQueries(t *testing.T) {
	qs, err := ReadQueries(strings.NewReader("# questions\nq1\thow often are door seals checked\r\n\nq2\t  keys at the north depot \n"), "f")
	if err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(qs) != "[{q1 how often are door seals checked} {q2 keys at the north depot}]" {
		t.Errorf("got %v", qs)
	}
	for _, tc := range []struct{ text, want string }{
		{"q1 no tab here\n", "f:1: want qid<TAB>question, found no tab"},
		{"\tno id\n", `f:1: query id "" is empty or has white space`},
		{"q 1\ttext\n", `f:1: query id "q 1" is empty or has white space`},
		{"q1\t \n", "f:1: query q1 has no text"},
		{"q1\ta\nq1\tb\n", "f:2: query q1 is given twice (first at line 1)"},
	} {
		if _, err := ReadQueries(strings.NewReader(tc.text), "f"); err == nil || err.Error() != tc.want {
			t.Errorf("%q: err = %v, want %s", tc.text, err, tc.want)
		}
	}
}
