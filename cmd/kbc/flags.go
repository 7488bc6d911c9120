package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	iofs "io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/kbc-project/kbc/bundle"
)

// newFlags returns a flag set whose --help output shows usage, the flags
// that apply (with double dashes, old spellings hidden) and examples, one
// per line of examples.
func newFlags(name, synopsis, about, examples string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		w := fs.Output()
		fmt.Fprintf(w, "Usage: kbc %s\n\n%s\n\nFlags:\n", synopsis, about)
		printFlags(w, fs)
		fmt.Fprintf(w, "\nExamples:\n")
		for _, e := range strings.Split(examples, "\n") {
			fmt.Fprintf(w, "  %s\n", e)
		}
	}
	return fs
}

// dashed spells a flag as the README does: -k for one letter, --name else.
func dashed(name string) string {
	if len(name) == 1 {
		return "-" + name
	}
	return "--" + name
}

// printFlags lists the flags of fs like flag.PrintDefaults, but with
// double dashes, an alias beside the flag it stands for, and the old
// spellings of renamed flags left out.
func printFlags(w io.Writer, fs *flag.FlagSet) {
	aliases := map[string][]string{}
	fs.VisitAll(func(f *flag.Flag) {
		if a, ok := f.Value.(aliasFlag); ok {
			aliases[a.of] = append(aliases[a.of], dashed(f.Name))
		}
	})
	fs.VisitAll(func(f *flag.Flag) {
		switch f.Value.(type) {
		case aliasFlag, deprecatedFlag:
			return
		}
		arg, usage := flag.UnquoteUsage(f)
		names := strings.Join(append([]string{dashed(f.Name)}, aliases[f.Name]...), ", ")
		if arg != "" {
			names += " " + argName(arg)
		}
		switch f.DefValue {
		case "", "0", "false", "[]", "-1":
		default:
			usage += fmt.Sprintf(" (default %s)", f.DefValue)
		}
		fmt.Fprintf(w, "  %s\n    \t%s\n", names, strings.ReplaceAll(usage, "\n", "\n    \t"))
	})
}

// argName names a flag's value for --help: the name the usage gives it
// between back quotes, else a word for its type.
func argName(arg string) string {
	switch arg {
	case "string", "value":
		return "VALUE"
	case "int", "uint":
		return "N"
	case "float":
		return "X"
	case "duration":
		return "DURATION"
	}
	return arg
}

// aliasFlag is a second name of the flag of, listed beside it.
type aliasFlag struct {
	flag.Value
	of string
}

func (a aliasFlag) IsBoolFlag() bool { return isBool(a.Value) }

// deprecatedFlag is the old spelling of the flag now: it still works for
// one release, with one line on stderr, and --help leaves it out.
type deprecatedFlag struct {
	flag.Value
	now string
}

func (d deprecatedFlag) IsBoolFlag() bool { return isBool(d.Value) }

func isBool(v flag.Value) bool {
	b, ok := v.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}

// addDeprecated keeps old working as a hidden spelling of the flag now.
func addDeprecated(fs *flag.FlagSet, old, now string) {
	fs.Var(deprecatedFlag{fs.Lookup(now).Value, now}, old, "deprecated: use "+dashed(now))
}

// parseArgs parses flags that may come before, between or after the
// positional arguments ("kbc build SRC -o OUT"), which the flag package
// alone does not allow. It returns the positional arguments, and the exit
// code to stop with (-1 to go on). A bad flag is one line and a pointer
// to --help; an old spelling of a flag prints one line saying so.
func parseArgs(fs *flag.FlagSet, args []string, stdout io.Writer) ([]string, int) {
	var pos []string
	// The flag package prints usage on its own output before it returns;
	// hold that back so that --help goes to stdout and nothing else does.
	stderr := fs.Output()
	fs.SetOutput(io.Discard)
	defer fs.SetOutput(stderr)
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				fs.SetOutput(stdout)
				fs.Usage()
				return nil, exitOK
			}
			return nil, badUsage(fs, stderr, "%s", flagError(fs, err))
		}
		rest := fs.Args()
		if len(rest) == 0 {
			break
		}
		if len(args) > len(rest) && args[len(args)-len(rest)-1] == "--" {
			pos = append(pos, rest...)
			break
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	fs.Visit(func(f *flag.Flag) {
		d, ok := f.Value.(deprecatedFlag)
		if !ok {
			return
		}
		fmt.Fprintf(stderr, "kbc %s: %s is deprecated and goes away in the next release; use %s\n", fs.Name(), dashed(f.Name), dashed(d.now))
		if !set[d.now] {
			fs.Set(d.now, d.String()) // so that the new name reads as given
		}
	})
	return pos, -1
}

// flagError rewords an error of the flag package in the README's terms,
// with the nearest flag of fs for a misspelt one.
func flagError(fs *flag.FlagSet, err error) string {
	msg := err.Error()
	if name, ok := strings.CutPrefix(msg, "flag provided but not defined: -"); ok {
		var names []string
		fs.VisitAll(func(f *flag.Flag) {
			if _, old := f.Value.(deprecatedFlag); !old {
				names = append(names, f.Name)
			}
		})
		if near := nearest(strings.TrimPrefix(name, "-"), names); near != "" {
			return fmt.Sprintf("unknown flag %s (did you mean %s?)", dashed(name), dashed(near))
		}
		return "unknown flag " + dashed(name)
	}
	if name, ok := strings.CutPrefix(msg, "flag needs an argument: -"); ok {
		return dashed(name) + " needs a value"
	}
	// invalid value "x" for flag -k: parse error
	if i := strings.Index(msg, " for flag -"); i > 0 && strings.HasPrefix(msg, "invalid ") {
		name, cause, _ := strings.Cut(msg[i+len(" for flag -"):], ": ")
		val := strings.TrimPrefix(strings.TrimPrefix(msg[:i], "invalid "), "boolean ")
		val = strings.TrimPrefix(val, "value ")
		return fmt.Sprintf("bad value %s for %s: %s", val, dashed(name), cause)
	}
	return msg
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
	out := fs.String("o", "", "bundle folder `OUT` to write (required)")
	fs.Var(aliasFlag{fs.Lookup("o").Value, "o"}, "out", "same as -o")
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

// bundleProblem says why dir could not be read as a bundle by the command
// name, and what to do instead: build a source folder first, or name the
// folder a build wrote.
func bundleProblem(name, dir string, err error) string {
	var nb *bundle.NotBundleError
	if errors.As(err, &nb) {
		if nb.Source {
			return fmt.Sprintf("%v; build one from it first: kbc build %s -o OUT, then kbc %s OUT", err, dir, name)
		}
		return fmt.Sprintf("%v; give the folder kbc build wrote (its -o OUT)", err)
	}
	if _, serr := os.Stat(dir); errors.Is(serr, iofs.ErrNotExist) {
		return fmt.Sprintf("%s: no such folder", dir)
	}
	return err.Error()
}

// nearest returns the candidate closest to name when it is a likely
// misspelling (at most two edits, and fewer than a third of its letters),
// else "". Ties go to the first candidate.
func nearest(name string, candidates []string) string {
	best, bestD := "", 3
	for _, c := range candidates {
		if d := editDistance(name, c); d < bestD && 3*d < max(len(name), len(c)) {
			best, bestD = c, d
		}
	}
	return best
}

// editDistance is the optimal string alignment distance between a and b,
// in bytes: insertions, deletions, substitutions and swaps of two
// neighbours ("biuld") each count one.
func editDistance(a, b string) int {
	d := make([][]int, len(a)+1)
	for i := range d {
		d[i] = make([]int, len(b)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(a); i++ {
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+cost)
			if i > 1 && j > 1 && a[i-1] == b[j-2] && a[i-2] == b[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(a)][len(b)]
}
