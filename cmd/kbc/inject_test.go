package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestTerminalInjection is the regression test for file names and text
// that reach the terminal raw: a name holding a newline forged a warning
// line, and escape sequences in names or code blocks recoloured or cleared
// the screen. Every human-readable output of build, query, stale and diff
// must hold no control character but the newline, and no line a name
// forged.
func TestTerminalInjection(t *testing.T) {
	tmp := t.TempDir()
	src := filepath.Join(tmp, "src")
	files := map[string]string{
		// broken front matter: a warning that names the file
		"a\nforged.md:1: all good\nb.md": "---\ntitle: [unclosed\n---\n# Reefer doors\n\nReefer doors seal with a gasket.\n",
		"\x1b[31mred.md":                 "# Reefer alarm\n\nReefer alarm codes \x1b[2J\x1b[31mare listed below.\n\n```\nreefer \x1b]0;title\x07 code\n```\n",
		"over\rwrite.md":                 "# Reefer fans\n\nReefer fans run\r continuously.\n",
	}
	if err := os.MkdirAll(src, 0o755); err != nil {
		t.Fatal(err)
	}
	for name, body := range files {
		if err := os.WriteFile(filepath.Join(src, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	out, out2 := filepath.Join(tmp, "out"), filepath.Join(tmp, "out2")
	var all bytes.Buffer
	runOK := func(args ...string) {
		t.Helper()
		var stdout, stderr bytes.Buffer
		code := run(args, &stdout, &stderr)
		if code != 0 && code != 3 {
			t.Fatalf("kbc %s: exit %d\n%s", strings.Join(args, " "), code, stderr.String())
		}
		all.Write(stdout.Bytes())
		all.Write(stderr.Bytes())
	}
	runOK("build", src, "-o", out)
	if err := os.WriteFile(filepath.Join(src, "\x1b[31mred.md"), []byte("# Reefer alarm\n\nReefer alarm codes changed.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	runOK("build", src, "-o", out2)
	runOK("query", out, "reefer")
	runOK("stale", out)
	runOK("diff", out, out2)
	text := all.String()
	if i := strings.IndexFunc(text, func(r rune) bool { return r < 0x20 && r != '\n' || r == 0x7f }); i >= 0 {
		t.Errorf("a control character %q reached the output:\n%s", text[i], text)
	}
	for _, l := range strings.Split(text, "\n") {
		if strings.HasPrefix(l, "forged.md") {
			t.Errorf("a file name forged the line %q", l)
		}
	}
	if !strings.Contains(text, `\x1b[31mred.md`) {
		t.Errorf("the escaped name does not show:\n%s", text)
	}
}
