package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestCompletionParses checks that each shell's script is valid for that
// shell, with the shell's own syntax check (bash -n, zsh -n, fish
// --no-execute); a shell that is not installed is skipped, saying so.
func TestCompletionParses(t *testing.T) {
	for _, tc := range []struct{ shell, check string }{
		{"bash", "-n"},
		{"zsh", "-n"},
		{"fish", "--no-execute"},
	} {
		t.Run(tc.shell, func(t *testing.T) {
			var out, errb bytes.Buffer
			if code := run([]string{"completion", tc.shell}, &out, &errb); code != exitOK {
				t.Fatalf("kbc completion %s: exit %d: %s", tc.shell, code, errb.String())
			}
			if !strings.Contains(out.String(), "passage-tokens") || strings.Contains(out.String(), "aim-tokens") {
				t.Errorf("%s script: want --passage-tokens offered and --aim-tokens hidden", tc.shell)
			}
			bin, err := exec.LookPath(tc.shell)
			if err != nil {
				t.Skipf("%s is not installed: its completion script was not checked", tc.shell)
			}
			script := filepath.Join(t.TempDir(), "kbc."+tc.shell)
			if err := os.WriteFile(script, out.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
			if msg, err := exec.Command(bin, tc.check, script).CombinedOutput(); err != nil {
				t.Errorf("%s %s: %v\n%s", tc.shell, tc.check, err, msg)
			}
		})
	}
}

// TestCompletionBash runs the bash completion function on a few command
// lines, as bash does when Tab is pressed.
func TestCompletionBash(t *testing.T) {
	bin, err := exec.LookPath("bash")
	if err != nil {
		t.Skip("bash is not installed")
	}
	var out bytes.Buffer
	run([]string{"completion", "bash"}, &out, &out)
	script := filepath.Join(t.TempDir(), "kbc.bash")
	if err := os.WriteFile(script, out.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	for line, want := range map[string]string{
		"kbc ver":                "verify versions version",
		"kbc build --passage-":   "--passage-max-tokens --passage-tokens",
		"kbc help ch":            "checks",
		"kbc completion z":       "zsh",
		"kbc query --exclude-ex": "--exclude-expired",
	} {
		words := strings.Fields(line)
		cmd := exec.Command(bin, "-c", `source "$1"; COMP_WORDS=(${@:2}); COMP_CWORD=$(( $# - 2 )); _kbc; echo "${COMPREPLY[*]}"`, "bash", script)
		cmd.Args = append(cmd.Args, words...)
		got, err := cmd.Output()
		if err != nil {
			t.Fatalf("%q: %v", line, err)
		}
		if strings.TrimSpace(string(got)) != want {
			t.Errorf("%q completes to %q, want %q", line, strings.TrimSpace(string(got)), want)
		}
	}
}
