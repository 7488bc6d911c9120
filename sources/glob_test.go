package sources

import (
	"path"
	"strings"
	"testing"
)

// TestMatchManyStars: a glob of many "**" against a long path that it
// does not match used to take exponential time (every way of sharing
// the path among the stars); now it answers at once.
func TestMatchManyStars(t *testing.T) {
	glob := strings.Repeat("**/", 14) + "nomatch"
	p := strings.Repeat("d/", 40) + "x.md"
	if Match(glob, p) {
		t.Errorf("Match(%q, %q) = true", glob, p)
	}
	if !Match(strings.Repeat("**/", 14)+"x.md", p) {
		t.Errorf("many stars: no match")
	}
}

// FuzzMatch checks Match against a plain backtracking matcher on small
// inputs (the definition it must keep), and that it never panics.
func FuzzMatch(f *testing.F) {
	for _, s := range [][2]string{
		{"*.md", "a/b/c.md"}, {"a/**/*.md", "a/b/d/c.md"}, {"**/drafts", "x/y/drafts"},
		{"drafts/", "x/drafts"}, {"[", "x"}, {"a/**/**/b", "a/b"}, {"./a/*", "a/b"},
	} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, glob, p string) {
		got := Match(glob, p)
		if len(glob) > 40 || len(p) > 40 || strings.Count(glob, "**") > 4 {
			return
		}
		g := strings.TrimPrefix(glob, "./")
		if !strings.Contains(strings.TrimSuffix(g, "/"), "/") {
			return
		}
		if want := slowParts(strings.Split(strings.Trim(g, "/"), "/"), strings.Split(p, "/")); got != want {
			t.Fatalf("Match(%q, %q) = %v, backtracking says %v", glob, p, got, want)
		}
	})
}

// slowParts is the backtracking matcher Match used before.
func slowParts(g, p []string) bool {
	for len(g) > 0 {
		if g[0] == "**" {
			for i := 0; i <= len(p); i++ {
				if slowParts(g[1:], p[i:]) {
					return true
				}
			}
			return false
		}
		if len(p) == 0 {
			return false
		}
		if ok, _ := path.Match(g[0], p[0]); !ok {
			return false
		}
		g, p = g[1:], p[1:]
	}
	return len(p) == 0
}
