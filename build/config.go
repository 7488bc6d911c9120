package build

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"github.com/kbc-project/kbc/build/fresh"
	"github.com/kbc-project/kbc/sources"
)

// ConfigFile is the name of the optional config file at the source root.
const ConfigFile = "kbc.toml"

// MaxConfigSize is the largest config file read: 64 KiB, hundreds of
// times a real one (our judgement, as for front matter).
const MaxConfigSize = 64 << 10

// Config is the optional config file. Every field is optional: a missing
// field keeps its default, and command-line flags override the file.
type Config struct {
	Build struct {
		PassageTokens    *int `toml:"passage_tokens"`
		PassageMaxTokens *int `toml:"passage_max_tokens"`
		// AimTokens and MaxTokens are the old names of PassageTokens and
		// PassageMaxTokens, still read in this release (with a note); the
		// new name wins when both are set.
		AimTokens           *int     `toml:"aim_tokens"`
		MaxTokens           *int     `toml:"max_tokens"`
		MinTokens           *int     `toml:"min_tokens"`
		Include             []string `toml:"include"`
		Exclude             []string `toml:"exclude"`
		MaxFileSize         string   `toml:"max_file_size"` // e.g. "10MB"
		BoilerplateShare    *float64 `toml:"boilerplate_share"`
		BoilerplateMinPages *int     `toml:"boilerplate_min_pages"`
	} `toml:"build"`
	Duplicates struct {
		Threshold   *float64 `toml:"threshold"`
		Hashes      *int     `toml:"hashes"`
		Shingle     *int     `toml:"shingle"`
		MinShingles *int     `toml:"min_shingles"`
	} `toml:"duplicates"`
	Freshness struct {
		DateFields    []string `toml:"date_fields"`
		DefaultMaxAge string   `toml:"default_max_age"` // e.g. "365d"
		DueSoon       string   `toml:"due_soon"`        // e.g. "30d"
		MaxAge        []struct {
			Pattern string `toml:"pattern"`
			MaxAge  string `toml:"max_age"`
		} `toml:"max_age"`
	} `toml:"freshness"`
	Checks CheckSection `toml:"checks"`
	// Gates is the old name of the [checks] section, still read in this
	// release (with a note in Notes); a key set in both takes [checks].
	Gates CheckSection `toml:"gates"`

	// Path is the file the config was read from, as errors name it.
	Path string `toml:"-"`
	// Notes are lines for the user about the file (a deprecated name).
	Notes []string `toml:"-"`

	// lines maps a dotted key ("freshness.due_soon") to its line, for
	// errors about values that parse as TOML but make no sense.
	lines map[string]int
}

// CheckSection is the [checks] section of the config file.
type CheckSection struct {
	MaxStale        string `toml:"max_stale"`   // "N" documents or "N%"
	MaxUnknown      string `toml:"max_unknown"` // "N" undated documents or "N%"
	FailOnDivergent *bool  `toml:"fail_on_divergent"`
	FailOnSecrets   *bool  `toml:"fail_on_secrets"`
}

// LoadConfig reads ConfigFile from the root of fsys. A missing file gives
// an empty config and no error. A syntax error, an unknown key or a value
// of the wrong type is a *sources.Error naming the file and line.
func LoadConfig(fsys fs.FS) (*Config, error) {
	data, err := fs.ReadFile(fsys, ConfigFile)
	if errors.Is(err, fs.ErrNotExist) {
		return &Config{}, nil
	}
	if err != nil {
		return nil, &sources.Error{Path: ConfigFile, Msg: fmt.Sprintf("cannot read: %v", err), Err: err}
	}
	return ParseConfig(data)
}

// ParseConfig parses the text of a config file named ConfigFile.
func ParseConfig(data []byte) (*Config, error) {
	return ParseConfigFile(ConfigFile, data)
}

// ParseConfigFile parses the text of a config file; errors name it as
// name (its path as the user gave or found it).
//
// The file comes with SRC, which may be hostile: it is refused before
// decoding when it is over MaxConfigSize or nested deeper than
// sources.MaxFrontMatterDepth (the decoder's memory grows with depth).
func ParseConfigFile(name string, data []byte) (*Config, error) {
	if len(data) > MaxConfigSize {
		return nil, &sources.Error{Path: name, Msg: fmt.Sprintf("%d bytes, over the %d-byte limit for a config file", len(data), MaxConfigSize)}
	}
	if line := sources.NestedTooDeep(data, "toml", sources.MaxFrontMatterDepth); line > 0 {
		return nil, &sources.Error{Path: name, Line: line, Msg: fmt.Sprintf("nested more than %d levels deep", sources.MaxFrontMatterDepth)}
	}
	var c Config
	md, err := toml.Decode(string(data), &c)
	if err != nil {
		var pe toml.ParseError
		var ppe *toml.ParseError
		switch {
		case errors.As(err, &pe):
		case errors.As(err, &ppe):
			pe = *ppe
		default:
			// Type errors come as plain text: "toml: line 3 (last key
			// "build.aim_tokens"): incompatible types: ...".
			var line int
			var key, msg string
			if n, _ := fmt.Sscanf(err.Error(), "toml: line %d (last key %q): ", &line, &key); n == 2 {
				_, msg, _ = strings.Cut(err.Error(), "): ")
				if h := keyHint(key); h != "" {
					msg = h
				} else {
					msg = key + ": " + msg
				}
				return nil, &sources.Error{Path: name, Line: line, Msg: msg, Err: err}
			}
			return nil, &sources.Error{Path: name, Msg: strings.TrimPrefix(err.Error(), "toml: "), Err: err}
		}
		msg := pe.Message
		if pe.LastKey != "" && !strings.Contains(msg, pe.LastKey) {
			msg = pe.LastKey + ": " + msg
		}
		return nil, &sources.Error{Path: name, Line: pe.Position.Line, Msg: msg, Err: err}
	}
	c.lines = keyLines(data)
	c.Path = name
	if und := md.Undecoded(); len(und) > 0 {
		key := und[0].String()
		msg := fmt.Sprintf("unknown setting %q", key)
		if near := nearestKey(key); near != "" {
			msg += fmt.Sprintf("; did you mean %q?", near)
		}
		return nil, &sources.Error{Path: name, Line: c.Line(key), Msg: msg}
	}
	for old, now := range map[string]string{"aim_tokens": "passage_tokens", "max_tokens": "passage_max_tokens"} {
		if md.IsDefined("build", old) {
			c.Notes = append(c.Notes, fmt.Sprintf("%s:%d: build.%s is now called %s; the old name is still read in this release", name, c.Line("build."+old), old, now))
		}
	}
	if md.IsDefined("gates") {
		c.Notes = append(c.Notes, fmt.Sprintf("%s:%d: the [gates] section is now called [checks]; [gates] is still read in this release", name, c.Line("gates")))
	}
	return &c, nil
}

// Line returns the line where the dotted key is set, or 0.
func (c *Config) Line(key string) int {
	return c.lines[key]
}

// Errorf returns a positioned error about the value of a dotted key.
func (c *Config) Errorf(key, format string, args ...any) *sources.Error {
	return &sources.Error{Path: c.path(), Line: c.Line(key), Msg: key + ": " + fmt.Sprintf(format, args...)}
}

// keyLines finds the line of each "key = value" in a TOML text, keyed by
// its dotted path under the latest [table] or [[array]] header. It is a
// line scan, enough for the flat file kbc reads; values spanning lines are
// not followed.
func keyLines(data []byte) map[string]int {
	lines := map[string]int{}
	arrays := map[string]int{} // [[table]] headers seen so far, by name
	table := ""
	for i, raw := range bytes.Split(data, []byte("\n")) {
		l := strings.TrimSpace(string(raw))
		switch {
		case l == "" || l[0] == '#':
			continue
		case strings.HasPrefix(l, "[["):
			table = strings.TrimSpace(strings.Trim(l, "[] "))
			if _, ok := lines[table]; !ok {
				lines[table] = i + 1
			}
			lines[fmt.Sprintf("%s#%d", table, arrays[table])] = i + 1
			arrays[table]++
			continue
		case l[0] == '[':
			table = strings.TrimSpace(strings.Trim(l, "[] "))
			lines[table] = i + 1
			continue
		}
		k, _, ok := strings.Cut(l, "=")
		if !ok {
			continue
		}
		k = strings.Trim(strings.TrimSpace(k), `"'`)
		if table != "" {
			k = table + "." + k
		}
		if _, seen := lines[k]; !seen {
			lines[k] = i + 1
		}
	}
	return lines
}

// Apply sets the options the config file names, leaving the others as
// they are. Values that make no sense (a duration that does not parse, a
// threshold outside 0..1) are errors naming the line in the file.
func (c *Config) Apply(o *Options) error {
	b := c.Build
	setInt(&o.Settings.AimTokens, b.AimTokens)
	setInt(&o.Settings.AimTokens, b.PassageTokens)
	setInt(&o.Settings.MaxTokens, b.MaxTokens)
	setInt(&o.Settings.MaxTokens, b.PassageMaxTokens)
	setInt(&o.Settings.MinTokens, b.MinTokens)
	setInt(&o.Settings.BoilerplateMinPages, b.BoilerplateMinPages)
	if b.BoilerplateShare != nil {
		o.Settings.BoilerplateShare = *b.BoilerplateShare
	}
	o.Walk.Include = append(o.Walk.Include, b.Include...)
	o.Walk.Exclude = append(o.Walk.Exclude, b.Exclude...)
	if b.MaxFileSize != "" {
		n, err := ParseSize(b.MaxFileSize)
		if err != nil {
			return c.Errorf("build.max_file_size", "%v", err)
		}
		o.Walk.MaxSize = n
	}
	if err := o.Settings.Validate(); err != nil {
		return &sources.Error{Path: c.path(), Line: c.Line("build"), Msg: err.Error()}
	}

	d := c.Duplicates
	if d.Threshold != nil {
		if *d.Threshold <= 0 || *d.Threshold > 1 {
			return c.Errorf("duplicates.threshold", "%g is not a Jaccard similarity in (0, 1]", *d.Threshold)
		}
		o.Dedupe.Threshold = *d.Threshold
	}
	for key, p := range map[string]*int{"duplicates.hashes": d.Hashes, "duplicates.shingle": d.Shingle, "duplicates.min_shingles": d.MinShingles} {
		if p != nil && *p < 1 {
			return c.Errorf(key, "must be at least 1")
		}
	}
	setInt(&o.Dedupe.Hashes, d.Hashes)
	setInt(&o.Dedupe.Shingle, d.Shingle)
	setInt(&o.Dedupe.MinShingles, d.MinShingles)

	f := c.Freshness
	if len(f.DateFields) > 0 {
		o.Fresh.DateFields = f.DateFields
	}
	for key, dst := range map[string]*fresh.Duration{"freshness.default_max_age": &o.Fresh.DefaultMaxAge, "freshness.due_soon": &o.Fresh.DueSoon} {
		v := f.DefaultMaxAge
		if key == "freshness.due_soon" {
			v = f.DueSoon
		}
		if v == "" {
			continue
		}
		dur, err := fresh.ParseDuration(v)
		if err != nil {
			return c.Errorf(key, "%v", err)
		}
		*dst = dur
	}
	for i, r := range f.MaxAge {
		dur, err := fresh.ParseDuration(r.MaxAge)
		if err != nil {
			return &sources.Error{Path: c.path(), Line: c.ruleLine(i), Msg: fmt.Sprintf("freshness.max_age rule %d: %v", i+1, err)}
		}
		o.Fresh.MaxAge = append(o.Fresh.MaxAge, fresh.AgeRule{Pattern: r.Pattern, MaxAge: dur})
	}
	if err := o.Fresh.Validate(); err != nil {
		return &sources.Error{Path: c.path(), Line: c.Line("freshness"), Msg: "freshness: " + err.Error()}
	}
	return nil
}

// ruleLine returns the line of the i-th [[freshness.max_age]] header.
func (c *Config) ruleLine(i int) int {
	return c.lines[fmt.Sprintf("freshness.max_age#%d", i)]
}

func setInt(dst *int, v *int) {
	if v != nil {
		*dst = *v
	}
}

// ParseSize reads sizes like "10MB", "512kB" or "2048" (bytes).
func ParseSize(s string) (int64, error) {
	t := strings.TrimSpace(strings.ToUpper(s))
	mult := int64(1)
	for _, u := range []struct {
		suffix string
		mult   int64
	}{{"GB", 1 << 30}, {"MB", 1 << 20}, {"KB", 1 << 10}, {"B", 1}} {
		if strings.HasSuffix(t, u.suffix) {
			t, mult = strings.TrimSpace(strings.TrimSuffix(t, u.suffix)), u.mult
			break
		}
	}
	n, err := strconv.ParseFloat(t, 64)
	if err != nil || n <= 0 {
		return 0, fmt.Errorf("bad size %q (want e.g. 10MB)", s)
	}
	return int64(n * float64(mult)), nil
}
