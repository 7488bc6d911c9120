package printable

import (
	"strings"
	"testing"
)

// TestQuote pins what reaches a terminal for hostile names: one line, no
// control character, no bidirectional override, and ordinary names as
// they are.
func TestQuote(t *testing.T) {
	tests := []struct{ in, want string }{
		{"guides/install.md", "guides/install.md"},
		{"docs/über straße.md", "docs/über straße.md"},
		{"a\nb.md:1: forged warning", `"a\nb.md:1: forged warning"`},
		{"\x1b[31mred.md", `"\x1b[31mred.md"`},
		{"over\rwrite.md", `"over\rwrite.md"`},
		{"evil\u202egnp.md", `"evil\u202egnp.md"`},
		{"bad\xffutf8", `"bad\xffutf8"`},
		{"tab\there", `"tab\there"`},
		{"", ""},
	}
	for _, tc := range tests {
		got := Quote(tc.in)
		if got != tc.want {
			t.Errorf("Quote(%q) = %s, want %s", tc.in, got, tc.want)
		}
		if strings.ContainsAny(got, "\n\r\x1b\u202e") {
			t.Errorf("Quote(%q) holds a control character", tc.in)
		}
	}
}

func FuzzQuote(f *testing.F) {
	f.Add("a\nb\x1b[31m\r")
	f.Fuzz(func(t *testing.T, s string) {
		q := Quote(s)
		if !Safe(q) {
			t.Errorf("Quote(%q) = %q is not safe", s, q)
		}
	})
}
