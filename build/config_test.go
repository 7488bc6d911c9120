package build

import (
	"strings"
	"testing"
	"testing/fstest"
)

func TestLoadConfig(t *testing.T) {
	fsys := fstest.MapFS{ConfigFile: {Data: []byte(`# handbook settings
[build]
aim_tokens = 250
exclude = ["drafts/**"]

[freshness]
due_soon = "14d"

[[freshness.max_age]]
pattern = "safety/**"
max_age = "180d"

[gates]
max_stale = "10%"
`)}}
	c, err := LoadConfig(fsys)
	if err != nil {
		t.Fatal(err)
	}
	if *c.Build.AimTokens != 250 || c.Build.Exclude[0] != "drafts/**" || c.Freshness.DueSoon != "14d" ||
		c.Freshness.MaxAge[0].Pattern != "safety/**" || c.Gates.MaxStale != "10%" || c.Build.MaxTokens != nil {
		t.Errorf("config = %+v", c)
	}
	if got := c.Line("freshness.due_soon"); got != 7 {
		t.Errorf("line of freshness.due_soon = %d, want 7", got)
	}
	if got := c.Errorf("freshness.due_soon", "bad duration %q", "x").Error(); got != `kbc.toml:7: freshness.due_soon: bad duration "x"` {
		t.Errorf("Errorf = %s", got)
	}
}

func TestLoadConfigErrors(t *testing.T) {
	tests := []struct{ name, src, want string }{
		{"syntax", "[build]\naim_tokens = \n", "kbc.toml:2: "},
		{"unknown key", "[build]\naim_tokens = 3\nmax_tokns = 9\n", `kbc.toml:3: unknown setting "build.max_tokns"`},
		{"wrong type", "[build]\n\naim_tokens = \"many\"\n", "kbc.toml:3: "},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := LoadConfig(fstest.MapFS{ConfigFile: {Data: []byte(tc.src)}})
			if err == nil || len(err.Error()) < len(tc.want) || err.Error()[:len(tc.want)] != tc.want {
				t.Errorf("err = %v, want prefix %q", err, tc.want)
			}
		})
	}
	c, err := LoadConfig(fstest.MapFS{})
	if err != nil || c.Build.AimTokens != nil {
		t.Errorf("missing file: %+v, %v", c, err)
	}
}

func TestConfigApply(t *testing.T) {
	c, err := ParseConfig([]byte(`[build]
max_tokens = 400
max_file_size = "2MB"
[duplicates]
threshold = 0.9
[freshness]
due_soon = "14d"
[[freshness.max_age]]
pattern = "safety/**"
max_age = "180d"
`))
	if err != nil {
		t.Fatal(err)
	}
	o := DefaultOptions()
	if err := c.Apply(&o); err != nil {
		t.Fatal(err)
	}
	if o.Settings.MaxTokens != 400 || o.Walk.MaxSize != 2<<20 || o.Dedupe.Threshold != 0.9 ||
		o.Fresh.DueSoon.Days != 14 || len(o.Fresh.MaxAge) != 1 || o.Fresh.MaxAge[0].MaxAge.Days != 180 {
		t.Errorf("options = %+v", o)
	}
	for src, want := range map[string]string{
		"[duplicates]\nthreshold = 1.5\n":                           "kbc.toml:2: duplicates.threshold: 1.5 is not a Jaccard similarity in (0, 1]",
		"[freshness]\n\ndue_soon = \"soon\"\n":                      "kbc.toml:3: freshness.due_soon: ",
		"[[freshness.max_age]]\npattern = \"a\"\nmax_age = \"x\"\n": "kbc.toml:1: freshness.max_age rule 1: ",
		"[build]\nmax_file_size = \"lots\"\n":                       "kbc.toml:2: build.max_file_size: bad size",
	} {
		c, err := ParseConfig([]byte(src))
		if err != nil {
			t.Fatal(err)
		}
		o := DefaultOptions()
		err = c.Apply(&o)
		if err == nil || len(err.Error()) < len(want) || err.Error()[:len(want)] != want {
			t.Errorf("%q: err = %v, want prefix %q", src, err, want)
		}
	}
}

func TestParseSize(t *testing.T) {
	for in, want := range map[string]int64{"10MB": 10 << 20, "512kB": 512 << 10, "2048": 2048, "1.5 MB": 3 << 19} {
		if got, err := ParseSize(in); err != nil || got != want {
			t.Errorf("ParseSize(%q) = %d, %v; want %d", in, got, err, want)
		}
	}
	for _, in := range []string{"", "ten", "-1MB", "0"} {
		if _, err := ParseSize(in); err == nil {
			t.Errorf("ParseSize(%q) accepted", in)
		}
	}
}

// TestConfigPassageTokenNames: passage_tokens and passage_max_tokens size
// passages; the old names aim_tokens and max_tokens still work for one
// release with a note, and the new name wins when both are set.
func TestConfigPassageTokenNames(t *testing.T) {
	c, err := ParseConfigFile("kbc.toml", []byte("[build]\naim_tokens = 100\npassage_tokens = 120\nmax_tokens = 400\n"))
	if err != nil {
		t.Fatal(err)
	}
	o := DefaultOptions()
	if err := c.Apply(&o); err != nil {
		t.Fatal(err)
	}
	if o.Settings.AimTokens != 120 || o.Settings.MaxTokens != 400 {
		t.Errorf("aim %d max %d, want 120 400", o.Settings.AimTokens, o.Settings.MaxTokens)
	}
	notes := strings.Join(c.Notes, "\n")
	for _, want := range []string{"kbc.toml:2: build.aim_tokens is now called passage_tokens", "kbc.toml:4: build.max_tokens is now called passage_max_tokens"} {
		if !strings.Contains(notes, want) {
			t.Errorf("notes lack %q:\n%s", want, notes)
		}
	}
	c, err = ParseConfigFile("kbc.toml", []byte("[build]\npassage_tokens = 120\npassage_max_tokens = 400\n"))
	if err != nil || len(c.Notes) != 0 {
		t.Errorf("new names: %v, notes %q", err, c.Notes)
	}
}
