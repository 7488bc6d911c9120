package build

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/kbc-project/kbc/sources"
)

// FindConfig returns the config file that applies to the source folder
// src: the nearest ConfigFile in src or a folder above it, up to the root
// of the git repository that holds src (the folder with a .git entry),
// which is the last folder looked in. When src is in no repository only
// src itself is looked in, so that a kbc.toml in a home folder never
// shapes a build by surprise. The path returned is src joined with the
// way up ("docs/api/../kbc.toml" written "docs/kbc.toml"), or "" when
// there is none.
func FindConfig(src string) (string, error) {
	abs, err := filepath.Abs(src)
	if err != nil {
		return "", err
	}
	root := repoRoot(abs)
	shown := src
	for dir := abs; ; dir = filepath.Dir(dir) {
		name := filepath.Join(shown, ConfigFile)
		if _, err := os.Lstat(filepath.Join(dir, ConfigFile)); err == nil {
			return name, nil
		} else if !errors.Is(err, fs.ErrNotExist) {
			return "", &sources.Error{Path: name, Msg: fmt.Sprintf("cannot read: %v", sources.UnwrapPath(err)), Err: err}
		}
		if root == "" || dir == root || filepath.Dir(dir) == dir {
			return "", nil
		}
		shown = filepath.Join(shown, "..")
	}
}

// repoRoot returns the nearest folder at or above dir that holds a .git
// entry (a folder, or a file in a linked worktree), or "".
func repoRoot(dir string) string {
	for {
		if _, err := os.Lstat(filepath.Join(dir, ".git")); err == nil {
			return dir
		}
		up := filepath.Dir(dir)
		if up == dir {
			return ""
		}
		dir = up
	}
}

// LoadConfigFile reads and parses the config file at path. It must be a
// regular file (not a symbolic link, which could lead anywhere) of at
// most MaxConfigSize bytes. Errors are *sources.Error naming path.
func LoadConfigFile(path string) (*Config, error) {
	st, err := os.Lstat(path)
	if err != nil {
		return nil, &sources.Error{Path: path, Msg: fmt.Sprintf("cannot read: %v", sources.UnwrapPath(err)), Err: err}
	}
	if !st.Mode().IsRegular() {
		return nil, &sources.Error{Path: path, Msg: "not a regular file (a config file is read only as a plain file, never through a link)"}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, &sources.Error{Path: path, Msg: fmt.Sprintf("cannot read: %v", sources.UnwrapPath(err)), Err: err}
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, MaxConfigSize+1))
	if err != nil {
		return nil, &sources.Error{Path: path, Msg: fmt.Sprintf("cannot read: %v", sources.UnwrapPath(err)), Err: err}
	}
	return ParseConfigFile(path, data)
}

// path is the name errors give the file.
func (c *Config) path() string {
	if c.Path == "" {
		return ConfigFile
	}
	return c.Path
}

// ApplyChecks sets the checks the config file names ([checks], or the old
// [gates] for keys [checks] leaves out), leaving the others as they are.
func (c *Config) ApplyChecks(ch *Checks) error {
	for _, sec := range []struct {
		name string
		s    CheckSection
	}{{"gates", c.Gates}, {"checks", c.Checks}} {
		for key, v := range map[string]struct {
			text string
			dst  *Limit
		}{"max_stale": {sec.s.MaxStale, &ch.MaxStale}, "max_unknown": {sec.s.MaxUnknown, &ch.MaxUnknown}} {
			if v.text == "" {
				continue
			}
			l, err := ParseLimit(v.text)
			if err != nil {
				return &sources.Error{Path: c.path(), Line: c.Line(sec.name + "." + key), Msg: fmt.Sprintf("%s (not %q)", keyHint(sec.name+"."+key), v.text)}
			}
			*v.dst = l
		}
		if sec.s.FailOnDivergent != nil {
			ch.FailOnDivergent = *sec.s.FailOnDivergent
		}
		if sec.s.FailOnSecrets != nil {
			ch.FailOnSecrets = *sec.s.FailOnSecrets
		}
	}
	return nil
}

// configKeys are the settings of the config file, by dotted key, each
// with what it takes and an example, for errors about a value of the
// wrong kind.
var configKeys = map[string]string{
	"build.passage_tokens":        "takes a whole number of tokens, e.g. 300",
	"build.passage_max_tokens":    "takes a whole number of tokens, e.g. 512",
	"build.aim_tokens":            "takes a whole number of tokens, e.g. 300",
	"build.max_tokens":            "takes a whole number of tokens, e.g. 512",
	"build.min_tokens":            "takes a whole number of tokens, e.g. 48",
	"build.include":               `takes a list of globs, e.g. ["guides/**"]`,
	"build.exclude":               `takes a list of globs, e.g. ["drafts/**"]`,
	"build.max_file_size":         `takes a size, e.g. "10MB"`,
	"build.boilerplate_share":     "takes a share of the pages between 0 and 1, e.g. 0.3",
	"build.boilerplate_min_pages": "takes a whole number of pages, e.g. 3",
	"duplicates.threshold":        "takes a Jaccard similarity above 0 and at most 1, e.g. 0.8",
	"duplicates.hashes":           "takes a whole number, e.g. 128",
	"duplicates.shingle":          "takes a whole number of words, e.g. 5",
	"duplicates.min_shingles":     "takes a whole number, e.g. 8",
	"freshness.date_fields":       `takes a list of front matter fields, e.g. ["updated", "date"]`,
	"freshness.default_max_age":   `takes a duration, e.g. "365d" or "1y"`,
	"freshness.due_soon":          `takes a duration, e.g. "30d"`,
	"freshness.max_age":           `takes [[freshness.max_age]] tables, each with pattern = "safety/**" and max_age = "90d"`,
	"freshness.max_age.pattern":   `takes a glob, e.g. "safety/**"`,
	"freshness.max_age.max_age":   `takes a duration, e.g. "90d"`,
	"checks.max_stale":            `takes a count or a percentage, e.g. "5" or "10%"`,
	"checks.max_unknown":          `takes a count or a percentage, e.g. "5" or "10%"`,
	"checks.fail_on_divergent":    "takes true or false",
	"checks.fail_on_secrets":      "takes true or false",
}

// keyHint returns "KEY takes ..., e.g. ..." for a dotted key, naming the
// key as written under its section, or "" for a key it does not know.
func keyHint(key string) string {
	look := key
	if rest, ok := strings.CutPrefix(key, "gates."); ok {
		look = "checks." + rest
	}
	h, ok := configKeys[look]
	if !ok {
		return ""
	}
	return key[strings.LastIndex(key, ".")+1:] + " " + h
}

// nearestKey returns the known setting closest to an unknown dotted key:
// within a few edits of it, or the same name in another section; "" when
// none is close.
func nearestKey(key string) string {
	best, bestD := "", 1<<30
	leaf := key[strings.LastIndex(key, ".")+1:]
	for k := range configKeys {
		d := editDistance(key, k)
		if k[strings.LastIndex(k, ".")+1:] == leaf {
			d = min(d, 1)
		}
		if d < bestD || (d == bestD && k < best) {
			best, bestD = k, d
		}
	}
	if bestD > 3 && bestD > len(key)/3 {
		return ""
	}
	return best
}

// editDistance is the Levenshtein distance between a and b, in bytes.
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
