package build

import (
	"strings"
	"testing"

	"github.com/kbc-project/kbc/sources"
)

// TestConfigLimits: a kbc.toml comes with SRC; a deep or huge one is one
// positioned error before the TOML decoder sees it.
func TestConfigLimits(t *testing.T) {
	for _, tc := range []struct{ name, src, want string }{
		{"deep arrays", "[build]\ninclude = " + strings.Repeat("[", 20000) + strings.Repeat("]", 20000) + "\n", "kbc.toml:2: nested more than 100 levels deep"},
		{"deep keys", strings.Repeat("a.", 1000) + "b = 1\n", "kbc.toml:1: nested more than 100 levels deep"},
		{"huge", "# " + strings.Repeat("x", 70000) + "\n", "kbc.toml: 70003 bytes, over the 65536-byte limit for a config file"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseConfig([]byte(tc.src))
			if err == nil || err.Error() != tc.want {
				t.Errorf("err = %v, want %s", err, tc.want)
			}
		})
	}
}

// FuzzParseConfig: any bytes give a config or one positioned error, and
// a config that parses applies or fails with a positioned error; never a
// panic.
func FuzzParseConfig(f *testing.F) {
	for _, s := range []string{
		"",
		"[build]\naim_tokens = 250\ninclude = [\"docs/**\"]\nmax_file_size = \"2MB\"\n",
		"[duplicates]\nthreshold = 0.9\n[freshness]\ndefault_max_age = \"365d\"\n[[freshness.max_age]]\npattern = \"api/**\"\nmax_age = \"90d\"\n",
		"[gates]\nmax_stale = \"10%\"\nfail_on_divergent = true\n",
		"[build]\naim_tokens = \"x\"\n",
		"a = [[[[1]]]]\n",
		"x = {a = {b = {c = 1}}}\n",
		"[build\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := ParseConfig(data)
		if err != nil {
			e, ok := err.(*sources.Error)
			if !ok || e.Path != ConfigFile {
				t.Fatalf("error %T %v", err, err)
			}
			return
		}
		o := DefaultOptions()
		if err := c.Apply(&o); err != nil {
			if _, ok := err.(*sources.Error); !ok {
				t.Fatalf("Apply error %T %v", err, err)
			}
		}
	})
}
