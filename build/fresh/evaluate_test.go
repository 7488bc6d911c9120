package fresh_test

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/sources"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/")

// now is the fixed instant of the Evaluate tests.
var now = time.Date(2026, 10, 1, 0, 0, 0, 0, time.UTC)

func mustTime(t *testing.T, s string) time.Time {
	t.Helper()
	if s == "" {
		return time.Time{}
	}
	v, err := time.Parse(time.RFC3339Nano, s)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// parse reads src as the Markdown file at name, through the real sources
// parser, so that front matter decoding and key lines are the real ones.
func parse(t *testing.T, name, src string) *sources.Document {
	t.Helper()
	doc, err := sources.Parse(name, []byte(src))
	if err != nil {
		t.Fatalf("sources.Parse: %v", err)
	}
	if len(doc.Warnings) > 0 {
		t.Fatalf("sources.Parse warnings: %v", doc.Warnings)
	}
	return doc
}

func errorStrings(errs []*sources.Error) []string {
	var s []string
	for _, e := range errs {
		s = append(s, e.Error())
	}
	return s
}

func TestEvaluate(t *testing.T) {
	rules := fresh.Policy{MaxAge: []fresh.AgeRule{
		{Pattern: "api/**", MaxAge: fresh.Duration{Days: 90}},
		{Pattern: "release-notes/*.md", MaxAge: fresh.Duration{Days: 3650}},
		{Pattern: "*.md", MaxAge: fresh.Duration{Days: 180}},
	}}
	type want struct {
		status    fresh.Status
		updated   string // RFC 3339
		source    string
		reviewBy  string
		ageDays   int
		period    string
		periodSrc string
	}
	tests := []struct {
		name   string
		path   string // default "guide.mdx"; .mdx avoids the "*.md" rule
		src    string // front matter lines, without the delimiters
		git    string // git date of path, RFC 3339
		mod    string // file time, RFC 3339
		policy fresh.Policy
		want   want
		warns  []string
	}{
		// Status transitions under the default policy (365 days, due
		// soon 30 days), now = 2026-10-01T00:00:00Z. Review-by dates
		// computed by hand (2026 is not a leap year, so 365 days from a
		// date in 2025-10..2026-02 is the same date a year on) and checked,
		// with the ages, against Python's datetime: u + timedelta(days=n)
		// and (now - u).days.
		{name: "fresh", src: "updated: 2026-06-01",
			want: want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"}},
		{name: "fresh, one second before due soon", src: "updated: 2025-10-31T00:00:01Z",
			want: want{fresh.Fresh, "2025-10-31T00:00:01Z", "front matter: updated", "2026-10-31T00:00:01Z", 334, "1y", "default"}},
		{name: "due soon, exactly 30 days left", src: "updated: 2025-10-31",
			want: want{fresh.DueSoon, "2025-10-31T00:00:00Z", "front matter: updated", "2026-10-31T00:00:00Z", 335, "1y", "default"}},
		{name: "due soon, one second left", src: "updated: 2025-10-01T00:00:01Z",
			want: want{fresh.DueSoon, "2025-10-01T00:00:01Z", "front matter: updated", "2026-10-01T00:00:01Z", 364, "1y", "default"}},
		{name: "stale, review-by is now", src: "updated: 2025-10-01",
			want: want{fresh.Stale, "2025-10-01T00:00:00Z", "front matter: updated", "2026-10-01T00:00:00Z", 365, "1y", "default"}},
		{name: "stale, long ago", src: "updated: 2019-03-04 10:00:00 +0100",
			want: want{fresh.Stale, "2019-03-04T09:00:00Z", "front matter: updated", "2020-03-03T09:00:00Z", 2767, "1y", "default"}},
		{name: "expired beats fresh", src: "updated: 2026-09-01\nexpires: 2026-09-30",
			want: want{fresh.Expired, "2026-09-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "expired at the instant", src: "updated: 2026-09-01\nexpires: 2026-10-01",
			want: want{fresh.Expired, "2026-09-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "expiry within due soon window", src: "updated: 2026-09-01\nexpires: 2026-10-31",
			want: want{fresh.DueSoon, "2026-09-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "expiry beyond due soon window", src: "updated: 2026-09-01\nexpires: 2026-10-31T00:00:01Z",
			want: want{fresh.Fresh, "2026-09-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "expired with no other date", src: "expires: 2026-01-01", mod: "",
			want: want{fresh.Expired, "", "", "", 0, "1y", "default"}},
		{name: "reviewed later than updated is the base", src: "updated: 2024-01-01\nreviewed: 2026-09-01",
			want: want{fresh.Fresh, "2024-01-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "reviewed earlier than updated is not", src: "updated: 2026-09-01\nreviewed: 2024-01-01",
			want: want{fresh.Fresh, "2026-09-01T00:00:00Z", "front matter: updated", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "review_every overrides rules", path: "api/auth.md", src: "updated: 2026-09-25\nreview_every: 2w", policy: rules,
			want: want{fresh.DueSoon, "2026-09-25T00:00:00Z", "front matter: updated", "2026-10-09T00:00:00Z", 6, "2w", "front matter: review_every"}},
		{name: "first matching rule", path: "api/v2/auth.md", src: "updated: 2026-06-01", policy: rules,
			want: want{fresh.Stale, "2026-06-01T00:00:00Z", "front matter: updated", "2026-08-30T00:00:00Z", 122, "90d", "rule: api/**"}},
		{name: "second rule", path: "release-notes/2019.md", src: "updated: 2019-06-01", policy: rules,
			want: want{fresh.Fresh, "2019-06-01T00:00:00Z", "front matter: updated", "2029-05-29T00:00:00Z", 2679, "10y", "rule: release-notes/*.md"}},
		{name: "base name rule", path: "howto/install.md", src: "updated: 2026-06-01", policy: rules,
			want: want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2026-11-28T00:00:00Z", 122, "180d", "rule: *.md"}},
		{name: "no rule matches", path: "howto/install.mdx", src: "updated: 2026-06-01", policy: rules,
			want: want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"}},
		{name: "custom due soon", src: "updated: 2025-12-01", policy: fresh.Policy{DueSoon: fresh.Duration{Days: 90}},
			want: want{fresh.DueSoon, "2025-12-01T00:00:00Z", "front matter: updated", "2026-12-01T00:00:00Z", 304, "1y", "default"}},

		// Where the updated date comes from.
		{name: "date field when no updated", src: "date: 2026-09-02T08:30:00Z", git: "2026-01-01T00:00:00Z",
			want: want{fresh.Fresh, "2026-09-02T08:30:00Z", "front matter: date", "2027-09-02T08:30:00Z", 28, "1y", "default"}},
		{name: "updated before date", src: "date: 2020-01-01\nupdated: 2026-09-02",
			want: want{fresh.Fresh, "2026-09-02T00:00:00Z", "front matter: updated", "2027-09-02T00:00:00Z", 29, "1y", "default"}},
		{name: "custom date fields", src: "date: 2020-01-01\nlastmod: 2026-09-02", policy: fresh.Policy{DateFields: []string{"lastmod"}},
			want: want{fresh.Fresh, "2026-09-02T00:00:00Z", "front matter: lastmod", "2027-09-02T00:00:00Z", 29, "1y", "default"}},
		{name: "git when no front matter date", src: "title: Guide", git: "2026-08-19T12:05:00Z", mod: "2026-09-30T00:00:00Z",
			want: want{fresh.Fresh, "2026-08-19T12:05:00Z", "git", "2027-08-19T12:05:00Z", 42, "1y", "default"}},
		{name: "file time when no git", src: "title: Guide", mod: "2026-09-30T10:00:00+02:00",
			want: want{fresh.Fresh, "2026-09-30T08:00:00Z", "file time", "2027-09-30T08:00:00Z", 0, "1y", "default"}},
		{name: "no front matter at all", src: "", git: "2025-01-01T00:00:00Z",
			want: want{fresh.Stale, "2025-01-01T00:00:00Z", "git", "2026-01-01T00:00:00Z", 638, "1y", "default"}},
		{name: "no date anywhere", src: "title: Guide",
			want:  want{fresh.Unknown, "", "", "", 0, "1y", "default"},
			warns: []string{"guide.mdx: no date: no front matter date, git date or file time; freshness unknown"}},

		// Bad values: a warning at the key's line, and the next source.
		{name: "bad updated falls to date", src: "title: Guide\nupdated: 2026-13-01\ndate: 2026-09-01",
			want:  want{fresh.Fresh, "2026-09-01T00:00:00Z", "front matter: date", "2027-09-01T00:00:00Z", 30, "1y", "default"},
			warns: []string{`guide.mdx:3: front matter updated: date "2026-13-01": month 13 out of range; ignored`}},
		{name: "bad updated and date fall to git", src: "updated: soon\ndate: 19/08/2026", git: "2026-08-19T12:05:00Z",
			want: want{fresh.Fresh, "2026-08-19T12:05:00Z", "git", "2027-08-19T12:05:00Z", 42, "1y", "default"},
			warns: []string{
				`guide.mdx:2: front matter updated: date "soon": want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm; ignored`,
				`guide.mdx:3: front matter date: date "19/08/2026": want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm; ignored`,
			}},
		{name: "zero date falls to file time", src: "updated: 0001-01-01T00:00:00Z", mod: "2026-09-30T00:00:00Z",
			want:  want{fresh.Fresh, "2026-09-30T00:00:00Z", "file time", "2027-09-30T00:00:00Z", 1, "1y", "default"},
			warns: []string{`guide.mdx:2: front matter updated: date "0001-01-01T00:00:00Z": the zero date 0001-01-01T00:00:00Z is a placeholder, not a date; ignored`}},
		{name: "number is not a date", src: "updated: 2026", git: "2026-08-19T12:05:00Z",
			want:  want{fresh.Fresh, "2026-08-19T12:05:00Z", "git", "2027-08-19T12:05:00Z", 42, "1y", "default"},
			warns: []string{`guide.mdx:2: front matter updated: want a date such as 2026-10-14, found a number; ignored`}},
		{name: "empty value is not a date", src: "updated:\ndate: 2026-09-01",
			want:  want{fresh.Fresh, "2026-09-01T00:00:00Z", "front matter: date", "2027-09-01T00:00:00Z", 30, "1y", "default"},
			warns: []string{`guide.mdx:2: front matter updated: want a date such as 2026-10-14, found an empty value; ignored`}},
		{name: "updated in the future is ignored", src: "updated: 2062-09-01", git: "2026-08-19T12:05:00Z",
			want:  want{fresh.Fresh, "2026-08-19T12:05:00Z", "git", "2027-08-19T12:05:00Z", 42, "1y", "default"},
			warns: []string{`guide.mdx:2: front matter updated: 2062-09-01T00:00:00Z is in the future; ignored`}},
		{name: "updated less than a day ahead is kept", src: "updated: 2026-10-01T23:00:00Z",
			want: want{fresh.Fresh, "2026-10-01T23:00:00Z", "front matter: updated", "2027-10-01T23:00:00Z", 0, "1y", "default"}},
		{name: "reviewed in the future is ignored", src: "updated: 2026-06-01\nreviewed: 2027-01-01",
			want:  want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"},
			warns: []string{`guide.mdx:3: front matter reviewed: 2027-01-01T00:00:00Z is in the future; ignored`}},
		{name: "git date in the future is taken as now", src: "title: Guide", git: "2030-01-01T00:00:00Z",
			want:  want{fresh.Fresh, "2026-10-01T00:00:00Z", "git", "2027-10-01T00:00:00Z", 0, "1y", "default"},
			warns: []string{`guide.mdx: git date 2030-01-01T00:00:00Z is in the future; taken as now`}},
		// A file time that a tool stamped dates nothing: the page is
		// undated, counted once per build rather than warned about here.
		{name: "file time in the future is set aside", src: "title: Guide", mod: "2030-01-01T00:00:00Z",
			want: want{fresh.Unknown, "", "", "", 0, "1y", "default"}},
		{name: "npm pack time is set aside", src: "title: Guide", mod: "1985-10-26T08:15:00Z",
			want: want{fresh.Unknown, "", "", "", 0, "1y", "default"}},
		{name: "ZIP epoch is set aside", mod: "1980-01-01T00:00:00Z",
			want: want{fresh.Unknown, "", "", "", 0, "1y", "default"}},
		{name: "sentinel file time, git date wins", mod: "1970-01-01T00:00:01Z", git: "2026-09-01T00:00:00Z",
			want: want{fresh.Fresh, "2026-09-01T00:00:00Z", "git", "2027-09-01T00:00:00Z", 30, "1y", "default"}},
		{name: "1990 file time is real", mod: "1990-01-01T00:00:00Z",
			want: want{fresh.Stale, "1990-01-01T00:00:00Z", "file time", "1991-01-01T00:00:00Z", 13422, "1y", "default"}},
		{name: "bad review_every uses the policy", src: "updated: 2026-06-01\nreview_every: 90",
			want:  want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"},
			warns: []string{`guide.mdx:3: front matter review_every: duration "90": missing unit: d (days), w (weeks), m (30-day months) or y (365-day years); ignored`}},
		{name: "zero review_every", src: "updated: 2026-06-01\nreview_every: 0d",
			want:  want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"},
			warns: []string{`guide.mdx:3: front matter review_every: duration "0d": must be at least 1d; ignored`}},
		{name: "bad expires is ignored", src: "updated: 2026-06-01\nexpires: never",
			want:  want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: updated", "2027-06-01T00:00:00Z", 122, "1y", "default"},
			warns: []string{`guide.mdx:3: front matter expires: date "never": want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm; ignored`}},
		{name: "warnings sorted by line", src: "expires: 1\nowner: {name: x}\nupdated: x\ndate: 2026-06-01",
			want: want{fresh.Fresh, "2026-06-01T00:00:00Z", "front matter: date", "2027-06-01T00:00:00Z", 122, "1y", "default"},
			warns: []string{
				`guide.mdx:2: front matter expires: want a date such as 2026-10-14, found a number; ignored`,
				`guide.mdx:3: front matter owner: want a string or a list of strings, found a table of keys; ignored`,
				`guide.mdx:4: front matter updated: date "x": want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm; ignored`,
			}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if tt.path == "" {
				tt.path = "guide.mdx"
			}
			src := "text\n"
			if tt.src != "" {
				src = "---\n" + tt.src + "\n---\ntext\n"
			}
			doc := parse(t, tt.path, src)
			doc.ModTime = mustTime(t, tt.mod)
			var git map[string]time.Time
			if tt.git != "" {
				git = map[string]time.Time{tt.path: mustTime(t, tt.git)}
			}
			info, warns := fresh.Evaluate(doc, git, now, tt.policy)
			got := want{info.Status, "", info.UpdatedSource, "", info.AgeDays, info.Period.String(), info.PeriodSource}
			if !info.Updated.IsZero() {
				got.updated = info.Updated.Format(time.RFC3339Nano)
			}
			if !info.ReviewBy.IsZero() {
				got.reviewBy = info.ReviewBy.Format(time.RFC3339Nano)
			}
			if got != tt.want {
				t.Errorf("Evaluate:\n got %+v\nwant %+v", got, tt.want)
			}
			if g, w := strings.Join(errorStrings(warns), "\n"), strings.Join(tt.warns, "\n"); g != w {
				t.Errorf("warnings:\n got %s\nwant %s", g, w)
			}
		})
	}
}

// TestEvaluateFields checks the optional fields besides the dates.
func TestEvaluateFields(t *testing.T) {
	doc := parse(t, "ops/runbook.md", `---
title: Runbook
updated: 2026-09-01
reviewed: 2026-09-15 09:00:00 +0200
owner: [platform-team, " oncall ", ""]
audience: internal
review_every: 3 months
expires: 2027-03-31
---
text
`)
	info, warns := fresh.Evaluate(doc, nil, now, fresh.DefaultPolicy())
	if len(warns) > 0 {
		t.Fatalf("warnings: %v", warns)
	}
	got, err := json.Marshal(info)
	if err != nil {
		t.Fatal(err)
	}
	// Review-by: the reviewed instant, 2026-09-15T07:00:00Z, plus 90 days.
	const want = `{"updated":"2026-09-01T00:00:00Z","updated_source":"front matter: updated","reviewed":"2026-09-15T07:00:00Z","owner":"platform-team, oncall","audience":"internal","review_every":"90d","expires":"2027-03-31T00:00:00Z","period":"90d","period_source":"front matter: review_every","review_by":"2026-12-14T07:00:00Z","status":"fresh","age_days":15}`
	if string(got) != want {
		t.Errorf("Info JSON\n got %s\nwant %s", got, want)
	}

	// A text field of the wrong kind is ignored with a warning.
	doc = parse(t, "a.md", "---\nupdated: 2026-09-01\naudience: [internal, 3]\nowner: true\n---\nx\n")
	info, warns = fresh.Evaluate(doc, nil, now, fresh.Policy{})
	wantWarns := []string{
		"a.md:3: front matter audience: want a string or a list of strings, found a list holding a number; ignored",
		"a.md:4: front matter owner: want a string or a list of strings, found true or false; ignored",
	}
	if info.Audience != "" || info.Owner != "" || strings.Join(errorStrings(warns), "\n") != strings.Join(wantWarns, "\n") {
		t.Errorf("got audience %q owner %q warnings\n%s", info.Audience, info.Owner, strings.Join(errorStrings(warns), "\n"))
	}
}

// TestEvaluateYAMLOffsetTrap runs a date written with an offset without a
// colon through the whole chain, sources.Parse then Evaluate. One YAML
// library (yaml.v3, from memory) resolves "2026-08-19 14:05:00 +0200" as
// a timestamp it cannot parse and hands back the zero time without an
// error; our chain must give the real instant, 12:05 UTC (checked with
// GNU date: date -u -d '2026-08-19 14:05:00 +0200').
func TestEvaluateYAMLOffsetTrap(t *testing.T) {
	want := time.Date(2026, 8, 19, 12, 5, 0, 0, time.UTC)
	tests := []struct{ name, src string }{
		{"yaml no colon", "---\ntitle: T\nupdated: 2026-08-19 14:05:00 +0200\n---\nbody\n"},
		{"yaml colon", "---\nupdated: 2026-08-19 14:05:00 +02:00\n---\nbody\n"},
		{"yaml rfc3339", "---\nupdated: 2026-08-19T14:05:00+02:00\n---\nbody\n"},
		{"yaml quoted", "---\nupdated: \"2026-08-19 14:05:00 +0200\"\n---\nbody\n"},
		{"toml offset datetime", "+++\nupdated = 2026-08-19T14:05:00+02:00\n+++\nbody\n"},
		{"toml utc", "+++\nupdated = 2026-08-19T12:05:00Z\n+++\nbody\n"},
		{"yaml crlf", "---\r\nupdated: 2026-08-19 14:05:00 +0200\r\n---\r\nbody\r\n"},
		{"yaml bom", "\ufeff---\nupdated: 2026-08-19 14:05:00 +0200\n---\nbody\n"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc := parse(t, "trap.md", tt.src)
			info, warns := fresh.Evaluate(doc, nil, now, fresh.Policy{})
			if len(warns) > 0 || !info.Updated.Equal(want) || info.UpdatedSource != "front matter: updated" {
				t.Errorf("updated %s from %q, warnings %v; want %s", info.Updated, info.UpdatedSource, warns, want)
			}
		})
	}
	// Garbage and zero dates warn, at the key's line, and never date the page.
	for _, bad := range []string{"2026-08-19 14:05:00 +2", "0001-01-01 00:00:00 +0000", "2026-08-19 25:05:00 +0200"} {
		t.Run(bad, func(t *testing.T) {
			doc := parse(t, "trap.md", "---\ntitle: T\n\nupdated: "+bad+"\n---\nbody\n")
			info, warns := fresh.Evaluate(doc, nil, now, fresh.Policy{})
			if len(warns) != 2 || warns[0].Line != 0 || warns[1].Line != 4 || !strings.Contains(warns[1].Msg, "front matter updated") {
				t.Errorf("warnings %q", errorStrings(warns))
			}
			if !info.Updated.IsZero() || info.Status != fresh.Unknown {
				t.Errorf("got updated %s, status %s; want no date", info.Updated, info.Status)
			}
		})
	}
}

// TestEvaluateTimeValue checks a front matter value that is already a
// time.Time (a Document built by other code than sources.Parse).
func TestEvaluateTimeValue(t *testing.T) {
	loc := time.FixedZone("x", 2*3600)
	doc := &sources.Document{Path: "a.md",
		Front:     map[string]any{"updated": time.Date(2026, 8, 19, 14, 5, 0, 0, loc), "reviewed": time.Time{}},
		FrontKeys: map[string]int{"updated": 2, "reviewed": 3}}
	info, warns := fresh.Evaluate(doc, nil, now, fresh.Policy{})
	if !info.Updated.Equal(time.Date(2026, 8, 19, 12, 5, 0, 0, time.UTC)) || info.Updated.Location() != time.UTC {
		t.Errorf("updated = %s", info.Updated)
	}
	if got := strings.Join(errorStrings(warns), "\n"); got != "a.md:3: front matter reviewed: zero date; ignored" {
		t.Errorf("warnings: %s", got)
	}
}

// TestFrontKeys checks the key lines sources fills in, which Evaluate
// relies on for its warnings.
func TestFrontKeys(t *testing.T) {
	tests := []struct {
		name, src string
		want      map[string]int
	}{
		{"yaml", "---\ntitle: T\n# comment\nupdated: 2026-01-01\ntags:\n  - a\n  - b: c\nowner: >\n  x: y\n\"review_every\": 90d\n'a''b': 1\nk:v: w\n---\nbody\n",
			map[string]int{"title": 2, "updated": 4, "tags": 5, "owner": 8, "review_every": 10, "a'b": 11, "k:v": 12}},
		{"toml", "+++\ntitle = \"T\"\n  updated = 2026-01-01\ntext = \"\"\"\nowner = x\n\"\"\"\nsite.name = \"n\"\n\"quoted key\" = 1\nlist = [\n  \"owner = y\",\n]\nowner = \"z\"\n[params]\naudience = \"in\"\n+++\nbody\n",
			map[string]int{"title": 2, "updated": 3, "text": 4, "site": 7, "quoted key": 8, "list": 9, "owner": 12, "params": 0}},
		{"yaml bom crlf", "\ufeff---\r\ntitle: T\r\nupdated: 2026-01-01\r\n---\r\nbody\r\n", map[string]int{"title": 2, "updated": 3}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc := parse(t, "a.md", tt.src)
			for k, line := range tt.want {
				if _, ok := doc.Front[k]; !ok {
					t.Errorf("key %q not in front matter %v", k, doc.Front)
				}
				if got, ok := doc.FrontKeys[k]; got != line || ok != (line > 0) {
					t.Errorf("FrontKeys[%q] = %d, %v; want %d", k, got, ok, line)
				}
			}
			n := 0
			for _, line := range tt.want {
				if line > 0 {
					n++
				}
			}
			if len(doc.FrontKeys) != n {
				t.Errorf("FrontKeys = %v", doc.FrontKeys)
			}
		})
	}
}

// TestEvaluateGolden evaluates the pages of testdata/pages (dates, bad
// values, YAML and TOML) and compares the result with
// testdata/evaluate.golden.json; -update rewrites it.
func TestEvaluateGolden(t *testing.T) {
	names, err := filepath.Glob("testdata/pages/*")
	if err != nil || len(names) == 0 {
		t.Fatalf("no pages: %v", err)
	}
	p := fresh.Policy{MaxAge: []fresh.AgeRule{{Pattern: "api-*.md", MaxAge: fresh.Duration{Days: 90}}}}
	git := map[string]time.Time{"from-git.md": time.Date(2026, 5, 4, 3, 2, 1, 0, time.UTC)}
	type result struct {
		Path     string     `json:"path"`
		Info     fresh.Info `json:"info"`
		Warnings []string   `json:"warnings,omitempty"`
	}
	var out []result
	for _, name := range names {
		src, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		doc, err := sources.Parse(filepath.Base(name), src)
		if err != nil {
			t.Fatal(err)
		}
		doc.ModTime = time.Date(2026, 9, 20, 0, 0, 0, 0, time.UTC)
		info, warns := fresh.Evaluate(doc, git, now, p)
		out = append(out, result{doc.Path, info, errorStrings(warns)})
	}
	got, err := json.MarshalIndent(out, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	got = append(got, '\n')
	const golden = "testdata/evaluate.golden.json"
	if *update {
		if err := os.WriteFile(golden, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatalf("%v (run with -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("evaluation differs from %s (run with -update to rewrite):\n%s", golden, got)
	}
}

// FuzzEvaluate checks, for any front matter values: the status is one of
// the five and agrees with the dates; a date is set exactly when its
// source is named; no date is more than a day ahead of now; the review-by
// date is the base date plus the period; the age is never negative; each
// warning names the page and the line of a key; and the result can be
// written as JSON.
func FuzzEvaluate(f *testing.F) {
	f.Add("2026-06-01", "", "", "", "", int64(0))
	f.Add("2025-10-31", "2026-09-01", "2026-10-31", "90d", "2026-01-01T00:00:00Z", int64(1e9))
	f.Add("soon", "0001-01-01", "never", "90", "", int64(2e9))
	f.Add("9999-12-31", "", "", "10000y", "", int64(0))
	f.Fuzz(func(t *testing.T, updated, reviewed, expires, every, date string, mod int64) {
		doc := &sources.Document{Path: "p.md", Front: map[string]any{}, FrontKeys: map[string]int{}}
		for i, kv := range [][2]string{{"updated", updated}, {"reviewed", reviewed}, {"expires", expires}, {"review_every", every}, {"date", date}} {
			if kv[1] != "" {
				doc.Front[kv[0]] = kv[1]
				doc.FrontKeys[kv[0]] = i + 2
			}
		}
		if mod != 0 {
			doc.ModTime = time.Unix(mod%(1<<40), 0)
		}
		info, warns := fresh.Evaluate(doc, nil, now, fresh.Policy{})
		if (info.UpdatedSource == "") != info.Updated.IsZero() {
			t.Fatalf("updated %s from %q", info.Updated, info.UpdatedSource)
		}
		for _, d := range []*time.Time{&info.Updated, info.Reviewed} {
			if d != nil && d.After(now.Add(24*time.Hour)) {
				t.Fatalf("date %s is in the future", d)
			}
		}
		base := info.Updated
		if info.Reviewed != nil && info.Reviewed.After(base) {
			base = *info.Reviewed
		}
		want := fresh.Unknown
		switch {
		case info.Expires != nil && !now.Before(*info.Expires):
			want = fresh.Expired
		case base.IsZero():
		case !now.Before(info.ReviewBy):
			want = fresh.Stale
		case info.ReviewBy.Sub(now) <= 30*24*time.Hour || info.Expires != nil && info.Expires.Sub(now) <= 30*24*time.Hour:
			want = fresh.DueSoon
		default:
			want = fresh.Fresh
		}
		if info.Status != want {
			t.Fatalf("status %s, want %s for %+v", info.Status, want, info)
		}
		if !base.IsZero() {
			rb := base.AddDate(0, 0, info.Period.Days)
			if rb.Year() > 9999 {
				rb = time.Date(9999, 12, 31, 23, 59, 59, 999999999, time.UTC)
			}
			if !info.ReviewBy.Equal(rb) {
				t.Fatalf("review by %s, want %s", info.ReviewBy, rb)
			}
		}
		if info.AgeDays < 0 || info.Period.Days <= 0 {
			t.Fatalf("age %d, period %v", info.AgeDays, info.Period)
		}
		for _, w := range warns {
			ok := w.Line == 0
			for _, l := range doc.FrontKeys {
				ok = ok || w.Line == l
			}
			if w.Path != "p.md" || !ok {
				t.Fatalf("warning %v", w)
			}
		}
		if _, err := json.Marshal(info); err != nil {
			t.Fatalf("json: %v", err)
		}
	})
}

// BenchmarkEvaluate times Evaluate on a page with every field set and a
// policy of three rules. MB/s counts the front matter bytes.
func BenchmarkEvaluate(b *testing.B) {
	front := "title: Runbook\nupdated: 2026-09-01 10:00:00 +0200\nreviewed: 2026-09-15\nowner: [platform, oncall]\naudience: internal\nreview_every: 3m\nexpires: 2027-03-31\n"
	doc, err := sources.Parse("ops/runbook.md", []byte("---\n"+front+"---\ntext\n"))
	if err != nil {
		b.Fatal(err)
	}
	p := fresh.Policy{MaxAge: []fresh.AgeRule{
		{Pattern: "api/**", MaxAge: fresh.Duration{Days: 90}},
		{Pattern: "release-notes/*.md", MaxAge: fresh.Duration{Days: 3650}},
		{Pattern: "*.md", MaxAge: fresh.Duration{Days: 180}},
	}}
	b.SetBytes(int64(len(front)))
	for b.Loop() {
		if info, warns := fresh.Evaluate(doc, nil, now, p); info.Status != fresh.Fresh || len(warns) > 0 {
			b.Fatalf("%+v %v", info, warns)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "docs/s")
}

// TestSentinel names each time a tool stamps, with where it comes from;
// sources are beside the constants in sentinel.go.
func TestSentinel(t *testing.T) {
	now := time.Date(2026, 10, 1, 0, 0, 0, 0, time.UTC)
	for _, tt := range []struct {
		at   string
		want string
	}{
		{"1970-01-01T00:00:00Z", "the Unix epoch"},
		{"1970-01-01T00:00:01Z", "the Unix epoch"}, // one second past, as some packagers stamp
		{"1980-01-01T00:00:00Z", "the earliest ZIP time"},
		{"1980-01-01T00:00:00+01:00", "before 1990"}, // 1979-12-31 in UTC
		{"1985-10-26T08:15:00Z", "the time npm stamps on packed files"},
		{"1985-10-26T08:15:01Z", "before 1990"},
		{"1989-12-31T23:59:59Z", "before 1990"},
		{"1990-01-01T00:00:00Z", ""},
		{"2026-10-01T23:00:00Z", ""}, // within a day of the build: time zones
		{"2026-10-02T00:00:01Z", "after the build time"},
		{"1601-01-01T00:00:00Z", "before 1990"}, // Windows FILETIME zero
	} {
		if got := fresh.Sentinel(mustTime(t, tt.at), now); got != tt.want {
			t.Errorf("Sentinel(%s) = %q, want %q", tt.at, got, tt.want)
		}
	}
}
