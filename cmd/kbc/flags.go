package main

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/kbc-project/kbc/bundle"
)

// newFlags returns a flag set whose -h output shows usage and an example.
func newFlags(name, synopsis, about, example string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		w := fs.Output()
		fmt.Fprintf(w, "Usage: kbc %s\n\n%s\n\nFlags:\n", synopsis, about)
		fs.PrintDefaults()
		fmt.Fprintf(w, "\nExample:\n  %s\n", example)
	}
	return fs
}

// parseArgs parses flags that may come before, between or after the
// positional arguments ("kbc build SRC -o OUT"), which the flag package
// alone does not allow. It returns the positional arguments, and the exit
// code to stop with (-1 to go on).
func parseArgs(fs *flag.FlagSet, args []string, stdout io.Writer) ([]string, int) {
	var pos []string
	// The flag package prints usage on its own output before it returns;
	// hold that back so that --help goes to stdout and nothing else does.
	stderr := fs.Output()
	var held bytes.Buffer
	fs.SetOutput(&held)
	defer fs.SetOutput(stderr)
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.SetOutput(stdout)
				fs.Usage()
				return nil, exitOK
			}
			stderr.Write(held.Bytes())
			return nil, exitUsage
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, -1
		}
		if len(args) > len(rest) && args[len(args)-len(rest)-1] == "--" {
			return append(pos, rest...), -1
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}

// multiFlag collects a flag given several times.
type multiFlag []string

func (m *multiFlag) String() string { return strings.Join(*m, ",") }

func (m *multiFlag) Set(v string) error {
	*m = append(*m, v)
	return nil
}

// badUsage prints a usage error the way every command does.
func badUsage(fs *flag.FlagSet, stderr io.Writer, format string, args ...any) int {
	fmt.Fprintf(stderr, "kbc %s: %s\n", fs.Name(), fmt.Sprintf(format, args...))
	fmt.Fprintf(stderr, "Run \"kbc %s --help\" for usage.\n", fs.Name())
	return exitUsage
}

// addOutFlag registers -o/--out, the bundle folder a command writes.
func addOutFlag(fs *flag.FlagSet) *string {
	out := fs.String("o", "", "bundle folder to write (required)")
	fs.StringVar(out, "out", "", "same as -o")
	return out
}

// srcAndOut checks the positional arguments of a command that reads one
// source folder into the bundle folder out. It returns the source folder,
// and the exit code to stop with (-1 to go on).
func srcAndOut(fs *flag.FlagSet, pos []string, out string, stderr io.Writer) (string, int) {
	if len(pos) != 1 {
		return "", badUsage(fs, stderr, "want one source folder, got %d arguments", len(pos))
	}
	if out == "" {
		return "", badUsage(fs, stderr, "missing -o OUT")
	}
	// Before any work: OUT may be replaced only when it is a bundle. (A
	// missing SRC is bad usage, reported first by the command.)
	if st, err := os.Stat(pos[0]); err != nil || !st.IsDir() {
		return pos[0], -1
	}
	if err := bundle.CheckTarget(filepath.Clean(out)); err != nil {
		fmt.Fprintf(stderr, "kbc %s: -o %s: %v\n", fs.Name(), out, err)
		return "", exitFailure
	}
	return pos[0], -1
}
