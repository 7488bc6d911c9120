package eval

import (
	"fmt"
	"io"
	"strings"
)

// Query is one question of a question set: its id and its text.
type Query struct {
	ID   string
	Text string
}

// ReadQueries reads a question set: one question a line, its id, a tab,
// and its text. Blank lines and lines starting with '#' are skipped. An id
// must not be empty, hold white space or be used twice, and the text must
// not be empty; errors are an ErrorList of file:line.
func ReadQueries(r io.Reader, name string) ([]Query, error) {
	var qs []Query
	first := make(map[string]int)
	var errs ErrorList
	err := scanLines(r, name, func(no int, line string) {
		if strings.TrimSpace(line) == "" || strings.HasPrefix(line, "#") {
			return
		}
		msg := func() string {
			id, text, ok := strings.Cut(line, "\t")
			text = strings.TrimSpace(text)
			switch {
			case !ok:
				return "want qid<TAB>question, found no tab"
			case id == "" || strings.ContainsFunc(id, isSpace):
				return fmt.Sprintf("query id %q is empty or has white space", id)
			case text == "":
				return fmt.Sprintf("query %s has no text", id)
			}
			if at, dup := first[id]; dup {
				return fmt.Sprintf("query %s is given twice (first at line %d)", id, at)
			}
			first[id] = no
			qs = append(qs, Query{id, text})
			return ""
		}()
		if msg != "" && len(errs) <= maxErrors {
			errs = append(errs, &Error{name, no, msg})
			if len(errs) == maxErrors+1 {
				errs[maxErrors].Msg = "too many errors"
			}
		}
	})
	if err != nil && len(errs) <= maxErrors {
		errs = append(errs, err.(*Error))
	}
	if len(errs) > 0 {
		return nil, errs
	}
	return qs, nil
}
