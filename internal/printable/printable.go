// Package printable makes untrusted text safe to print on a terminal: file
// names and text taken from documents or stores may hold newlines (which
// forge log lines), carriage returns, escape sequences (which recolour or
// rewrite the screen) or bidirectional overrides (which reorder what is
// shown). kbc passes every such name and text through Quote before printing
// it, in the commands and in the libraries' error messages
// (sources.Error), so one rule applies everywhere.
package printable

import (
	"strconv"
	"unicode"
	"unicode/utf8"
)

// Quote returns s as it is when every character of it prints as itself (a
// letter, mark, number, punctuation, symbol or the space: unicode.IsPrint)
// and s is valid UTF-8; otherwise s as a Go string literal, quoted, with
// every other character escaped (strconv.Quote: \n, \r, \x1b, \u202e), so
// the result is one line that shows exactly what s holds. Ordinary names
// and messages are therefore printed unchanged. It is safe for concurrent
// use.
func Quote(s string) string {
	if Safe(s) {
		return s
	}
	return strconv.Quote(s)
}

// Safe reports whether Quote leaves s unchanged.
func Safe(s string) bool {
	for _, r := range s {
		if r == utf8.RuneError || !unicode.IsPrint(r) {
			return false
		}
	}
	return true
}
