package sources

import (
	"fmt"
	"testing"
)

func TestSlug(t *testing.T) {
	// Expected values follow the common practice of Git hosting sites'
	// renderers (from memory; no standard exists).
	tests := []struct{ in, want string }{
		{"Getting Started", "getting-started"},
		{"API v2.1 (beta)!", "api-v21-beta"},
		{"snake_case and kebab-case", "snake_case-and-kebab-case"},
		{"  two  spaces ", "--two--spaces-"},
		{"Größe & Maße", "größe--maße"},
		{"日本語 見出し", "日本語-見出し"},
		{"हिन्दी", "हिन्दी"}, // combining marks kept
		{"C++ / C#", "c--c"},
		{"?!", ""},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			if got := Slug(tc.in); got != tc.want {
				t.Errorf("Slug(%q) = %q, want %q", tc.in, got, tc.want)
			}
		})
	}
}

func ExampleSlug() {
	fmt.Println(Slug("Install on Linux (x86_64)"))
	fmt.Println(Slug("Größe: 3 Bände"))
	// Output:
	// install-on-linux-x86_64
	// größe-3-bände
}

func TestHeadingAnchors(t *testing.T) {
	tests := []struct {
		name string
		src  string
		want []string
	}{
		{"repeats", "# Usage\n## Usage\n## Usage\n", []string{"usage", "usage-1", "usage-2"}},
		{"suffix already taken", "# A\n# A 1\n# A\n# A\n", []string{"a", "a-1", "a-2", "a-3"}},
		{"explicit id", "# Install {#setup}\n# Install\n# Setup\n", []string{"setup", "install", "setup-1"}},
		{"setext explicit id", "Install {#here}\n===\n", []string{"here"}},
		{"html block anchor", "<a name=\"old\"/>\n\n# Install\n# Install\n", []string{"old", "install-1"}},
		{"inline html anchor before", "<a id=\"x\"></a>\n# Install\n", []string{"x"}},
		{"anchor inside heading", "## Options <a id=\"opts\"></a>\n", []string{"opts"}},
		{"text before heading: no anchor", "see <a id=\"x\"></a>\n# Install\n", []string{"install"}},
		{"other html before", "<div id=\"x\"></div>\n\n# Install\n", []string{"install"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc, err := Parse("a.md", []byte(tc.src+"\ntext\n"))
			if err != nil {
				t.Fatal(err)
			}
			var got []string
			for _, h := range doc.Headings {
				got = append(got, h.Anchor)
			}
			if fmt.Sprint(got) != fmt.Sprint(tc.want) {
				t.Errorf("anchors %q, want %q", got, tc.want)
			}
		})
	}
}

func TestHeadingTree(t *testing.T) {
	src := "## a\n# b\n### c\n## d\n#### e\n## f\n# g\ntext\n"
	doc, err := Parse("a.md", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	want := []int{-1, -1, 1, 1, 3, 1, -1}
	for i, h := range doc.Headings {
		if h.Parent != want[i] {
			t.Errorf("heading %q: parent %d, want %d", h.Text, h.Parent, want[i])
		}
	}
	if got := fmt.Sprint(doc.Trail(4)); got != "[b d e]" {
		t.Errorf("trail %s", got)
	}
}
