package main

import (
	"io"
	"os"

	"golang.org/x/term"
)

// paint colours text for one output: only when it is a terminal, and never
// when NO_COLOR is set to anything but "" (no-color.org) or TERM is "dumb"
// (a terminal that cannot show it). Pipes, files and CI logs get plain text.
// The zero value paints nothing.
type paint struct{ on bool }

// paintFor decides for w, reading the environment through getenv.
func paintFor(w io.Writer, getenv func(string) string) paint {
	f, ok := w.(*os.File)
	if !ok || getenv("NO_COLOR") != "" || getenv("TERM") == "dumb" {
		return paint{}
	}
	return paint{on: term.IsTerminal(int(f.Fd()))}
}

// SGR sequences of ECMA-48 (8.3.117): bold, red, yellow, and reset.
const (
	sgrBold   = "\x1b[1m"
	sgrRed    = "\x1b[1;31m"
	sgrYellow = "\x1b[33m"
	sgrReset  = "\x1b[0m"
)

func (p paint) wrap(sgr, s string) string {
	if !p.on || s == "" {
		return s
	}
	return sgr + s + sgrReset
}

// fail marks a failed check; warn a warning; strong a heading.
func (p paint) fail(s string) string   { return p.wrap(sgrRed, s) }
func (p paint) warn(s string) string   { return p.wrap(sgrYellow, s) }
func (p paint) strong(s string) string { return p.wrap(sgrBold, s) }
