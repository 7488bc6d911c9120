package main

import (
	"errors"
	"flag"
	"fmt"
	"github.com/kbc-project/kbc/internal/asuser"
	"os"
	"os/exec"
	"strconv"
	"testing"
	"time"

	"github.com/rogpeppe/go-internal/testscript"
)

var update = flag.Bool("update", false, "rewrite the expected output in testdata/script")

func TestMain(m *testing.M) {
	testscript.Main(m, map[string]func(){
		"kbc": func() { os.Exit(run(os.Args[1:], os.Stdout, os.Stderr)) },
	})
}

// TestScriptsAsUser runs, as the user nobody, the scripts that test file
// permissions, which TestScripts skips as root (root reads past them).
func TestScriptsAsUser(t *testing.T) {
	if !asuser.Root() {
		t.Skip("not root: TestScripts runs these scripts")
	}
	for _, name := range []string{"unreadable"} {
		asuser.Run(t, "^TestScripts$/^"+name+"$", []string{"../../testdata/script/" + name + ".txtar"})
	}
}

// TestScripts runs the command-line scripts in testdata/script: each one
// holds the commands, the input files and the expected output.
func TestScripts(t *testing.T) {
	testscript.Run(t, testscript.Params{
		Dir:           "../../testdata/script",
		UpdateScripts: *update,
		Cmds: map[string]func(ts *testscript.TestScript, neg bool, args []string){
			// flipbyte FILE OFFSET inverts the bits of one byte of FILE.
			"flipbyte": func(ts *testscript.TestScript, neg bool, args []string) {
				if len(args) != 2 {
					ts.Fatalf("usage: flipbyte FILE OFFSET")
				}
				p := ts.MkAbs(args[0])
				data, err := os.ReadFile(p)
				ts.Check(err)
				off, err := strconv.Atoi(args[1])
				ts.Check(err)
				if off < 0 {
					off += len(data)
				}
				data[off] ^= 0xff
				ts.Check(os.WriteFile(p, data, 0o644))
			},
			// bigfile FILE N writes a Markdown file of N bytes.
			"bigfile": func(ts *testscript.TestScript, neg bool, args []string) {
				if len(args) != 2 {
					ts.Fatalf("usage: bigfile FILE N")
				}
				n, err := strconv.Atoi(args[1])
				ts.Check(err)
				data := make([]byte, n)
				for i := range data {
					data[i] = 'a'
					if i%80 == 79 {
						data[i] = '\n'
					}
				}
				ts.Check(os.WriteFile(ts.MkAbs(args[0]), data, 0o644))
			},
			// rawfile FILE TEXT writes TEXT with Go escapes such as \x00
			// decoded, for bytes a txtar archive cannot hold.
			"rawfile": func(ts *testscript.TestScript, neg bool, args []string) {
				if len(args) != 2 {
					ts.Fatalf("usage: rawfile FILE TEXT")
				}
				s, err := strconv.Unquote(`"` + args[1] + `"`)
				ts.Check(err)
				ts.Check(os.WriteFile(ts.MkAbs(args[0]), []byte(s), 0o644))
			},
			// status N CMD ARGS... runs CMD like exec and wants exit code N,
			// for the codes our users script against (1 failure, 2 usage).
			"status": func(ts *testscript.TestScript, neg bool, args []string) {
				if neg || len(args) < 2 {
					ts.Fatalf("usage: status N CMD [ARGS...]")
				}
				want, err := strconv.Atoi(args[0])
				ts.Check(err)
				got := 0
				if err := ts.Exec(args[1], args[2:]...); err != nil {
					var ee *exec.ExitError
					if !errors.As(err, &ee) {
						ts.Fatalf("%s: %v", args[1], err)
					}
					got = ee.ExitCode()
				}
				if got != want {
					ts.Fatalf("%s exited %d, want %d", args[1], got, want)
				}
			},
			// settime TIME FILE... sets the modification time of each FILE
			// to TIME (RFC 3339), as an archive or a packer would.
			"settime": func(ts *testscript.TestScript, neg bool, args []string) {
				if len(args) < 2 {
					ts.Fatalf("usage: settime RFC3339 FILE...")
				}
				at, err := time.Parse(time.RFC3339, args[0])
				ts.Check(err)
				for _, f := range args[1:] {
					ts.Check(os.Chtimes(ts.MkAbs(f), at, at))
				}
			},
			// unreadable FILE removes every permission bit from FILE.
			"unreadable": func(ts *testscript.TestScript, neg bool, args []string) {
				ts.Check(os.Chmod(ts.MkAbs(args[0]), 0))
			},
		},
		Condition: func(cond string) (bool, error) {
			switch cond {
			case "root":
				return os.Geteuid() == 0, nil
			}
			return false, fmt.Errorf("unknown condition %q", cond)
		},
	})
}

func TestBuildTime(t *testing.T) {
	now := func() time.Time { return time.Date(2026, 12, 1, 10, 0, 0, 5e8, time.UTC) }
	// Values per the reproducible-builds SOURCE_DATE_EPOCH specification:
	// a decimal integer of seconds since 1970-01-01T00:00:00Z; a malformed
	// value must stop the build.
	tests := []struct {
		env, want string
		bad       bool
	}{
		{"", "2026-12-01T10:00:00Z", false},
		{"0", "1970-01-01T00:00:00Z", false},
		{"1700000000", "2023-11-14T22:13:20Z", false}, // date -u -d @1700000000
		{"1.5", "", true},
		{"-3", "", true},
		{"soon", "", true},
	}
	for _, tc := range tests {
		got, err := buildTime(tc.env, now)
		if tc.bad {
			if err == nil {
				t.Errorf("buildTime(%q) = %v, want error", tc.env, got)
			}
			continue
		}
		if err != nil || got.Format(time.RFC3339) != tc.want {
			t.Errorf("buildTime(%q) = %v, %v; want %s", tc.env, got, err, tc.want)
		}
	}
}
