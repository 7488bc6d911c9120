package main

import (
	"bytes"
	"fmt"
	"io"
	"slices"
	"strings"
)

// runCompletion prints a completion script for one shell. The commands and
// their flags come from the commands' own --help, so the script never
// offers a flag that --help does not list (old spellings stay hidden).
func runCompletion(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("completion", "completion bash|zsh|fish",
		"Completion prints a script that completes kbc's commands, their flags and help\n"+
			"topics in the shell named; file names are completed as the shell does.",
		"source <(kbc completion bash)        # in ~/.bashrc\n"+
			"kbc completion fish > ~/.config/fish/completions/kbc.fish", stderr)
	pos, code := parseArgs(fs, args, stdout)
	if code >= 0 {
		return code
	}
	if len(pos) != 1 {
		return badUsage(fs, stderr, "want one shell: bash, zsh or fish")
	}
	cmds := completionCommands()
	switch pos[0] {
	case "bash":
		writeBash(stdout, cmds)
	case "zsh":
		writeZsh(stdout, cmds)
	case "fish":
		writeFish(stdout, cmds)
	default:
		return badUsage(fs, stderr, "no completion for shell %q: want bash, zsh or fish", pos[0])
	}
	return exitOK
}

// completed is one command as completion sees it.
type completed struct {
	name, summary string
	flags         []string // with their dashes, sorted
	args          []string // words to offer after the command (help topics, shells)
}

func completionCommands() []completed {
	var out []completed
	for _, c := range commands() {
		cc := completed{name: c.name, summary: c.summary}
		switch c.name {
		case "help":
			cc.args = topicNames()
			for _, o := range commands() {
				if o.name != "help" {
					cc.args = append(cc.args, o.name)
				}
			}
		case "completion":
			cc.args = []string{"bash", "zsh", "fish"}
		}
		if c.name != "help" {
			cc.flags = helpFlags(c)
		}
		out = append(out, cc)
	}
	return out
}

// helpFlags reads the flags a command's --help lists: the lines of its
// Flags section that start with a dash, e.g. "  -o, --out OUT".
func helpFlags(c command) []string {
	var buf bytes.Buffer
	c.run([]string{"--help"}, &buf, io.Discard)
	_, list, _ := strings.Cut(buf.String(), "\nFlags:\n")
	list, _, _ = strings.Cut(list, "\n\n")
	var out []string
	for _, l := range strings.Split(list, "\n") {
		l = strings.TrimSpace(l)
		if !strings.HasPrefix(l, "-") {
			continue
		}
		for _, f := range strings.Split(l, ", ") {
			name, _, _ := strings.Cut(f, " ")
			out = append(out, name)
		}
	}
	slices.Sort(out)
	return slices.Compact(out)
}

func names(cmds []completed) string {
	var n []string
	for _, c := range cmds {
		n = append(n, c.name)
	}
	return strings.Join(n, " ")
}

func writeBash(w io.Writer, cmds []completed) {
	fmt.Fprintf(w, `# bash completion for kbc. Load it with: source <(kbc completion bash)
_kbc() {
  local cur=${COMP_WORDS[COMP_CWORD]}
  if [[ $COMP_CWORD -eq 1 ]]; then
    COMPREPLY=($(compgen -W %q -- "$cur"))
    return
  fi
  local words=""
  case ${COMP_WORDS[1]} in
`, names(cmds))
	for _, c := range cmds {
		words := c.args
		if len(words) == 0 {
			words = c.flags
		}
		fmt.Fprintf(w, "    %s) words=%q ;;\n", c.name, strings.Join(words, " "))
	}
	fmt.Fprintf(w, `  esac
  if [[ $cur == -* || ${COMP_WORDS[1]} == help || ${COMP_WORDS[1]} == completion ]]; then
    COMPREPLY=($(compgen -W "$words" -- "$cur"))
  fi
}
complete -o default -F _kbc kbc
`)
}

// zshQuote quotes s for zsh inside single quotes.
func zshQuote(s string) string { return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'" }

func writeZsh(w io.Writer, cmds []completed) {
	fmt.Fprintf(w, "#compdef kbc\n# zsh completion for kbc. Load it with: source <(kbc completion zsh)\n_kbc() {\n  local -a cmds opts\n  cmds=(\n")
	for _, c := range cmds {
		fmt.Fprintf(w, "    %s\n", zshQuote(c.name+":"+c.summary))
	}
	fmt.Fprintf(w, "  )\n  if (( CURRENT == 2 )); then\n    _describe command cmds\n    return\n  fi\n  case ${words[2]} in\n")
	for _, c := range cmds {
		ws := c.args
		if len(ws) == 0 {
			ws = c.flags
		}
		q := make([]string, len(ws))
		for i, x := range ws {
			q[i] = zshQuote(x)
		}
		fmt.Fprintf(w, "    %s) opts=(%s) ;;\n", c.name, strings.Join(q, " "))
	}
	fmt.Fprintf(w, `  esac
  if [[ ${words[CURRENT]} == -* || ${words[2]} == help || ${words[2]} == completion ]]; then
    compadd -- $opts
  else
    _files
  fi
}
if [[ ${zsh_eval_context[-1]} == loadautofunc ]]; then
  _kbc "$@"
else
  compdef _kbc kbc
fi
`)
}

// fishQuote quotes s for fish inside single quotes.
func fishQuote(s string) string {
	return "'" + strings.NewReplacer(`\`, `\\`, `'`, `\'`).Replace(s) + "'"
}

func writeFish(w io.Writer, cmds []completed) {
	fmt.Fprintf(w, "# fish completion for kbc. Load it with: kbc completion fish | source\ncomplete -c kbc -e\n")
	for _, c := range cmds {
		fmt.Fprintf(w, "complete -c kbc -n __fish_use_subcommand -f -a %s -d %s\n", c.name, fishQuote(c.summary))
	}
	for _, c := range cmds {
		cond := fishQuote("__fish_seen_subcommand_from " + c.name)
		for _, a := range c.args {
			fmt.Fprintf(w, "complete -c kbc -n %s -f -a %s\n", cond, fishQuote(a))
		}
		for _, f := range c.flags {
			if long, ok := strings.CutPrefix(f, "--"); ok {
				fmt.Fprintf(w, "complete -c kbc -n %s -l %s\n", cond, long)
			} else {
				fmt.Fprintf(w, "complete -c kbc -n %s -s %s\n", cond, strings.TrimPrefix(f, "-"))
			}
		}
	}
}
