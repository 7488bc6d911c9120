package sources

import (
	"strconv"
	"strings"
	"testing"
)

// TestFrontMatterLimits: front matter nested 20,000 deep (120 kB of
// TOML arrays) drove a build to 15 GB; deep or large front matter is now
// one warning before any decoding, and the page is still read.
func TestFrontMatterLimits(t *testing.T) {
	tests := []struct {
		name, src, want string
	}{
		{"toml arrays 20000 deep", "+++\nx = " + strings.Repeat("[", 20000) + strings.Repeat("]", 20000) + "\n+++\n# Page\n\nBody.\n",
			"a.md:2: front matter: nested more than 100 levels deep; not read"},
		{"toml inline tables", "+++\nx = " + strings.Repeat("{a=", 5000) + "1" + strings.Repeat("}", 5000) + "\n+++\n# Page\n\nBody.\n",
			"a.md:2: front matter: nested more than 100 levels deep; not read"},
		{"toml dotted keys", "+++\n" + strings.Repeat("a.", 5000) + "b = 1\n+++\n# Page\n\nBody.\n",
			"a.md:2: front matter: nested more than 100 levels deep; not read"},
		{"yaml flow", "---\nx: " + strings.Repeat("[", 20000) + strings.Repeat("]", 20000) + "\n---\n# Page\n\nBody.\n",
			"a.md:2: front matter: nested more than 100 levels deep; not read"},
		{"yaml compact sequences", "---\nx:\n  " + strings.Repeat("- ", 5000) + "1\n---\n# Page\n\nBody.\n",
			"a.md:3: front matter: nested more than 100 levels deep; not read"},
		{"too large", "---\n" + strings.Repeat("k: v\n", 20000) + "---\n# Page\n\nBody.\n",
			"a.md:1: front matter: 97.7 kB, over the 64.0 kB limit; not read"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc, err := Parse("a.md", []byte(tc.src))
			if err != nil {
				t.Fatal(err)
			}
			if len(doc.Warnings) != 1 || doc.Warnings[0].Error() != tc.want {
				t.Errorf("warnings %v, want %s", errStrings(doc.Warnings), tc.want)
			}
			if doc.Front != nil || len(doc.Blocks) == 0 || doc.Title != "Page" {
				t.Errorf("front %v, %d blocks, title %q", doc.Front, len(doc.Blocks), doc.Title)
			}
		})
	}
	// Real nesting a page may need still reads.
	doc, err := Parse("a.md", []byte("+++\n[a.b.c]\nx = [[1, 2], [3, {y = [4]}]]\n+++\n# T\n"))
	if err != nil || len(doc.Warnings) != 0 || doc.Front == nil {
		t.Errorf("ordinary TOML: %v %v %v", err, doc.Warnings, doc.Front)
	}
}

// TestMarkdownNestingLimit: block quotes or lists nested tens of thousands
// deep took time quadratic in the depth (200 kB of ">": 47 s). A file
// nested past the limit is one error naming its line; it is skipped.
func TestMarkdownNestingLimit(t *testing.T) {
	indent := func() string {
		var b strings.Builder
		for i := range 120 {
			b.WriteString(strings.Repeat("  ", i) + "- x\n")
		}
		return b.String()
	}()
	tests := []struct {
		name, src string
		line      int
	}{
		{"block quotes", "# T\n\n" + strings.Repeat(">", 200000) + " x\n", 3},
		{"spaced block quotes", "# T\n\n" + strings.Repeat("> ", 50000) + "x\n", 3},
		{"bullets", "# T\n\n" + strings.Repeat("- ", 50000) + "x\n", 3},
		{"ordered", "# T\n\n" + strings.Repeat("1. ", 30000) + "x\n", 3},
		{"indented lists", "# T\n\n" + indent, 103},
	}
	for _, tc := range tests {
		for _, ext := range []string{".md", ".mdx"} {
			t.Run(tc.name+ext, func(t *testing.T) {
				_, err := Parse("a"+ext, []byte(tc.src))
				want := "a" + ext + ":" + strconv.Itoa(tc.line) + ": Markdown nested more than 100 levels deep (block quotes and lists); skipped"
				if err == nil || err.Error() != want {
					t.Errorf("err = %v\nwant %s", err, want)
				}
			})
		}
	}
	// Deep but legal nesting, and markers inside fenced code, still read.
	for _, src := range []string{
		"# T\n\n" + strings.Repeat("> ", 20) + "x\n",
		"# T\n\n```\n" + strings.Repeat(">", 5000) + "\n```\n",
	} {
		if _, err := Parse("a.md", []byte(src)); err != nil {
			t.Errorf("%.30q: %v", src, err)
		}
	}
}
