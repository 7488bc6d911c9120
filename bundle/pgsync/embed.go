package pgsync

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os/exec"
	"runtime"
	"strings"
	"time"
)

// Defaults of the embedding hook.
const (
	DefaultEmbedBatch   = 64
	DefaultEmbedTimeout = 2 * time.Minute
)

// embedInput is one line the embedding command reads.
type embedInput struct {
	ID      string   `json:"id"`
	Hash    string   `json:"hash"`
	Text    string   `json:"text"`
	Title   string   `json:"title"`
	Heading []string `json:"heading"`
}

// embedOutput is one line the embedding command writes.
type embedOutput struct {
	ID     string    `json:"id"`
	Vector []float32 `json:"vector"`
}

// embedder runs the user's embedding command, one run per batch.
type embedder struct {
	cmd     string
	batch   int
	timeout time.Duration
	dim     int // the vectors' dimension: from the database, else the first batch
}

// EmbedError is a failure of the embedding command. Loc names the passage
// it concerns (path#anchor), or the batch's first and last passages when
// the failure is the whole batch's.
type EmbedError struct {
	Batch, Batches int
	Loc            string
	Msg            string
}

func (e *EmbedError) Error() string {
	return fmt.Sprintf("embedding batch %d of %d: %s: %s", e.Batch, e.Batches, e.Loc, e.Msg)
}

// run sends recs to the command in batches and hands every vector to
// keep, keyed by the passage's text hash. Any failure stops at once: the
// caller rolls back, so nothing of a failed run is stored.
func (e *embedder) run(ctx context.Context, recs []*record, keep func(hash string, v []float32) error) error {
	n := (len(recs) + e.batch - 1) / e.batch
	for b := 0; b < n; b++ {
		part := recs[b*e.batch : min(len(recs), (b+1)*e.batch)]
		if err := e.runBatch(ctx, b+1, n, part, keep); err != nil {
			return err
		}
	}
	return nil
}

func (e *embedder) runBatch(ctx context.Context, b, n int, recs []*record, keep func(string, []float32) error) error {
	fail := func(loc, format string, args ...any) error {
		return &EmbedError{Batch: b, Batches: n, Loc: loc, Msg: fmt.Sprintf(format, args...)}
	}
	whole := recs[0].loc()
	if len(recs) > 1 {
		whole = fmt.Sprintf("%d passages from %s to %s", len(recs), recs[0].loc(), recs[len(recs)-1].loc())
	}
	var in bytes.Buffer
	enc := json.NewEncoder(&in)
	enc.SetEscapeHTML(false)
	byID := make(map[string]*record, len(recs))
	for _, r := range recs {
		heading := r.p.Heading
		if heading == nil {
			heading = []string{}
		}
		if err := enc.Encode(embedInput{ID: r.p.ID, Hash: r.p.Hash, Text: r.p.Text, Title: r.p.Title, Heading: heading}); err != nil {
			return fail(r.loc(), "%v", err)
		}
		byID[r.id] = r
	}

	cctx, cancel := context.WithTimeout(ctx, e.timeout)
	defer cancel()
	shell, flag := "sh", "-c"
	if runtime.GOOS == "windows" {
		shell, flag = "cmd", "/c"
	}
	cmd := exec.CommandContext(cctx, shell, flag, e.cmd)
	ownGroup(cmd)
	cmd.WaitDelay = 2 * time.Second
	cmd.Stdin = &in
	var out bytes.Buffer
	errOut := &tailBuffer{max: 4096}
	cmd.Stdout, cmd.Stderr = &out, errOut
	err := cmd.Run()
	if cctx.Err() == context.DeadlineExceeded && ctx.Err() == nil {
		return fail(whole, "no answer within %s (--embed-timeout); the command was killed", e.timeout)
	}
	if ctx.Err() != nil {
		return ctx.Err()
	}
	if err != nil {
		msg := err.Error()
		var exit *exec.ExitError
		if errors.As(err, &exit) {
			msg = "the command ended with " + exit.ProcessState.String()
		}
		if last := errOut.lastLine(); last != "" {
			msg += ": " + last
		}
		return fail(whole, "%s", msg)
	}

	got := make(map[string]bool, len(recs))
	lines := bytes.Split(bytes.TrimRight(out.Bytes(), "\n"), []byte("\n"))
	if out.Len() == 0 {
		lines = nil
	}
	for i, line := range lines {
		var o embedOutput
		if err := json.Unmarshal(line, &o); err != nil {
			return fail(whole, "output line %d: %v", i+1, err)
		}
		r, ok := byID[o.ID]
		if !ok {
			return fail(whole, "output line %d: id %q is not in the batch", i+1, o.ID)
		}
		if got[o.ID] {
			return fail(r.loc(), "output line %d: a second vector for id %s", i+1, o.ID)
		}
		got[o.ID] = true
		if len(o.Vector) == 0 {
			return fail(r.loc(), "output line %d: no vector", i+1)
		}
		if e.dim == 0 {
			e.dim = len(o.Vector)
		}
		if len(o.Vector) != e.dim {
			return fail(r.loc(), "output line %d: vector of dimension %d, want %d", i+1, len(o.Vector), e.dim)
		}
		for _, x := range o.Vector {
			if math.IsInf(float64(x), 0) || math.IsNaN(float64(x)) {
				return fail(r.loc(), "output line %d: vector holds a value out of range", i+1)
			}
		}
		if err := keep(r.textHash, o.Vector); err != nil {
			return err
		}
	}
	if len(got) != len(recs) {
		var missing []string
		for _, r := range recs {
			if !got[r.id] {
				missing = append(missing, r.loc())
			}
		}
		more := ""
		if len(missing) > 3 {
			more = fmt.Sprintf(" and %d more", len(missing)-3)
			missing = missing[:3]
		}
		return fail(whole, "%d vectors for %d passages; none for %s%s", len(got), len(recs), strings.Join(missing, ", "), more)
	}
	return nil
}

// tailBuffer keeps the last max bytes written to it: enough of a failing
// command's standard error to quote its last line.
type tailBuffer struct {
	max int
	buf []byte
}

func (t *tailBuffer) Write(p []byte) (int, error) {
	t.buf = append(t.buf, p...)
	if len(t.buf) > t.max {
		t.buf = t.buf[len(t.buf)-t.max:]
	}
	return len(p), nil
}

func (t *tailBuffer) lastLine() string {
	s := strings.TrimSpace(string(t.buf))
	if i := strings.LastIndexByte(s, '\n'); i >= 0 {
		s = s[i+1:]
	}
	return strings.TrimSpace(s)
}
