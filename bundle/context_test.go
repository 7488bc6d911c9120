package bundle

import (
	"encoding/json"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/fresh"
)

var queryNow = time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)

// dated sets p's freshness dates: updated, and review-by one year later.
func dated(p build.Passage, updated string) build.Passage {
	t, err := time.Parse(time.DateOnly, updated)
	if err != nil {
		panic(err)
	}
	p.Updated, p.ReviewBy = t, t.AddDate(1, 0, 0)
	return p
}

// writeWithReports writes passages as a bundle with a duplicate report
// holding divergent, and opens it.
func writeWithReports(t *testing.T, ps []build.Passage, divergent []build.DivergentCopy) *Bundle {
	t.Helper()
	rep, err := json.Marshal(build.DuplicateReport{Divergent: divergent})
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "out")
	mustWrite(t, out, &Input{Passages: ps, Files: map[string][]byte{DuplicatesJSON: rep}})
	return mustOpen(t, out)
}

func hitIDs(hits []Hit) []string {
	var ids []string
	for _, h := range hits {
		ids = append(ids, h.ID)
	}
	return ids
}

// TestQueryAudience: a passage labelled for an audience reaches only a
// caller who names one of its audiences; unlabelled ones reach everyone.
func TestQueryAudience(t *testing.T) {
	pub := mkPassage("pub", "a.md", 1, "Seals", nil, "door seal check every month")
	drv := mkPassage("drv", "b.md", 1, "Seals", nil, "door seal check for drivers")
	drv.Audience = "drivers"
	ops := mkPassage("ops", "c.md", 1, "Seals", nil, "door seal check for the desk")
	ops.Audience = "control-desk, finance"
	open := mkPassage("open", "d.md", 1, "Seals", nil, "door seal check for everyone")
	open.Audience = "Public"
	b := writeWithReports(t, []build.Passage{pub, drv, ops, open}, nil)
	for _, tt := range []struct {
		audiences []string
		want      []string
	}{
		{nil, []string{"open", "pub"}},
		{[]string{"drivers"}, []string{"drv", "open", "pub"}},
		{[]string{"finance"}, []string{"open", "ops", "pub"}},
		{[]string{"drivers", "control-desk"}, []string{"drv", "open", "ops", "pub"}},
		{[]string{"Drivers"}, []string{"open", "pub"}}, // labels match exactly
	} {
		hits, err := b.Query("reefer door seal check", SearchOptions{Audiences: tt.audiences, Now: queryNow})
		if err != nil {
			t.Fatal(err)
		}
		got := hitIDs(hits)
		slices.Sort(got)
		if !slices.Equal(got, tt.want) {
			t.Errorf("audiences %q: got %q, want %q", tt.audiences, got, tt.want)
		}
	}
}

// TestQueryStatus: each hit carries its status at the query's instant,
// and the exclusions drop what they name.
func TestQueryStatus(t *testing.T) {
	fresh1 := dated(mkPassage("fresh", "a.md", 1, "T", nil, "reefer alarm codes"), "2026-10-01")
	soon := dated(mkPassage("soon", "b.md", 1, "T", nil, "reefer alarm codes"), "2025-12-20")
	stale := dated(mkPassage("stale", "c.md", 1, "T", nil, "reefer alarm codes"), "2024-01-10")
	gone := dated(mkPassage("gone", "d.md", 1, "T", nil, "reefer alarm codes"), "2026-10-01")
	exp := time.Date(2026, 11, 15, 0, 0, 0, 0, time.UTC)
	gone.Expires = &exp
	undated := mkPassage("undated", "e.md", 1, "T", nil, "reefer alarm codes")
	b := writeWithReports(t, []build.Passage{fresh1, soon, stale, gone, undated}, nil)

	hits, err := b.Query("reefer alarm", SearchOptions{Now: queryNow})
	if err != nil {
		t.Fatal(err)
	}
	status := map[string]fresh.Status{}
	for _, h := range hits {
		status[h.ID] = h.Status
	}
	want := map[string]fresh.Status{"fresh": fresh.Fresh, "soon": fresh.DueSoon, "stale": fresh.Stale, "gone": fresh.Expired, "undated": fresh.Unknown}
	for id, s := range want {
		if status[id] != s {
			t.Errorf("%s: status %q, want %q", id, status[id], s)
		}
	}
	// Equal scores: the fresher first, expired last.
	if got := hitIDs(hits); !slices.Equal(got, []string{"fresh", "soon", "undated", "stale", "gone"}) {
		t.Errorf("order %q", got)
	}
	for _, tt := range []struct {
		opts SearchOptions
		want []string
	}{
		{SearchOptions{ExcludeExpired: true}, []string{"fresh", "soon", "undated", "stale"}},
		{SearchOptions{ExcludeStale: true}, []string{"fresh", "soon", "undated"}},
		{SearchOptions{ExcludeStale: true, K: 2}, []string{"fresh", "soon"}},
	} {
		tt.opts.Now = queryNow
		hits, err := b.Query("reefer alarm", tt.opts)
		if err != nil {
			t.Fatal(err)
		}
		if got := hitIDs(hits); !slices.Equal(got, tt.want) {
			t.Errorf("%+v: got %q, want %q", tt.opts, got, tt.want)
		}
	}
	// The JSON of a hit names its status.
	data, _ := json.Marshal(hits[0])
	if !strings.Contains(string(data), `"status":"fresh"`) {
		t.Errorf("JSON lacks the status: %s", data)
	}
}

// TestQueryConflict: the copies of a divergent pair each name the other
// and the differing words; at an equal score the canonical copy comes
// first even when the other sorts first and is fresher.
func TestQueryConflict(t *testing.T) {
	text := func(n string) string { return "Check the reefer door seals every " + n + " days at the depot." }
	copyP := dated(mkPassage("copy", "a-north/seals.md", 1, "Seals", nil, text("90")), "2026-11-20")
	copyP.Anchor = "how-often"
	canon := dated(mkPassage("canon", "fleet/seals.md", 1, "Seals", nil, text("30")), "2026-06-01")
	canon.Anchor = "checks"
	diffs, ok := dedupe.Divergent(canon.Text, copyP.Text)
	if !ok {
		t.Fatal("the pair is not divergent")
	}
	b := writeWithReports(t, []build.Passage{copyP, canon}, []build.DivergentCopy{{
		Canonical: build.Side{Location: build.Location{ID: "canon", Path: canon.Path, Anchor: canon.Anchor}, InBundle: true},
		Copy:      build.Side{Location: build.Location{ID: "copy", Path: copyP.Path, Anchor: copyP.Anchor}, InBundle: true},
		Jaccard:   0.6, Differences: diffs,
	}})
	hits, err := b.Query("reefer door seals", SearchOptions{Now: queryNow})
	if err != nil {
		t.Fatal(err)
	}
	if len(hits) != 2 || hits[0].Score != hits[1].Score {
		t.Fatalf("want two hits of equal score, got %+v", hits)
	}
	if hits[0].ID != "canon" {
		t.Errorf("first hit %s, want the canonical copy", hits[0].ID)
	}
	want := map[string]Conflict{
		"canon": {With: "a-north/seals.md#how-often", Differences: []Difference{{Here: "30 days", There: "90 days"}}},
		"copy":  {With: "fleet/seals.md#checks", Differences: []Difference{{Here: "90 days", There: "30 days"}}},
	}
	for _, h := range hits {
		if len(h.Conflict) != 1 || h.Conflict[0].With != want[h.ID].With || !slices.Equal(h.Conflict[0].Differences, want[h.ID].Differences) {
			t.Errorf("%s: conflict %+v, want %+v", h.ID, h.Conflict, want[h.ID])
		}
	}
}

// TestMMRWorkedExample follows equation 1 of Carbonell and Goldstein
// (1998), MMR = argmax over unchosen D_i of [λ·Sim1(D_i, Q) − (1−λ)·max
// over chosen D_j of Sim2(D_i, D_j)], by hand on three candidates with
// relevance 1.0, 0.8 and 0.6, sim(0,1) = 0.9, sim(0,2) = 0.1 and
// sim(1,2) = 0.3:
//
//	λ = 0.7, step 1: 0.70, 0.56, 0.42 -> 0
//	         step 2: 0.56 − 0.3·0.9 = 0.29, 0.42 − 0.3·0.1 = 0.39 -> 2
//	         step 3: 0.56 − 0.3·max(0.9, 0.3) = 0.29 -> 1
//	λ = 1 is the plain ranking 0, 1, 2; at λ = 0.2 step 1 gives 0.20,
//	0.16, 0.12 -> 0, step 2 gives 0.16 − 0.72 = −0.56 and
//	0.12 − 0.08 = 0.04 -> 2.
func TestMMRWorkedExample(t *testing.T) {
	rel := []float64{1.0, 0.8, 0.6}
	s := map[[2]int]float64{{0, 1}: 0.9, {0, 2}: 0.1, {1, 2}: 0.3}
	sim := func(i, j int) float64 { return s[[2]int{min(i, j), max(i, j)}] }
	for _, tt := range []struct {
		lambda float64
		want   []int
	}{{0.7, []int{0, 2, 1}}, {1, []int{0, 1, 2}}, {0.2, []int{0, 2, 1}}} {
		m := newMMR(rel, tt.lambda, sim)
		var chosen []int
		for p := m.next(); p >= 0; p = m.next() {
			m.take(p)
			chosen = append(chosen, p)
		}
		if !slices.Equal(chosen, tt.want) {
			t.Errorf("lambda %g: order %v, want %v", tt.lambda, chosen, tt.want)
		}
	}
}

// contextBundle is a small handbook: a section of two passages that
// follow each other, a copy of one of them, a stale page and an unrelated
// code block.
func contextBundle(t *testing.T) *Bundle {
	seal1 := dated(mkPassage("s1", "fleet/seals.md", 3, "Door seals", []string{"Door seals", "Checks"},
		"Check every reefer door seal every 30 days. Look for cracks and gaps along the whole gasket. Replace a torn seal before the next frozen load."), "2026-10-01")
	seal2 := dated(mkPassage("s2", "fleet/seals.md", 8, "Door seals", []string{"Door seals", "Checks"},
		"Record each door seal check in the trailer log. A seal that fails twice in a quarter goes to the workshop."), "2026-10-01")
	seal1.Anchor, seal2.Anchor = "checks", "checks"
	copy1 := dated(mkPassage("c1", "depots/north/seals.md", 1, "Door seals (north)", nil,
		"Check every reefer door seal every 30 days. Look for cracks and gaps along the whole gasket. Replace a torn seal before the next frozen load."), "2026-10-01")
	old := dated(mkPassage("old", "fleet/legacy.md", 1, "Legacy forms", nil,
		"Reefer door seal checks were logged on paper forms at the gate hut."), "2023-01-01")
	code := dated(mkPassage("code", "it/api.md", 1, "API", nil,
		"```sh\ncurl https://api.example.com/trailers --data unit=3\n```"), "2026-10-01")
	return writeWithReports(t, []build.Passage{seal1, seal2, copy1, old, code}, nil)
}

// TestContext: the blocks fit the budget, cite their place, merge the two
// passages of one section in reading order, prefer a new passage to a
// copy of one already chosen, and carry their warnings.
func TestContext(t *testing.T) {
	b := contextBundle(t)
	c, err := b.Context("reefer door seal check", ContextOptions{SearchOptions: SearchOptions{Now: queryNow}, Budget: 400})
	if err != nil {
		t.Fatal(err)
	}
	tok, _ := b.tokenizer()
	if c.Tokens > c.Budget || c.Tokens != tok.Count(c.Markdown()) {
		t.Errorf("tokens %d, budget %d, Markdown counts %d", c.Tokens, c.Budget, tok.Count(c.Markdown()))
	}
	var cites []string
	for _, blk := range c.Blocks {
		cites = append(cites, blk.Cite)
		if blk.Tokens != tok.Count(blk.markdown()) {
			t.Errorf("block %d: tokens %d, counted %d", blk.N, blk.Tokens, tok.Count(blk.markdown()))
		}
	}
	first := c.Blocks[0]
	if first.Cite != "fleet/seals.md#checks" || !slices.Equal(first.IDs, []string{"s1", "s2"}) || first.Line != 3 || first.EndLine != 8 {
		t.Errorf("first block %+v, want s1 and s2 merged", first)
	}
	if !strings.HasPrefix(first.Text, "Check every reefer") || !strings.Contains(first.Text, "\n\nRecord each") {
		t.Errorf("merged text not in reading order: %q", first.Text)
	}
	// The north copy repeats s1 word for word: MMR takes the old page
	// before it.
	iOld, iCopy := slices.Index(cites, "fleet/legacy.md"), slices.Index(cites, "depots/north/seals.md")
	if iOld < 0 || (iCopy >= 0 && iCopy < iOld) {
		t.Errorf("blocks %q: want the legacy page before the copy", cites)
	}
	blk := c.Blocks[iOld]
	if len(blk.Warnings) != 1 || !strings.HasPrefix(blk.Warnings[0], "stale: review was due 2024-01-01") {
		t.Errorf("legacy page warnings %q", blk.Warnings)
	}
	md := c.Markdown()
	if !strings.HasPrefix(md, "[1] fleet/seals.md#checks, lines 3-8, updated 2026-10-01\n\nCheck every") ||
		!strings.Contains(md, "> warning: stale: review was due 2024-01-01") {
		t.Errorf("Markdown:\n%s", md)
	}
	// Relevance alone (lambda 1) takes the passages in score order, the
	// copy included.
	c1, err := b.Context("reefer door seal check", ContextOptions{SearchOptions: SearchOptions{Now: queryNow}, Budget: 400, Lambda: 1})
	if err != nil {
		t.Fatal(err)
	}
	hits, err := b.Query("reefer door seal check", SearchOptions{Now: queryNow})
	if err != nil {
		t.Fatal(err)
	}
	var want, got []string
	for _, h := range hits {
		if c := h.Ref(); !slices.Contains(want, c) {
			want = append(want, c)
		}
	}
	for _, blk := range c1.Blocks {
		got = append(got, blk.Cite)
	}
	if !slices.Equal(got, want[:len(got)]) || !slices.Contains(got, "depots/north/seals.md") {
		t.Errorf("lambda 1: blocks %q, want the score order %q", got, want)
	}
}

// TestContextCutsAtSentences: a passage that does not fit gives its first
// whole sentences and says so; a code block is never cut.
func TestContextCutsAtSentences(t *testing.T) {
	b := contextBundle(t)
	tok, _ := b.tokenizer()
	for budget := 20; budget <= 120; budget += 5 {
		c, err := b.Context("reefer door seal check", ContextOptions{SearchOptions: SearchOptions{Now: queryNow}, Budget: budget})
		if err != nil {
			t.Fatal(err)
		}
		if c.Tokens > budget {
			t.Errorf("budget %d: %d tokens", budget, c.Tokens)
		}
		if n := tok.Count(c.Markdown()); n != c.Tokens {
			t.Errorf("budget %d: Tokens %d, Markdown counts %d", budget, c.Tokens, n)
		}
		for _, blk := range c.Blocks {
			shortened := slices.ContainsFunc(blk.Warnings, func(w string) bool { return strings.HasPrefix(w, "shortened:") })
			if shortened && !strings.HasSuffix(blk.Text, ".") {
				t.Errorf("budget %d: cut mid-sentence: %q", budget, blk.Text)
			}
			if strings.Contains(blk.Text, "```") && strings.Count(blk.Text, "```")%2 != 0 {
				t.Errorf("budget %d: code block cut: %q", budget, blk.Text)
			}
		}
	}
	c, err := b.Context("reefer door seal check", ContextOptions{SearchOptions: SearchOptions{Now: queryNow}, Budget: 55})
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Blocks) == 0 || !slices.Contains(c.Blocks[0].Warnings, "shortened: the first 1 of 3 sentences of this passage") {
		t.Errorf("budget 55: %+v", c.Blocks)
	}
}

func TestSentences(t *testing.T) {
	text := "First one. Second (with a dot.) here! Third?\n\n- item one\n- item two\n\n```go\nx := 1. // not a sentence end\n\ny := 2\n```\n\na | b | c\nd | e | f\n\nNo stop at the end"
	var got []string
	start := 0
	for _, e := range sentences(text) {
		got = append(got, strings.TrimSpace(text[start:e]))
		start = e
	}
	want := []string{"First one.", "Second (with a dot.)", "here!", "Third?", "- item one", "- item two",
		"```go\nx := 1. // not a sentence end\n\ny := 2\n```", "a | b | c", "d | e | f", "No stop at the end"}
	if !slices.Equal(got, want) {
		t.Errorf("sentences:\n got %q\nwant %q", got, want)
	}
}

func TestContextBadOptions(t *testing.T) {
	b := contextBundle(t)
	for _, o := range []ContextOptions{{Budget: 0}, {Budget: 10, Lambda: 1.5}, {Budget: 10, Lambda: -1}} {
		if _, err := b.Context("seal", o); err == nil {
			t.Errorf("%+v accepted", o)
		}
	}
	c, err := b.Context("zebra", ContextOptions{Budget: 100})
	if err != nil || len(c.Blocks) != 0 || c.Tokens != 0 {
		t.Errorf("no match: %+v, %v", c, err)
	}
}
