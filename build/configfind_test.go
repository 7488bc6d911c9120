package build

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestFindConfig(t *testing.T) {
	top := t.TempDir()
	mk := func(p string) {
		t.Helper()
		if err := os.MkdirAll(filepath.Join(top, p), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	put := func(p string) {
		t.Helper()
		if err := os.WriteFile(filepath.Join(top, p), []byte("[build]\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	mk("repo/.git")
	mk("repo/docs/api/v2")
	mk("plain/sub")
	put("kbc.toml") // above the repository: never read from inside it
	put("repo/docs/kbc.toml")
	put("plain/kbc.toml") // above SRC, but no repository: not read
	for src, want := range map[string]string{
		"repo/docs/api/v2": "repo/docs/api/v2/../../kbc.toml",
		"repo/docs":        "repo/docs/kbc.toml",
		"repo":             "",
		"plain/sub":        "",
		"plain":            "plain/kbc.toml",
	} {
		got, err := FindConfig(filepath.Join(top, src))
		if err != nil {
			t.Fatal(err)
		}
		if want != "" {
			want = filepath.Clean(filepath.Join(top, want))
		}
		if got != want {
			t.Errorf("FindConfig(%s) = %q, want %q", src, got, want)
		}
	}
}

func TestNearestKey(t *testing.T) {
	for key, want := range map[string]string{
		"build.max_tokns":       "build.max_tokens",
		"build.max_stale":       "checks.max_stale",
		"gate.max_stale":        "checks.max_stale",
		"freshness.due_son":     "freshness.due_soon",
		"nothing.like.anything": "",
	} {
		if got := nearestKey(key); got != want {
			t.Errorf("nearestKey(%q) = %q, want %q", key, got, want)
		}
	}
}

func TestConfigHints(t *testing.T) {
	for src, want := range map[string]string{
		"[checks]\n\nmax_stale = 5\n":          `kbc.toml:3: max_stale takes a count or a percentage, e.g. "5" or "10%"`,
		"[gates]\nfail_on_secrets = \"yes\"\n": `kbc.toml:2: fail_on_secrets takes true or false`,
		"[build]\naim_tokens = \"many\"\n":     `kbc.toml:2: aim_tokens takes a whole number of tokens, e.g. 300`,
	} {
		_, err := ParseConfig([]byte(src))
		if err == nil || err.Error() != want {
			t.Errorf("%q: %v, want %s", src, err, want)
		}
	}
	c, err := ParseConfig([]byte("[gates]\nmax_stale = \"3\"\n[checks]\nmax_unknown = \"10%\"\n"))
	if err != nil {
		t.Fatal(err)
	}
	if len(c.Notes) != 1 || !strings.Contains(c.Notes[0], "kbc.toml:1: the [gates] section is now called [checks]") {
		t.Errorf("notes %q", c.Notes)
	}
	var ch Checks
	if err := c.ApplyChecks(&ch); err != nil || ch.MaxStale.String() != "3" || ch.MaxUnknown.String() != "10%" {
		t.Errorf("checks %+v, %v", ch, err)
	}
}
