package bundle

import (
	"strconv"
	"time"
	"unicode/utf8"

	"github.com/kbc-project/kbc/build"
)

// appendPassage appends p as one line of passages.jsonl: the bytes
// encoding/json writes for it (an Encoder with SetEscapeHTML(false)),
// without reflection, which made the encoding the slowest step of a
// one-page rebuild. TestAppendPassage and FuzzAppendPassage hold it to
// encoding/json's output, and TestPassageFields to build.Passage's fields.
// It reports false, and appends nothing, for a passage whose times
// encoding/json refuses (years outside 0-9999); the caller uses
// encoding/json for it, to get the same error.
func appendPassage(dst []byte, p *build.Passage) ([]byte, bool) {
	for _, t := range []*time.Time{&p.Updated, p.Reviewed, &p.ReviewBy, p.Expires} {
		if t != nil && (t.Year() < 0 || t.Year() > 9999) {
			return dst, false
		}
	}
	dst = append(dst, `{"id":`...)
	dst = appendJSONString(dst, p.ID)
	dst = append(dst, `,"path":`...)
	dst = appendJSONString(dst, p.Path)
	if p.Anchor != "" {
		dst = append(dst, `,"anchor":`...)
		dst = appendJSONString(dst, p.Anchor)
	}
	dst = append(dst, `,"title":`...)
	dst = appendJSONString(dst, p.Title)
	dst = append(dst, `,"heading":`...)
	dst = appendJSONStrings(dst, p.Heading)
	dst = append(dst, `,"text":`...)
	dst = appendJSONString(dst, p.Text)
	dst = append(dst, `,"line":`...)
	dst = strconv.AppendInt(dst, int64(p.Line), 10)
	dst = append(dst, `,"end_line":`...)
	dst = strconv.AppendInt(dst, int64(p.EndLine), 10)
	dst = append(dst, `,"tokens":`...)
	dst = strconv.AppendInt(dst, int64(p.Tokens), 10)
	dst = append(dst, `,"hash":`...)
	dst = appendJSONString(dst, p.Hash)
	if p.Split {
		dst = append(dst, `,"split":true`...)
	}
	if !p.Updated.IsZero() {
		dst = appendJSONTime(append(dst, `,"updated":`...), p.Updated)
	}
	if p.UpdatedSource != "" {
		dst = append(dst, `,"updated_source":`...)
		dst = appendJSONString(dst, p.UpdatedSource)
	}
	if p.Reviewed != nil {
		dst = appendJSONTime(append(dst, `,"reviewed":`...), *p.Reviewed)
	}
	if !p.ReviewBy.IsZero() {
		dst = appendJSONTime(append(dst, `,"review_by":`...), p.ReviewBy)
	}
	if p.Expires != nil {
		dst = appendJSONTime(append(dst, `,"expires":`...), *p.Expires)
	}
	if p.Owner != "" {
		dst = append(dst, `,"owner":`...)
		dst = appendJSONString(dst, p.Owner)
	}
	if p.Audience != "" {
		dst = append(dst, `,"audience":`...)
		dst = appendJSONString(dst, p.Audience)
	}
	if len(p.AlsoAt) > 0 {
		dst = append(dst, `,"also_at":`...)
		dst = appendJSONStrings(dst, p.AlsoAt)
	}
	if len(p.Terms) > 0 {
		dst = append(dst, `,"terms":[`...)
		for i, t := range p.Terms {
			if i > 0 {
				dst = append(dst, ',')
			}
			dst = appendJSONString(append(dst, `{"text":`...), t.Text)
			if t.Anchor != "" {
				dst = appendJSONString(append(dst, `,"anchor":`...), t.Anchor)
			}
			dst = append(dst, '}')
		}
		dst = append(dst, ']')
	}
	return append(dst, "}\n"...), true
}

// appendJSONTime appends t as encoding/json does: RFC 3339 with
// nanoseconds, quoted.
func appendJSONTime(dst []byte, t time.Time) []byte {
	dst = append(dst, '"')
	dst = t.AppendFormat(dst, time.RFC3339Nano)
	return append(dst, '"')
}

// appendJSONStrings appends a JSON array of strings; nil is null, as in
// encoding/json.
func appendJSONStrings(dst []byte, ss []string) []byte {
	if ss == nil {
		return append(dst, "null"...)
	}
	dst = append(dst, '[')
	for i, s := range ss {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = appendJSONString(dst, s)
	}
	return append(dst, ']')
}

const hexDigits = "0123456789abcdef"

// appendJSONString appends s as a JSON string the way encoding/json does
// without HTML escaping: '"' and '\\' escaped, control characters as
// \b \f \n \r \t or \u00XX, U+2028 and U+2029 as \u2028 and \u2029 (they
// end lines in JavaScript), and each invalid UTF-8 byte as \ufffd.
func appendJSONString(dst []byte, s string) []byte {
	dst = append(dst, '"')
	start := 0
	for i := 0; i < len(s); {
		if b := s[i]; b < utf8.RuneSelf {
			if b >= 0x20 && b != '"' && b != '\\' {
				i++
				continue
			}
			dst = append(dst, s[start:i]...)
			switch b {
			case '"', '\\':
				dst = append(dst, '\\', b)
			case '\b':
				dst = append(dst, '\\', 'b')
			case '\f':
				dst = append(dst, '\\', 'f')
			case '\n':
				dst = append(dst, '\\', 'n')
			case '\r':
				dst = append(dst, '\\', 'r')
			case '\t':
				dst = append(dst, '\\', 't')
			default:
				dst = append(dst, '\\', 'u', '0', '0', hexDigits[b>>4], hexDigits[b&0xf])
			}
			i++
			start = i
			continue
		}
		c, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case c == utf8.RuneError && size == 1:
			dst = append(dst, s[start:i]...)
			dst = append(dst, `\ufffd`...)
		case c == '\u2028' || c == '\u2029':
			dst = append(dst, s[start:i]...)
			dst = append(dst, '\\', 'u', '2', '0', '2', hexDigits[c&0xf])
		default:
			i += size
			continue
		}
		i += size
		start = i
	}
	dst = append(dst, s[start:]...)
	return append(dst, '"')
}
