package main

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"golang.org/x/sys/unix"
)

// openPty opens a pseudo-terminal pair the Linux way (pty(7): open
// /dev/ptmx, unlock, ask for the number of the pts).
func openPty(t *testing.T) (master, tty *os.File) {
	t.Helper()
	m, err := os.OpenFile("/dev/ptmx", os.O_RDWR, 0)
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	if err := unix.IoctlSetPointerInt(int(m.Fd()), unix.TIOCSPTLCK, 0); err != nil {
		m.Close()
		t.Skipf("unlocking the pty: %v", err)
	}
	n, err := unix.IoctlGetInt(int(m.Fd()), unix.TIOCGPTN)
	if err != nil {
		m.Close()
		t.Skipf("pty number: %v", err)
	}
	s, err := os.OpenFile(fmt.Sprintf("/dev/pts/%d", n), os.O_RDWR|syscall.O_NOCTTY, 0)
	if err != nil {
		m.Close()
		t.Skipf("opening the pts: %v", err)
	}
	return m, s
}

// TestColourOnTerminal runs a build whose check fails with its output on
// a real terminal: colour (ECMA-48 SGR sequences) with no NO_COLOR, none
// with NO_COLOR set (no-color.org: any value but "") or TERM=dumb.
func TestColourOnTerminal(t *testing.T) {
	src := t.TempDir()
	os.WriteFile(filepath.Join(src, "old.md"), []byte("---\nupdated: 2020-01-01\n---\n# Old rota\n\nWeekend cover rotates between the team leaders.\n"), 0o644)
	for _, tc := range []struct {
		name, noColor, term string
		colour              bool
	}{
		{"terminal", "", "xterm", true},
		{"NO_COLOR", "1", "xterm", false},
		{"dumb", "", "dumb", false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Setenv("NO_COLOR", tc.noColor)
			t.Setenv("TERM", tc.term)
			t.Setenv("SOURCE_DATE_EPOCH", "1796083200")
			m, tty := openPty(t)
			defer m.Close()
			got := make(chan string)
			go func() {
				var b bytes.Buffer
				io.Copy(&b, m) // ends with EIO once the tty side is closed
				got <- b.String()
			}()
			code := run([]string{"build", src, "-o", filepath.Join(t.TempDir(), "out"), "--max-stale", "0"}, tty, tty)
			tty.Close()
			out := <-got
			if code != exitCheck {
				t.Fatalf("exit %d, want %d:\n%s", code, exitCheck, out)
			}
			red := "\x1b[1;31mkbc: check max-stale failed: "
			if tc.colour != strings.Contains(out, red) || tc.colour != strings.Contains(out, "\x1b[1mbuilt\x1b[0m ") {
				t.Errorf("colour %v: output %q", tc.colour, out)
			}
			if !tc.colour && strings.Contains(out, "\x1b[") {
				t.Errorf("escape sequence with colour off: %q", out)
			}
		})
	}
}
