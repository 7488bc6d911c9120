package bundle

import (
	"bytes"
	"encoding/json"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build"
)

// stdLine is the reference: what encoding/json writes for p with HTML
// escaping off, as passages.jsonl was written before appendPassage.
func stdLine(t testing.TB, p *build.Passage) string {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(p); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

func fullPassage() build.Passage {
	at := time.Date(2026, 11, 20, 9, 30, 0, 123456789, time.UTC)
	zone := time.Date(2025, 2, 3, 4, 5, 6, 0, time.FixedZone("", 2*3600))
	return build.Passage{
		ID: "fleet-seals-1", Path: "fleet/seals.md", Anchor: "checks", Title: "Seals <& \"doors\">",
		Heading: []string{"Fleet", "Seals > checks"}, Text: "Line one\nline\ttwo \\ \u2028 \u2029 \x7f \x01 \b\f\r é 😀",
		Line: 3, EndLine: 9, Tokens: 42, Hash: strings.Repeat("ab", 32), Split: true,
		Updated: at, UpdatedSource: "git", Reviewed: &zone, ReviewBy: at.AddDate(0, 3, 0), Expires: &time.Time{},
		Owner: "fleet-team", Audience: "drivers", AlsoAt: []string{"a.md#x", "b.md"},
		Terms: []build.Term{{Text: "door <seal>", Anchor: "term-door-seal"}, {Text: "no anchor \u2028"}},
	}
}

// TestAppendPassage: appendPassage writes exactly what encoding/json does,
// for a passage with every field set, one with none, and generated ones.
func TestAppendPassage(t *testing.T) {
	cases := []build.Passage{fullPassage(), {}, {Heading: []string{}}, {Text: "bad \xff\xfe utf-8", AlsoAt: []string{}}}
	cases = append(cases, genPassages(50, 3)...)
	for i := range cases {
		got, ok := appendPassage(nil, &cases[i])
		if want := stdLine(t, &cases[i]); !ok || string(got) != want {
			t.Errorf("case %d:\n got %s\nwant %s", i, got, want)
		}
	}
	far := fullPassage()
	far.Updated = time.Date(10000, 1, 1, 0, 0, 0, 0, time.UTC)
	if _, ok := appendPassage(nil, &far); ok {
		t.Error("a year encoding/json refuses was encoded")
	}
}

// TestPassageFields: appendPassage knows every field of build.Passage. A
// field added there must be added to appendPassage, and to this list.
func TestPassageFields(t *testing.T) {
	var names []string
	typ := reflect.TypeFor[build.Passage]()
	for i := range typ.NumField() {
		names = append(names, typ.Field(i).Tag.Get("json"))
	}
	want := []string{"id", "path", "anchor,omitempty", "title", "heading", "text", "line", "end_line", "tokens", "hash",
		"split,omitempty", "updated,omitzero", "updated_source,omitempty", "reviewed,omitempty", "review_by,omitzero",
		"expires,omitempty", "owner,omitempty", "audience,omitempty", "also_at,omitempty", "terms,omitempty"}
	if !reflect.DeepEqual(names, want) {
		t.Errorf("build.Passage fields %q\nappendPassage knows %q", names, want)
	}
}

func FuzzAppendPassage(f *testing.F) {
	f.Add("fleet/seals.md", "Seals", "Fleet", "Seals are checked\nevery 30 days.", "git", int64(1796083200), true)
	f.Add("a\u2028b", "<&>", "\x00\x1f", "\xff\xc3", "", int64(-62135596800), false)
	f.Fuzz(func(t *testing.T, path, title, heading, text, source string, unix int64, split bool) {
		at := time.Unix(unix%(1<<37), 0).UTC()
		p := build.Passage{ID: path + "#1", Path: path, Anchor: heading, Title: title, Heading: []string{heading, text},
			Text: text, Line: len(text), EndLine: len(title), Hash: source, Split: split, Updated: at,
			UpdatedSource: source, Reviewed: &at, Owner: title, AlsoAt: []string{path}}
		got, ok := appendPassage(nil, &p)
		if !ok {
			if at.Year() >= 0 && at.Year() <= 9999 {
				t.Fatalf("refused %v", at)
			}
			return
		}
		if want := stdLine(t, &p); string(got) != want {
			t.Fatalf("\n got %s\nwant %s", got, want)
		}
	})
}
