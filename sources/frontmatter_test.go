package sources

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// frontResult is what the front matter golden files hold.
type frontResult struct {
	Front     map[string]any `json:"front"`
	Format    string         `json:"format"`
	BodyStart int            `json:"body_start"`
	Body      string         `json:"body"` // the first line of the body
	Err       string         `json:"err,omitempty"`
}

// TestFrontMatterGolden splits each file under testdata/frontmatter and
// compares the result with the .json beside it.
func TestFrontMatterGolden(t *testing.T) {
	files, err := filepath.Glob("testdata/frontmatter/*.md")
	if err != nil || len(files) == 0 {
		t.Fatalf("no inputs: %v", err)
	}
	for _, file := range files {
		t.Run(filepath.Base(file), func(t *testing.T) {
			src, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			name := "docs/" + filepath.Base(file)
			front, format, start, ferr := SplitFrontMatter(name, src)
			r := frontResult{Front: front, Format: format, BodyStart: start}
			r.Body, _, _ = strings.Cut(string(src[start:]), "\n")
			if ferr != nil {
				r.Err = ferr.Error()
			}
			got, err := json.MarshalIndent(r, "", "  ")
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, '\n')
			golden := strings.TrimSuffix(file, ".md") + ".json"
			if updating() {
				if err := os.WriteFile(golden, got, 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run with -update)", err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s differs (run with -update to rewrite):\n%s", golden, firstDiff(string(want), string(got)))
			}
		})
	}
}

func TestSplitFrontMatter(t *testing.T) {
	tests := []struct {
		name      string
		src       string
		format    string
		bodyStart int
		front     string // JSON
		err       string
	}{
		{"none", "# Title\n", "", 0, "null", ""},
		{"thematic break alone", "---", "", 0, "null", ""},
		{"empty block", "---\n---\nBody", "yaml", 8, "null", ""},
		{"yaml", "---\na: 1\n---\nBody", "yaml", 13, `{"a":1}`, ""},
		{"closing delimiter at end of file", "---\na: 1\n---", "yaml", 12, `{"a":1}`, ""},
		{"delimiter with spaces", "--- \na: 1\n ---  \nBody", "yaml", 17, `{"a":1}`, ""},
		{"toml", "+++\na = 1\n+++\nBody", "toml", 14, `{"a":1}`, ""},
		{"byte order mark", "\ufeff# Title\n", "", 3, "null", ""},
		{"yaml 1.1 keys and values", "---\n1: a\ny: yes\nnan: .nan\n---\n", "yaml", 30, `{"1":"a","nan":".nan","true":true}`, ""},
		{"string key wins over number", "---\n1: a\n\"1\": b\n---\n", "yaml", 20, `{"1":"b"}`, ""},
		{"toml date becomes a string", "+++\nd = 2024-03-01T08:00:00Z\n+++\n", "toml", 33, `{"d":"2024-03-01T08:00:00Z"}`, ""},
		{"bad yaml", "---\na: 1\nb: [1\n---\nBody", "yaml", 19, "null", "docs/a.md:3: front matter: invalid YAML: did not find expected ',' or ']'"},
		{"unknown anchor has no line: first line", "---\na: *x\n---\n", "yaml", 14, "null", "docs/a.md:2: front matter: invalid YAML: unknown anchor 'x' referenced"},
		{"error on the first line", "---\na: b: c\n---\n", "yaml", 16, "null", "docs/a.md:2: front matter: invalid YAML: mapping values are not allowed in this context"},
		{"bad toml", "+++\na = 1\na = 2\n+++\n", "toml", 20, "null", "docs/a.md:3: front matter: invalid TOML: key 'a' has already been defined"},
		{"unclosed", "---\na: 1\n", "", 0, "null", "docs/a.md:1: front matter: no closing --- line; the whole file is read as body"},
		{"scalar", "---\nhello\n---\n", "yaml", 14, "null", "docs/a.md:2: front matter: want key: value pairs, found a string"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			front, format, start, err := SplitFrontMatter("docs/a.md", []byte(tc.src))
			j, jerr := json.Marshal(front)
			if jerr != nil {
				t.Fatalf("front matter cannot be encoded: %v", jerr)
			}
			if format != tc.format || start != tc.bodyStart || string(j) != tc.front {
				t.Errorf("got %q %d %s, want %q %d %s", format, start, j, tc.format, tc.bodyStart, tc.front)
			}
			switch {
			case err == nil && tc.err != "":
				t.Errorf("no error, want %s", tc.err)
			case err != nil && err.Error() != tc.err:
				t.Errorf("error\ngot  %s\nwant %s", err, tc.err)
			}
		})
	}
}

func FuzzSplitFrontMatter(f *testing.F) {
	for _, s := range markdownSeeds(f) {
		f.Add(s)
	}
	f.Add([]byte("---\n? [a]\n: b\n---\n"))
	f.Add([]byte("+++\n[[a]]\n[a.b]\n+++\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		front, format, start, err := SplitFrontMatter("f.md", src)
		if start < 0 || start > len(src) {
			t.Fatalf("body start %d of %d", start, len(src))
		}
		switch format {
		case "":
			if front != nil || (start != 0 && !(start == 3 && bytes.HasPrefix(src, []byte(utf8BOM)))) {
				t.Fatalf("no block, yet front %v and body start %d", front, start)
			}
		case "yaml", "toml":
			delim := map[string]string{"yaml": "---", "toml": "+++"}[format]
			last := strings.TrimSpace(string(src[bytes.LastIndexByte(src[:start-1], '\n')+1 : start]))
			if last != delim {
				t.Fatalf("body starts after %q, want a %s line", last, delim)
			}
		default:
			t.Fatalf("format %q", format)
		}
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.Line < 1 || e.Line > len(NewLineIndex(src)) || e.Path != "f.md" ||
				!strings.HasPrefix(e.Msg, "front matter: ") || strings.Contains(e.Msg, "\n") {
				t.Fatalf("bad error %#v", err)
			}
			if front != nil {
				t.Fatalf("error and front matter %v", front)
			}
		}
		if _, err := json.Marshal(front); err != nil {
			t.Fatalf("front matter cannot be encoded: %v", err)
		}
	})
}

func ExampleSplitFrontMatter() {
	src := []byte("---\ntitle: Buoy care\ntags: [sensors]\n---\n# Buoy care\n")
	front, format, bodyStart, err := SplitFrontMatter("docs/buoys.md", src)
	fmt.Println(front["title"], front["tags"], format, err)
	fmt.Printf("%q\n", src[bodyStart:])

	_, _, _, err = SplitFrontMatter("docs/bad.md", []byte("---\ntitle: a: b\n---\n"))
	fmt.Println(err)
	// Output:
	// Buoy care [sensors] yaml <nil>
	// "# Buoy care\n"
	// docs/bad.md:2: front matter: invalid YAML: mapping values are not allowed in this context
}
