package sources

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/adrg/frontmatter"
)

// utf8BOM is the byte order mark some editors put at the start of a file.
const utf8BOM = "\xEF\xBB\xBF"

// SplitFrontMatter finds a front matter block at the start of src, the file
// at name, and decodes it. A block opens with a line holding only "---"
// (YAML) or "+++" (TOML) on the first line of the file (after an optional
// UTF-8 byte order mark) and closes with the next line holding only the
// same delimiter; white space around a delimiter is allowed, as
// github.com/adrg/frontmatter allows it.
//
// It returns the decoded keys (nil when there are none), the format
// ("yaml", "toml" or "" when there is no block) and bodyStart, the byte
// offset where the Markdown body begins. Nested maps are map[string]any,
// dates are RFC 3339 strings and every value can be encoded as JSON.
//
// A block that cannot be used gives a *Error positioned on a line of src
// (YAML and TOML line numbers are shifted by the line where the block
// starts). The error is a warning: bodyStart is still valid. A block that
// is never closed is not front matter at all, so format is "" and bodyStart
// points at the start of the file. SplitFrontMatter never panics.
func SplitFrontMatter(name string, src []byte) (front map[string]any, format string, bodyStart int, err error) {
	start := 0
	if bytes.HasPrefix(src, []byte(utf8BOM)) {
		start = len(utf8BOM)
	}
	line, next := lineAt(src, start)
	var delim string
	switch string(bytes.TrimSpace(line)) {
	case "---":
		delim, format = "---", "yaml"
	case "+++":
		delim, format = "+++", "toml"
	default:
		return nil, "", start, nil
	}
	if next == len(src) && !bytes.HasSuffix(line, []byte("\n")) {
		// A lone delimiter with nothing after it: a thematic break.
		return nil, "", start, nil
	}
	// Find the closing delimiter line.
	end := -1
	for off := next; off < len(src); {
		l, n := lineAt(src, off)
		if string(bytes.TrimSpace(l)) == delim {
			end = n
			break
		}
		off = n
	}
	if end < 0 {
		return nil, "", start, &Error{Path: name, Line: 1,
			Msg: fmt.Sprintf("front matter: no closing %s line; the whole file is read as body", delim)}
	}
	// Limits first: the decoders' time and memory grow with size and depth.
	block := src[start:end]
	if len(block) > MaxFrontMatterSize {
		return nil, format, end, &Error{Path: name, Line: 1, Msg: sizeOver(len(block))}
	}
	if line := NestedTooDeep(block, format, MaxFrontMatterDepth); line > 0 {
		return nil, format, end, &Error{Path: name, Line: line,
			Msg: fmt.Sprintf("front matter: nested more than %d levels deep; not read", MaxFrontMatterDepth)}
	}
	front, err = decodeFrontMatter(name, block, format)
	return front, format, end, err
}

// lineAt returns the line of src starting at off, newline included, and
// the offset of the next line.
func lineAt(src []byte, off int) ([]byte, int) {
	i := bytes.IndexByte(src[off:], '\n')
	if i < 0 {
		return src[off:], len(src)
	}
	return src[off : off+i+1], off + i + 1
}

// decodeFrontMatter decodes block, which holds the opening delimiter line,
// the front matter and the closing delimiter line, with the frontmatter
// library. Its first line is line 1 of the file.
func decodeFrontMatter(name string, block []byte, format string) (front map[string]any, err error) {
	defer func() {
		// yaml.v2 (and older BurntSushi/toml releases) report some bad input by
		// panicking; a bad front matter block must cost a warning only.
		if r := recover(); r != nil {
			front, err = nil, &Error{Path: name, Line: 1, Msg: fmt.Sprintf("front matter: %s decoder failed: %v", strings.ToUpper(format), r)}
		}
	}()
	var v any
	// The block starts with its delimiter line, so the library's default
	// formats pick YAML for "---" and TOML for "+++".
	if _, perr := frontmatter.Parse(bytes.NewReader(block), &v); perr != nil {
		line, msg := decodeErrorLine(perr.Error(), format)
		var te toml.ParseError
		if errors.As(perr, &te) {
			// BurntSushi/toml v1 gives the position in a typed error.
			line, msg = te.Position.Line, te.Message
		}
		// The data the decoders see starts on line 2 of the file (line 1
		// is the opening delimiter), so their line N is file line N+1.
		// yaml.v2 v2.3.0 leaves the line out when its 0-based mark line
		// is 0 (decode.go, parser.fail), that is for an error on the
		// first line, and for errors without a position (an unknown
		// anchor); both are put on the first line of the block.
		line = max(line, 1) + 1
		return nil, &Error{Path: name, Line: line, Msg: "front matter: invalid " + strings.ToUpper(format) + ": " + tidyMessage(msg), Err: perr}
	}
	if v == nil {
		return nil, nil
	}
	m, ok := normaliseFront(v).(map[string]any)
	if !ok {
		return nil, &Error{Path: name, Line: 2, Msg: fmt.Sprintf("front matter: want key: value pairs, found %s", describeValue(v))}
	}
	if len(m) == 0 {
		return nil, nil
	}
	return m, nil
}

// decodeErrorLine takes the line number out of a decoder's message:
// yaml.v2 writes "yaml: line 3: message" (or "yaml: unmarshal errors:\n
// line 3: message"), BurntSushi/toml before v1 wrote "Near line 3 (last
// key parsed 'k'): message". Line is 0 when the message has none.
func decodeErrorLine(s, format string) (line int, msg string) {
	if i := strings.IndexByte(s, '\n'); i >= 0 && format == "yaml" {
		// unmarshal errors: keep the first one.
		s = strings.TrimSpace(s[i+1:])
		if j := strings.IndexByte(s, '\n'); j >= 0 {
			s = s[:j]
		}
	}
	s = strings.TrimPrefix(s, "yaml: ")
	switch {
	case strings.HasPrefix(s, "line "):
		rest := s[len("line "):]
		if i := strings.Index(rest, ": "); i > 0 {
			if n, err := strconv.Atoi(rest[:i]); err == nil {
				return n, rest[i+2:]
			}
		}
	case strings.HasPrefix(s, "Near line "):
		rest := s[len("Near line "):]
		i := strings.IndexByte(rest, ' ')
		j := strings.Index(rest, "): ")
		if i > 0 && j > i {
			if n, err := strconv.Atoi(rest[:i]); err == nil {
				return n, rest[j+3:]
			}
		}
	}
	return 0, s
}

// tidyMessage makes a decoder's message fit ours: lower-case start (unless
// the first word is an acronym), no full stop.
func tidyMessage(s string) string {
	// A message is one line: decoders quote the bad input, which may hold
	// a line break or a tab.
	s = strings.NewReplacer("\n", `\n`, "\r", `\r`, "\t", `\t`).Replace(strings.TrimSpace(s))
	s = strings.TrimSuffix(s, ".")
	if len(s) > 1 && 'A' <= s[0] && s[0] <= 'Z' && 'a' <= s[1] && s[1] <= 'z' {
		s = string(s[0]+'a'-'A') + s[1:]
	}
	return s
}

func describeValue(v any) string {
	switch v.(type) {
	case []any:
		return "a list"
	case string:
		return "a string"
	}
	return fmt.Sprintf("a %T value", v)
}

// normaliseFront turns what the decoders give into plain JSON-friendly
// data: maps keyed by strings (yaml.v2 gives map[interface{}]interface{}),
// []any lists, dates as RFC 3339 strings (yaml.v2 already keeps dates as
// strings when decoding into interface{}; TOML gives time.Time), and
// non-finite floats, which JSON cannot hold, as YAML's spellings.
func normaliseFront(v any) any {
	switch x := v.(type) {
	case map[string]any:
		m := make(map[string]any, len(x))
		for k, val := range x {
			m[k] = normaliseFront(val)
		}
		return m
	case map[any]any:
		// Keys such as 1 and "1" both become "1": take them in a fixed
		// order (string keys first) so the result does not depend on map
		// iteration order.
		type kv struct {
			s     string
			isStr bool
			v     any
		}
		kvs := make([]kv, 0, len(x))
		for k, val := range x {
			s, isStr := k.(string)
			if !isStr {
				s = scalarString(k)
			}
			kvs = append(kvs, kv{s, isStr, val})
		}
		sort.Slice(kvs, func(i, j int) bool {
			if kvs[i].s != kvs[j].s {
				return kvs[i].s < kvs[j].s
			}
			if kvs[i].isStr != kvs[j].isStr {
				return kvs[i].isStr
			}
			return fmt.Sprintf("%T", kvs[i].v) < fmt.Sprintf("%T", kvs[j].v)
		})
		m := make(map[string]any, len(kvs))
		for _, e := range kvs {
			if _, dup := m[e.s]; !dup {
				m[e.s] = normaliseFront(e.v)
			}
		}
		return m
	case []any:
		out := make([]any, len(x))
		for i, e := range x {
			out[i] = normaliseFront(e)
		}
		return out
	case []map[string]any:
		out := make([]any, len(x))
		for i, e := range x {
			out[i] = normaliseFront(e)
		}
		return out
	case float64:
		return finite(x)
	case float32:
		return finite(float64(x))
	case time.Time:
		return frontTime(x)
	case []byte:
		return string(x)
	case nil, string, bool, int, int64, int32, uint, uint64, uint32:
		return x
	}
	return scalarString(v)
}

// frontTime spells a decoded time as text. TOML's local dates and times
// (no zone written) come from BurntSushi/toml in zones named
// "datetime-local", "date-local" and "time-local" carrying the machine's
// offset; reading them as UTC wall time keeps a bundle the same on every
// machine: a local date-time becomes RFC 3339 in UTC, a local date stays
// "YYYY-MM-DD" (which dates read as midnight UTC) and a local time stays
// "HH:MM:SS".
func frontTime(t time.Time) string {
	switch t.Location().String() {
	case "datetime-local":
		return time.Date(t.Year(), t.Month(), t.Day(), t.Hour(), t.Minute(), t.Second(), t.Nanosecond(), time.UTC).Format(time.RFC3339Nano)
	case "date-local":
		return t.Format("2006-01-02")
	case "time-local":
		return t.Format("15:04:05.999999999")
	}
	return t.Format(time.RFC3339Nano)
}

func finite(f float64) any {
	switch {
	case math.IsNaN(f):
		return ".nan"
	case math.IsInf(f, 1):
		return ".inf"
	case math.IsInf(f, -1):
		return "-.inf"
	}
	return f
}

// scalarString spells a map key or odd value as text.
func scalarString(v any) string {
	switch x := v.(type) {
	case nil:
		return "null"
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case time.Time:
		return x.Format(time.RFC3339Nano)
	}
	return fmt.Sprint(v)
}

// frontKeyLines finds the 1-based line of each top-level key of a front
// matter block; block is the file from its start to the end of the closing
// delimiter line, format is "yaml" or "toml" and front the decoded keys.
// A line scan is enough: top-level YAML keys start at column 0 (the
// continuation lines of their values are indented, YAML 1.2 section 8.2.2
// and 7.3.3, from memory), and TOML keys are top level until the first
// [table] header (TOML v1.0.0, "Table"). Only keys present in front are
// kept, and the first line wins, so a line the scan misreads (inside a
// TOML multi-line array, say) cannot invent a key.
func frontKeyLines(block []byte, format string, front map[string]any) map[string]int {
	if len(front) == 0 {
		return nil
	}
	keys := make(map[string]int, len(front))
	multi := "" // closing delimiter of an open TOML multi-line string
	for off, line := 0, 1; off < len(block); line++ {
		l, next := lineAt(block, off)
		off = next
		if line == 1 {
			continue // the opening delimiter
		}
		l = bytes.TrimRight(l, "\r\n")
		var key string
		var ok bool
		switch {
		case format == "yaml":
			key, ok = yamlTopKey(l)
		case multi != "":
			if bytes.Contains(l, []byte(multi)) {
				multi = ""
			}
			continue
		default:
			t := bytes.TrimSpace(l)
			if len(t) > 0 && t[0] == '[' {
				return keys // a table header ends the top level
			}
			var rest []byte
			key, rest, ok = tomlTopKey(t)
			if ok {
				rest = bytes.TrimSpace(rest)
				for _, q := range []string{`"""`, `'''`} {
					if bytes.HasPrefix(rest, []byte(q)) && !bytes.Contains(rest[3:], []byte(q)) {
						multi = q
					}
				}
			}
		}
		if _, seen := keys[key]; ok && !seen {
			if _, in := front[key]; in {
				keys[key] = line
			}
		}
	}
	return keys
}

// yamlTopKey reads the key of a "key: value" line that starts at column 0.
func yamlTopKey(l []byte) (string, bool) {
	if len(l) == 0 || l[0] == ' ' || l[0] == '\t' || l[0] == '#' {
		return "", false
	}
	if l[0] == '"' || l[0] == '\'' {
		key, rest, ok := quotedKey(l)
		rest = bytes.TrimLeft(rest, " \t")
		return key, ok && len(rest) > 0 && rest[0] == ':'
	}
	// A plain key ends at the first ':' followed by a space or the end
	// of the line ("a:b: c" has the key "a:b").
	for i := 0; i < len(l); i++ {
		if l[i] == ':' && (i+1 == len(l) || l[i+1] == ' ' || l[i+1] == '\t') {
			key := string(bytes.TrimRight(l[:i], " \t"))
			return key, key != "" && key[0] != '-' && key[0] != '?'
		}
	}
	return "", false
}

// tomlTopKey reads the key of a "key = value" line, already trimmed. A
// dotted key ("a.b = 1") gives its first part, the top-level key.
func tomlTopKey(t []byte) (key string, rest []byte, ok bool) {
	if len(t) == 0 {
		return "", nil, false
	}
	if t[0] == '"' || t[0] == '\'' {
		key, rest, ok = quotedKey(t)
	} else {
		i := 0
		for i < len(t) && (t[i] == '_' || t[i] == '-' || '0' <= t[i] && t[i] <= '9' || 'a' <= t[i]|0x20 && t[i]|0x20 <= 'z') {
			i++
		}
		key, rest, ok = string(t[:i]), t[i:], i > 0
	}
	rest = bytes.TrimLeft(rest, " \t")
	if !ok || len(rest) == 0 || rest[0] != '=' && rest[0] != '.' {
		return "", nil, false
	}
	if rest[0] == '.' {
		return key, nil, true
	}
	return key, rest[1:], true
}

// quotedKey reads a key in double quotes (backslash escapes a quote) or
// single quotes at the start of l; escapes other than \" and \\ are kept
// as written, which is enough to find the key's end.
func quotedKey(l []byte) (key string, rest []byte, ok bool) {
	q := l[0]
	var b []byte
	for i := 1; i < len(l); i++ {
		switch {
		case l[i] == '\\' && q == '"' && i+1 < len(l) && (l[i+1] == '"' || l[i+1] == '\\'):
			b = append(b, l[i+1])
			i++
		case l[i] == q && q == '\'' && i+1 < len(l) && l[i+1] == '\'':
			b = append(b, '\'') // YAML's '' escape; TOML keys cannot hold '
			i++
		case l[i] == q:
			return string(b), l[i+1:], true
		default:
			b = append(b, l[i])
		}
	}
	return "", nil, false
}
