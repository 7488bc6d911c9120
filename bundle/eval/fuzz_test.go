package eval

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// FuzzReadQrels checks that any input gives judgements or positioned
// errors, never a panic, and that what is read has no empty ids.
func FuzzReadQrels(f *testing.F) {
	f.Add(qrelsText)
	f.Add("q1 0 d1\n")
	f.Add("q1 0 d1 1\nq1 0 d1 2\n")
	f.Add("# c\n\n\tq 0 d -3\r\n")
	f.Add("q 0 d 99999999999999999999\n")
	f.Fuzz(func(t *testing.T, in string) {
		q, err := ReadQrels(strings.NewReader(in), "f")
		if err != nil {
			checkErrorList(t, err)
			return
		}
		for qid, docs := range q {
			if qid == "" || strings.ContainsFunc(qid, isSpace) || len(docs) == 0 {
				t.Fatalf("query %q with %d judgements", qid, len(docs))
			}
			for doc := range docs {
				if doc == "" || strings.ContainsFunc(doc, isSpace) {
					t.Fatalf("docid %q", doc)
				}
			}
		}
	})
}

// FuzzReadRun checks that any input gives a run or positioned errors, that
// a run can be scored with every value in [0, 1], and that writing it and
// reading it back gives the same ranking.
func FuzzReadRun(f *testing.F) {
	f.Add(runText)
	f.Add("q1 Q0 d1 1 2.0\n")
	f.Add("q1 Q0 d1 1 NaN t\n")
	f.Add("q1 Q0 d1 1 -Inf t\nq1 Q0 d2 1 1e400 t\n")
	f.Add("q1 Q0 d1 1 2 t\nq1 Q0 d1 2 1 t\n")
	f.Fuzz(func(t *testing.T, in string) {
		run, err := ReadRun(strings.NewReader(in), "f")
		if err != nil {
			checkErrorList(t, err)
			return
		}
		for qid, res := range run {
			judged := map[string]int{}
			for i, r := range res {
				judged[r.Doc] = i % 3
			}
			for m, v := range Score(judged, res) {
				if !(v >= 0 && v <= 1+1e-9) {
					t.Fatalf("%s %s = %v", qid, m, v)
				}
			}
		}
		var b strings.Builder
		if err := WriteRun(&b, run, "t"); err != nil {
			t.Fatal(err)
		}
		back, err := ReadRun(strings.NewReader(b.String()), "back")
		if err != nil {
			t.Fatalf("reading back %q: %v", b.String(), err)
		}
		for qid, res := range run {
			a, z := Rank(res), back[qid]
			if len(a) != len(z) {
				t.Fatalf("%s: %d results, %d read back", qid, len(a), len(z))
			}
			for i := range a {
				if a[i].Doc != z[i].Doc || a[i].Score != z[i].Score && !(math.IsNaN(a[i].Score)) {
					t.Fatalf("%s: %v, read back %v", qid, a, z)
				}
			}
		}
	})
}

func checkErrorList(t *testing.T, err error) {
	var list ErrorList
	if !errors.As(err, &list) || len(list) == 0 || len(list) > maxErrors+1 {
		t.Fatalf("error %v is not a short ErrorList", err)
	}
	last := 0
	for _, e := range list {
		if e.Line < 1 || e.Line < last || e.File != "f" || strings.Contains(e.Msg, "\n") {
			t.Fatalf("bad error %q after line %d", e.Error(), last)
		}
		last = e.Line
	}
}

// FuzzReadQueries checks that any input gives questions with usable ids
// and text, or positioned errors.
func FuzzReadQueries(f *testing.F) {
	f.Add("q1\thow often are door seals checked\n# c\n\nq2\tkeys\n")
	f.Add("q1 no tab\n")
	f.Add("q1\ta\nq1\tb\n")
	f.Fuzz(func(t *testing.T, in string) {
		qs, err := ReadQueries(strings.NewReader(in), "f")
		if err != nil {
			checkErrorList(t, err)
			return
		}
		seen := map[string]bool{}
		for _, q := range qs {
			if q.ID == "" || strings.ContainsFunc(q.ID, isSpace) || q.ID[0] == '#' || seen[q.ID] || strings.TrimSpace(q.Text) != q.Text || q.Text == "" {
				t.Fatalf("bad query %q", q)
			}
			seen[q.ID] = true
		}
	})
}
