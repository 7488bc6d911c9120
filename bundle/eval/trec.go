package eval

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
)

// Qrels holds relevance judgements: query id, then document id, then grade.
type Qrels map[string]map[string]int

// Run holds the results of each query, by query id, in any order; Rank
// puts them in the order they are scored in.
type Run map[string][]Result

// Result is one retrieved document and its score.
type Result struct {
	Doc   string
	Score float64
}

// Error is a line of a qrels or run file that cannot be used.
type Error struct {
	File string
	Line int
	Msg  string
}

func (e *Error) Error() string { return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg) }

// ErrorList is every bad line of a file, in line order. Its Error gives
// one line per entry.
type ErrorList []*Error

func (l ErrorList) Error() string {
	s := make([]string, len(l))
	for i, e := range l {
		s[i] = e.Error()
	}
	return strings.Join(s, "\n")
}

// maxErrors is how many bad lines a file may have before reading stops: a
// file of another kind would otherwise give one error per line.
const maxErrors = 10

// maxLine is the longest line read; a longer one is an error.
const maxLine = 1 << 20

// ReadQrels reads judgements in the TREC qrels format (see the package
// doc). name is used in errors, which are an ErrorList.
func ReadQrels(r io.Reader, name string) (Qrels, error) {
	q := make(Qrels)
	first := make(map[[2]string]int) // (qid, docid) -> line
	err := readLines(r, name, func(no int, f []string) string {
		if len(f) != 4 {
			return fmt.Sprintf("want 4 fields (qid iter docid grade), got %d", len(f))
		}
		grade, err := strconv.Atoi(f[3])
		if err != nil {
			return fmt.Sprintf("grade %q is not an integer", f[3])
		}
		key := [2]string{f[0], f[2]}
		if at, dup := first[key]; dup {
			return fmt.Sprintf("query %s judges %s twice (first at line %d)", f[0], f[2], at)
		}
		first[key] = no
		if q[f[0]] == nil {
			q[f[0]] = make(map[string]int)
		}
		q[f[0]][f[2]] = grade
		return ""
	})
	return q, err
}

// ReadRun reads results in the TREC run format (see the package doc).
// name is used in errors, which are an ErrorList.
func ReadRun(r io.Reader, name string) (Run, error) {
	run := make(Run)
	first := make(map[[2]string]int)
	err := readLines(r, name, func(no int, f []string) string {
		if len(f) < 6 {
			return fmt.Sprintf("want 6 fields (qid Q0 docid rank score tag), got %d", len(f))
		}
		score, err := strconv.ParseFloat(f[4], 64)
		if err != nil && !errors.Is(err, strconv.ErrRange) || math.IsNaN(score) {
			return fmt.Sprintf("score %q is not a number", f[4])
		}
		key := [2]string{f[0], f[2]}
		if at, dup := first[key]; dup {
			return fmt.Sprintf("query %s lists %s twice (first at line %d)", f[0], f[2], at)
		}
		first[key] = no
		run[f[0]] = append(run[f[0]], Result{Doc: f[2], Score: score})
		return ""
	})
	return run, err
}

// readLines calls parse with the fields of each line that is not blank or
// a comment; parse returns what is wrong with the line, or "".
func readLines(r io.Reader, name string, parse func(no int, fields []string) string) error {
	var errs ErrorList
	err := scanLines(r, name, func(no int, line string) {
		f := strings.FieldsFunc(line, isSpace)
		if len(f) == 0 || strings.HasPrefix(f[0], "#") || len(errs) > maxErrors {
			return
		}
		if msg := parse(no, f); msg != "" {
			if len(errs) == maxErrors {
				msg = "too many errors"
			}
			errs = append(errs, &Error{name, no, msg})
		}
	})
	if err != nil && len(errs) <= maxErrors {
		errs = append(errs, err.(*Error))
	}
	if len(errs) > 0 {
		return errs
	}
	return nil
}

// scanLines calls fn with each line of r and its number from 1. A read
// error, or a line longer than maxLine, is returned as an *Error.
func scanLines(r io.Reader, name string, fn func(no int, line string)) error {
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64<<10), maxLine)
	no := 0
	for sc.Scan() {
		no++
		fn(no, sc.Text())
	}
	if err := sc.Err(); err != nil {
		msg := err.Error()
		if errors.Is(err, bufio.ErrTooLong) {
			msg = fmt.Sprintf("line longer than %d bytes", maxLine)
		}
		return &Error{name, no + 1, msg}
	}
	return nil
}

// isSpace reports whether c separates fields: C's isspace in the "C"
// locale, as trec_eval splits them.
func isSpace(c rune) bool {
	switch c {
	case ' ', '\t', '\n', '\v', '\f', '\r':
		return true
	}
	return false
}

// Rank returns a copy of results in the order trec_eval scores them: by
// score, highest first; equal scores by document id, in descending byte
// order (form_res_rels.c, comp_sim_docno). A rank given in a file plays no
// part.
func Rank(results []Result) []Result {
	out := slices.Clone(results)
	slices.SortStableFunc(out, func(a, b Result) int {
		if a.Score != b.Score {
			if a.Score > b.Score {
				return -1
			}
			return 1
		}
		return strings.Compare(b.Doc, a.Doc)
	})
	return out
}

// WriteRun writes run in the TREC run format: queries in byte order, each
// query's results in Rank order, rank from 1, tag in the last column. A
// document id or tag with white space in it could not be read back, so it
// is an error, and so is a query id that starts with '#' (a comment).
func WriteRun(w io.Writer, run Run, tag string) error {
	if tag == "" || strings.ContainsFunc(tag, isSpace) {
		return fmt.Errorf("run tag %q is empty or has white space", tag)
	}
	bw := bufio.NewWriter(w)
	qids := make([]string, 0, len(run))
	for qid := range run {
		qids = append(qids, qid)
	}
	slices.Sort(qids)
	for _, qid := range qids {
		if qid == "" || strings.ContainsFunc(qid, isSpace) || qid[0] == '#' {
			return fmt.Errorf("query id %q is empty, has white space or starts with #", qid)
		}
		for i, r := range Rank(run[qid]) {
			if r.Doc == "" || strings.ContainsFunc(r.Doc, isSpace) {
				return fmt.Errorf("query %s: document id %q is empty or has white space", qid, r.Doc)
			}
			fmt.Fprintf(bw, "%s Q0 %s %d %s %s\n", qid, r.Doc, i+1, strconv.FormatFloat(r.Score, 'g', -1, 64), tag)
		}
	}
	return bw.Flush()
}
