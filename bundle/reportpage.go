package bundle

import (
	"bytes"
	_ "embed"
	"fmt"
	"html/template"
	"sort"
	"sync"
	"time"

	"github.com/kbc-project/kbc/build"
	"github.com/kbc-project/kbc/build/dedupe"
	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/bundle/agechart"
)

// ReportsHTML is the one page that shows the reports to a person: see
// RenderReportsPage.
const ReportsHTML = "reports/index.html"

//go:embed reports.html.tmpl
var reportsPageText string

// reportsPage is parsed once; a parsed html/template is safe for
// concurrent use.
var reportsPage = sync.OnceValue(func() *template.Template {
	return template.Must(template.New("reports").Parse(reportsPageText))
})

// maxPageWarnings bounds the warnings listed on the page: a corpus with
// thousands of bad files gives a page one can still open. The count says
// how many were left out.
const maxPageWarnings = 1000

// RenderReportsPage writes reports/index.html for a build's results: one
// self-contained HTML page (styles inline, no script, nothing loaded from
// elsewhere) with the chart of page age by owner and status
// (bundle/agechart), the owner table, the divergent copies side by side
// with the changed words marked in their sentences, the build's warnings,
// and the counts of the secrets and hidden-text reports when res has them.
// Credential values and hidden text are never on it: those reports hold
// neither, the page shows only their counts, and a credential quoted in a
// warning (a front matter value) is replaced by its marker. Every name and text from
// the sources is escaped by html/template.
func RenderReportsPage(res *build.Result) ([]byte, error) {
	v := reportsView{
		Files: []string{"staleness.md", "duplicates.md", "boilerplate.md"},
	}
	if st := res.Staleness; st != nil {
		v.GeneratedAt = st.GeneratedAt.UTC().Format(time.RFC3339)
		v.Caution, v.Notes, v.Counts = st.Caution, st.Notes, st.Counts
		v.StaleOrExpired = st.Counts.StaleOrExpired()
		rows, oldest := chartRows(st)
		opts := agechart.Options{}
		if oldest > maxChartDays {
			opts.MaxAgeDays = maxChartDays
		}
		v.Chart = template.HTML(agechart.SVG(rows, opts)) // agechart escapes all text
		for _, g := range st.Owners {
			w := g.Documents[0]
			v.Owners = append(v.Owners, ownerView{Name: ownerName(g.Owner), Counts: g.Counts,
				WorstPath: w.Path, WorstStatus: string(w.Status), WorstWhen: overdue(&w)})
		}
	}
	if d := res.Duplicates; d != nil {
		for i := range d.Divergent {
			v.Divergent = append(v.Divergent, divergentView(&d.Divergent[i]))
		}
	}
	v.WarningCount = len(res.Problems)
	for i, p := range res.Problems {
		if i == maxPageWarnings {
			v.WarningsLeft = len(res.Problems) - i
			break
		}
		// A warning may quote a front matter value, and a credential can
		// sit there as well as in the text: it is redacted here as in
		// passages.
		msg, _ := secrets.Redact(p.Error())
		v.Warnings = append(v.Warnings, msg)
	}
	if s := res.Secrets; s != nil {
		pages := map[string]bool{}
		for _, f := range s.Findings {
			pages[f.Path] = true
		}
		v.Secrets = &safetyView{Caution: s.Caution, Total: s.Total, Pages: len(pages), Rules: counted(s.Rules)}
		v.Files = append(v.Files, "secrets.md")
	}
	if h := res.Hidden; h != nil {
		v.Hidden = &safetyView{Caution: h.Caution, Total: h.Total, Pages: len(h.Pages), Reasons: counted(h.Reasons), Lints: len(h.Lints)}
		v.Files = append(v.Files, "hidden.md")
	}
	var b bytes.Buffer
	if err := reportsPage().Execute(&b, v); err != nil {
		return nil, fmt.Errorf("%s: %w", ReportsHTML, err)
	}
	return b.Bytes(), nil
}

// ReportFiles renders a build's reports as bundle files, keyed by their
// path in the bundle: each report in JSON and Markdown, and the page that
// shows them (ReportsHTML).
func ReportFiles(res *build.Result) (map[string][]byte, error) {
	files := map[string][]byte{
		StalenessMarkdown: RenderStaleness(res.Staleness),
		DuplicatesMD:      RenderDuplicates(res.Duplicates),
		BoilerplateMD:     RenderBoilerplate(res.Boilerplate),
		SecretsMD:         RenderSecrets(res.Secrets),
		HiddenMD:          RenderHidden(res.Hidden),
	}
	boiler := res.Boilerplate
	if boiler == nil {
		boiler = []build.BoilerplateEntry{}
	}
	for name, v := range map[string]any{StalenessJSON: res.Staleness, DuplicatesJSON: res.Duplicates, BoilerplateJSON: boiler,
		SecretsJSON: res.Secrets, HiddenJSON: res.Hidden} {
		data, err := MarshalReport(v)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", name, err)
		}
		files[name] = data
	}
	page, err := RenderReportsPage(res)
	if err != nil {
		return nil, err
	}
	files[ReportsHTML] = page
	return files, nil
}

// maxChartDays caps the chart's day axis: past two years, one very old
// page would squeeze every other page into the axis' first tenth; older
// pages sit at the end, labelled "730+". Judgement, no source.
const maxChartDays = 730

// chartRows turns the staleness report's owner groups into chart rows, in
// the report's order (worst page first), and gives the oldest age.
func chartRows(st *build.StalenessReport) ([]agechart.Row, int) {
	oldest := 0
	rows := make([]agechart.Row, 0, len(st.Owners))
	for _, g := range st.Owners {
		r := agechart.Row{Owner: g.Owner}
		for _, d := range g.Documents {
			age := d.AgeDays
			if d.Updated.IsZero() && d.Reviewed == nil {
				age = -1
			}
			oldest = max(oldest, age)
			title := d.Path
			if d.Title != "" {
				title = d.Title + " (" + d.Path + ")"
			}
			r.Pages = append(r.Pages, agechart.Page{AgeDays: age, Status: agechart.Status(d.Status), Title: title})
		}
		rows = append(rows, r)
	}
	return rows, oldest
}

type reportsView struct {
	GeneratedAt    string
	Files          []string
	Caution        string
	Notes          []string
	Counts         build.StatusCounts
	StaleOrExpired int
	Chart          template.HTML
	Owners         []ownerView
	Divergent      []pairView
	Warnings       []string
	WarningCount   int
	WarningsLeft   int
	Secrets        *safetyView
	Hidden         *safetyView
}

type ownerView struct {
	Name                              string
	Counts                            build.StatusCounts
	WorstPath, WorstStatus, WorstWhen string
}

type pairView struct {
	Canonical, Copy sideView
	Serves          string
	Jaccard         string
	Changes         []changeView
}

type sideView struct {
	Ref, Where, Owner, Updated, Reviewed, InBundle string
}

type changeView struct {
	Fact bool
	A, B markedView
}

// markedView is a sentence cut around its changed words.
type markedView struct{ Before, Run, After string }

type safetyView struct {
	Caution        string
	Total, Pages   int
	Rules, Reasons []namedCount
	Lints          int
}

type namedCount struct {
	Name  string
	Count int
}

func divergentView(d *build.DivergentCopy) pairView {
	side := func(s build.Side) sideView {
		in := "yes"
		if !s.InBundle {
			in = "no (folded)"
		}
		return sideView{Ref: s.Ref(), Where: fmt.Sprintf("%s:%d-%d", s.Path, s.Line, s.EndLine), Owner: ownerName(s.Owner),
			Updated: day(s.Updated), Reviewed: dayPtr(s.Reviewed), InBundle: in}
	}
	v := pairView{Canonical: side(d.Canonical), Copy: side(d.Copy), Serves: Serves(d), Jaccard: fmt.Sprintf("%.2f", d.Jaccard)}
	for _, x := range d.Differences {
		v.Changes = append(v.Changes, changeView{Fact: x.Fact, A: marked(x, true), B: marked(x, false)})
	}
	return v
}

// marked splits one side of a difference into the sentence before the
// changed words, the words, and the rest.
func marked(x dedupe.Difference, a bool) markedView {
	sentence, run := x.SentenceB, x.B
	if a {
		sentence, run = x.SentenceA, x.A
	}
	if run == "" {
		return markedView{Before: sentence}
	}
	i := wordIndex(sentence, run)
	if i < 0 {
		return markedView{Run: run}
	}
	return markedView{Before: sentence[:i], Run: run, After: sentence[i+len(run):]}
}

func counted(m map[string]int) []namedCount {
	out := make([]namedCount, 0, len(m))
	for _, k := range sortedKeys(m) {
		out = append(out, namedCount{k, m[k]})
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Count > out[j].Count })
	return out
}
