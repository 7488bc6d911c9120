package htmltree

import (
	"bytes"

	"golang.org/x/net/html/atom"
)

// IsSpace reports whether c is HTML white space (space, tab, LF, CR, FF).
func IsSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f'
}

// TagScan reads the attributes of a tag from its raw bytes. The tokenizer
// has found the tag's extent; reading names and values again here, rather
// than through Tokenizer.TagName and TagAttr, saves two allocations per
// attribute. It follows x/net/html's Tokenizer.readTag, readTagAttrKey and
// readTagAttrVal step by step, so that both agree.
type TagScan struct {
	b []byte
	i int
}

// ScanTag returns the lower-cased name of the start or end tag raw
// (written into buf when it fits, as atom.Lookup needs lower case) and a
// scanner for its attributes.
func ScanTag(raw []byte, buf []byte) ([]byte, TagScan) {
	i := 1
	if i < len(raw) && raw[i] == '/' {
		i++
	}
	j := i + 1 // the first byte, a letter, is always part of the name
	for j < len(raw) && !IsSpace(raw[j]) && raw[j] != '/' && raw[j] != '>' {
		j++
	}
	j = min(j, len(raw))
	name := raw[i:j]
	if len(name) <= len(buf) {
		name = buf[:copy(buf, name)]
	} else {
		name = bytes.Clone(name)
	}
	for k, c := range name {
		if 'A' <= c && c <= 'Z' {
			name[k] = c + 'a' - 'A'
		}
	}
	return name, TagScan{b: raw, i: j}
}

func (s *TagScan) skipSpace() {
	for s.i < len(s.b) && IsSpace(s.b[s.i]) {
		s.i++
	}
}

// Next returns the next attribute's name (as written) and raw value; ok is
// false after the last.
func (s *TagScan) Next() (key, val []byte, ok bool) {
	b := s.b
	for {
		s.skipSpace()
		if s.i >= len(b) || b[s.i] == '>' {
			return nil, nil, false
		}
		from := s.i
		// Name: up to white space, '/', '>' or a '=' that is not its
		// first byte.
		ks := s.i
		s.i++
		if b[ks] == '/' {
			s.i = ks
		} else {
			for s.i < len(b) && !IsSpace(b[s.i]) && b[s.i] != '/' && b[s.i] != '>' && b[s.i] != '=' {
				s.i++
			}
		}
		key = b[ks:s.i]
		val = s.value()
		if s.i == from {
			s.i++ // cannot happen with the rules above; never loop forever
		}
		if len(key) > 0 {
			return key, val, true
		}
	}
}

// value reads the value after an attribute name, if there is one.
func (s *TagScan) value() []byte {
	b := s.b
	s.skipSpace()
	if s.i >= len(b) {
		return nil
	}
	switch b[s.i] {
	case '/':
		s.i++
	case '=':
		s.i++
		s.skipSpace()
		if s.i < len(b) && b[s.i] != '>' {
			if q := b[s.i]; q == '"' || q == '\'' {
				s.i++
				vs := s.i
				for s.i < len(b) && b[s.i] != q {
					s.i++
				}
				val := b[vs:min(s.i, len(b))]
				s.i++
				return val
			}
			vs := s.i
			for s.i < len(b) && !IsSpace(b[s.i]) && b[s.i] != '>' {
				s.i++
			}
			return b[vs:s.i]
		}
	}
	return nil
}

// rawText reports whether x/net/html's Tokenizer reads the content of a
// as raw text (Tokenizer.readStartTag).
func rawText(a atom.Atom) bool {
	switch a {
	case atom.Iframe, atom.Noembed, atom.Noframes, atom.Noscript, atom.Plaintext, atom.Script,
		atom.Style, atom.Textarea, atom.Title, atom.Xmp:
		return true
	}
	return false
}

// headContent reports whether a may appear in <head> without closing it.
func headContent(a atom.Atom) bool {
	switch a {
	case atom.Title, atom.Meta, atom.Link, atom.Script, atom.Style, atom.Base, atom.Noscript, atom.Template, atom.Head:
		return true
	}
	return false
}

// Void reports whether a is a void element, one that has no end tag
// (HTML Living Standard, 13.1.2 "Elements").
func Void(a atom.Atom) bool {
	switch a {
	case atom.Area, atom.Base, atom.Br, atom.Col, atom.Embed, atom.Hr, atom.Img, atom.Input,
		atom.Keygen, atom.Link, atom.Meta, atom.Param, atom.Source, atom.Track, atom.Wbr:
		return true
	}
	return false
}

// tracked is the number of tags track numbers.
const tracked = 14

// track numbers the tags whose open elements the builder counts: those
// that start tags close implicitly, and head. Others get -1.
func track(a atom.Atom) int {
	switch a {
	case atom.P:
		return 0
	case atom.Li:
		return 1
	case atom.Dd:
		return 2
	case atom.Dt:
		return 3
	case atom.Tr:
		return 4
	case atom.Td:
		return 5
	case atom.Th:
		return 6
	case atom.Tbody:
		return 7
	case atom.Thead:
		return 8
	case atom.Tfoot:
		return 9
	case atom.A:
		return 10
	case atom.Option:
		return 11
	case atom.Head:
		return 12
	case atom.Table:
		return 13
	}
	return -1
}

// Heading reports whether a is h1 to h6.
func Heading(a atom.Atom) bool {
	switch a {
	case atom.H1, atom.H2, atom.H3, atom.H4, atom.H5, atom.H6:
		return true
	}
	return false
}

// Block reports whether a starts a new block of text: the elements that
// CSS renders as display block, list-item or table parts by default (HTML
// Living Standard, 15.3 "Non-replaced elements" user agent style sheet).
// Everything else, unknown custom elements included, is inline.
func Block(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Article, atom.Aside, atom.Blockquote, atom.Body, atom.Caption,
		atom.Center, atom.Dd, atom.Details, atom.Dialog, atom.Dir, atom.Div, atom.Dl, atom.Dt,
		atom.Fieldset, atom.Figcaption, atom.Figure, atom.Footer, atom.Form, atom.H1, atom.H2,
		atom.H3, atom.H4, atom.H5, atom.H6, atom.Head, atom.Header, atom.Hgroup, atom.Hr, atom.Html,
		atom.Legend, atom.Li, atom.Listing, atom.Main, atom.Menu, atom.Nav, atom.Ol, atom.P,
		atom.Plaintext, atom.Pre, atom.Search, atom.Section, atom.Summary, atom.Table, atom.Tbody,
		atom.Td, atom.Tfoot, atom.Th, atom.Thead, atom.Title, atom.Tr, atom.Ul, atom.Xmp,
		atom.Optgroup, atom.Option, atom.Frameset, atom.Noframes:
		return true
	}
	return false
}

// closesP reports whether start tag a closes an open <p> (HTML Living
// Standard, 13.2.6.4.7: the start tags that "close a p element" when one is
// in button scope).
func closesP(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Article, atom.Aside, atom.Blockquote, atom.Center, atom.Details,
		atom.Dialog, atom.Dir, atom.Div, atom.Dl, atom.Fieldset, atom.Figcaption, atom.Figure,
		atom.Footer, atom.Header, atom.Hgroup, atom.Main, atom.Menu, atom.Nav, atom.Ol, atom.P,
		atom.Search, atom.Section, atom.Summary, atom.Ul, atom.H1, atom.H2, atom.H3, atom.H4,
		atom.H5, atom.H6, atom.Pre, atom.Listing, atom.Form, atom.Li, atom.Dd, atom.Dt,
		atom.Plaintext, atom.Table, atom.Hr, atom.Xmp:
		return true
	}
	return false
}

// scope is the HTML "has an element in scope" boundary set (HTML Living
// Standard, 13.2.4.2), HTML elements only.
func scope(a atom.Atom) bool {
	switch a {
	case atom.Applet, atom.Caption, atom.Html, atom.Table, atom.Td, atom.Th, atom.Marquee,
		atom.Object, atom.Template:
		return true
	}
	return false
}

// buttonScope is scope plus button ("in button scope").
func buttonScope(a atom.Atom) bool { return a == atom.Button || scope(a) }

// listItemStop ends the search for an open li, dd or dt: any special
// element other than address, div and p (HTML Living Standard,
// 13.2.6.4.7, "li" and "dd, dt" start tags).
func listItemStop(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Div, atom.P:
		return false
	}
	return special(a)
}

// tableStop keeps row and section closing inside the current table.
func tableStop(a atom.Atom) bool { return a == atom.Table || a == atom.Template || a == atom.Html }

// rowStop keeps cell closing inside the current row.
func rowStop(a atom.Atom) bool { return a == atom.Tr || tableStop(a) }

// special reports whether a is in the HTML "special" category (HTML
// Living Standard, 13.2.4.2), the elements an inline end tag may not close
// implicitly.
func special(a atom.Atom) bool {
	switch a {
	case atom.Address, atom.Applet, atom.Area, atom.Article, atom.Aside, atom.Base,
		atom.Basefont, atom.Bgsound, atom.Blockquote, atom.Body, atom.Br, atom.Button,
		atom.Caption, atom.Center, atom.Col, atom.Colgroup, atom.Dd, atom.Details, atom.Dir,
		atom.Div, atom.Dl, atom.Dt, atom.Embed, atom.Fieldset, atom.Figcaption, atom.Figure,
		atom.Footer, atom.Form, atom.Frame, atom.Frameset, atom.H1, atom.H2, atom.H3, atom.H4,
		atom.H5, atom.H6, atom.Head, atom.Header, atom.Hgroup, atom.Hr, atom.Html, atom.Iframe,
		atom.Img, atom.Input, atom.Keygen, atom.Li, atom.Link, atom.Listing, atom.Main,
		atom.Marquee, atom.Menu, atom.Meta, atom.Nav, atom.Noembed, atom.Noframes,
		atom.Noscript, atom.Object, atom.Ol, atom.P, atom.Param, atom.Plaintext, atom.Pre,
		atom.Script, atom.Search, atom.Section, atom.Select, atom.Source, atom.Style,
		atom.Summary, atom.Table, atom.Tbody, atom.Td, atom.Template, atom.Textarea,
		atom.Tfoot, atom.Th, atom.Thead, atom.Title, atom.Tr, atom.Track, atom.Ul, atom.Wbr,
		atom.Xmp:
		return true
	}
	return false
}
