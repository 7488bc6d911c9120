package preview

import (
	"errors"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"net/http"
	"net/url"
	"strings"

	"github.com/kbc-project/kbc/build/secrets"
	"github.com/kbc-project/kbc/bundle"
	"github.com/kbc-project/kbc/sources"
)

// Bounds of the source view: the lines shown around a passage, and the
// most lines shown at all.
const (
	sourceContext  = 3
	sourceMaxLines = 400
)

// sourceView is a hit's lines as its source file holds them now.
type sourceView struct {
	ID, Ref, Path string
	Query         string
	Line, EndLine int
	Lines         []sourceLine
	Note          string       // why nothing (or not all) is shown
	Back          template.URL // the search the reader came from
}

type sourceLine struct {
	N    int
	In   bool // inside the passage
	Segs []segment
}

// sourceView reads the source lines of the passage ?id= from the server's
// Source folder. What it shows obeys the rules of passages: a passage the
// server may not show is not found; the file is read through
// sources.OpenDir, so a symlink or ".." cannot lead outside the folder;
// credentials are replaced by their markers and HTML comments by a stub;
// and a page with text hidden from readers is not shown at all (the
// hidden-text report names it), since its source holds that text.
func (s *Server) sourceView(h *handle, q url.Values) (*sourceView, int) {
	v := &sourceView{ID: q.Get("id"), Query: q.Get("q")}
	if v.Query != "" {
		// The search the reader came from, filters and count included.
		back := url.Values{}
		for _, k := range []string{"q", "k", "owner", "status", "audience", "path"} {
			if val := q.Get(k); val != "" {
				back.Set(k, val)
			}
		}
		v.Back = template.URL("/?" + back.Encode()) // trusted: query-encoded
	}
	if s.Source == "" {
		v.Note = "This preview was started without the source folder, so it cannot show source lines."
		return v, http.StatusNotFound
	}
	p, err := h.b.Passage(v.ID)
	if err != nil || !bundle.Visible(p.Audience, s.audiences) {
		v.Note = "No passage of this bundle has that id."
		return v, http.StatusNotFound
	}
	v.Ref, v.Path, v.Line, v.EndLine = p.Ref(), p.Path, p.Line, p.EndLine
	text, err := readSource(s.Source, p.Path)
	if err != nil {
		v.Note = "The source cannot be read now: " + err.Error()
		return v, http.StatusNotFound
	}
	doc, err := sources.Parse(p.Path, []byte(text))
	if err != nil {
		v.Note = "The source cannot be read now: " + err.Error()
		return v, http.StatusNotFound
	}
	if len(doc.Hidden) > 0 {
		var at []string
		for _, m := range doc.Hidden {
			at = append(at, fmt.Sprint(m.Line))
		}
		v.Note = fmt.Sprintf("This page holds text hidden from readers (at line %s), which never reaches a passage; its source is not shown here. See the hidden-text report.", strings.Join(at, ", "))
		return v, http.StatusOK
	}
	text = maskComments(redactKeepLines(text))
	lines := strings.Split(strings.TrimSuffix(text, "\n"), "\n")
	first := max(p.Line-sourceContext, 1)
	last := min(p.EndLine+sourceContext, len(lines), first+sourceMaxLines-1)
	if p.Line > len(lines) {
		v.Note = fmt.Sprintf("The file has %d lines now; it changed since the bundle was built.", len(lines))
		return v, http.StatusOK
	}
	if last < p.EndLine+sourceContext && last < len(lines) {
		v.Note = fmt.Sprintf("Only the first %d lines are shown.", sourceMaxLines)
	}
	for n := first; n <= last; n++ {
		line := strings.TrimSuffix(lines[n-1], "\r")
		v.Lines = append(v.Lines, sourceLine{N: n, In: n >= p.Line && n <= p.EndLine, Segs: marked(line, v.Query)})
	}
	return v, http.StatusOK
}

// readSource reads the file at the slash path name inside the folder
// root, never outside it (sources.Dir), up to sources.DefaultMaxSize.
func readSource(root, name string) (string, error) {
	d, err := sources.OpenDir(root)
	if err != nil {
		return "", err
	}
	defer d.Close()
	f, err := d.Open(name)
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return "", err
	}
	defer f.Close()
	if fi, err := f.Stat(); err != nil || fi.IsDir() {
		return "", errors.New("not a file")
	}
	data, err := io.ReadAll(io.LimitReader(f, sources.DefaultMaxSize+1))
	if err != nil {
		return "", err
	}
	if len(data) > sources.DefaultMaxSize {
		return "", errors.New("the file is over the size limit")
	}
	return string(data), nil
}

// redactKeepLines replaces every credential in text by its marker, as the
// build does in passages, followed by the line breaks the value spanned
// (a private key does), so that the lines after it keep their numbers.
func redactKeepLines(text string) string {
	fs := secrets.Find(text)
	if len(fs) == 0 {
		return text
	}
	var b strings.Builder
	at := 0
	for _, f := range fs {
		b.WriteString(text[at:f.Start])
		b.WriteString(secrets.Marker(f.Rule))
		b.WriteString(strings.Repeat("\n", strings.Count(text[f.Start:f.End], "\n")))
		at = f.End
	}
	b.WriteString(text[at:])
	return b.String()
}

// commentStub stands for an HTML comment in the source view: readers of
// the page never see a comment, so neither does the preview.
const commentStub = "<!-- comment not shown -->"

// maskComments replaces each HTML comment (<!-- to -->, or to the end)
// by commentStub and the line breaks it spanned.
func maskComments(text string) string {
	var b strings.Builder
	for {
		i := strings.Index(text, "<!--")
		if i < 0 {
			b.WriteString(text)
			return b.String()
		}
		b.WriteString(text[:i])
		j := strings.Index(text[i+4:], "-->")
		end := len(text)
		if j >= 0 {
			end = i + 4 + j + 3
		}
		b.WriteString(commentStub)
		b.WriteString(strings.Repeat("\n", strings.Count(text[i:end], "\n")))
		text = text[end:]
	}
}
