package bundle

import (
	"bufio"
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	// Reference validator for the test only: santhosh-tekuri/jsonschema
	// v6 implements JSON Schema draft 2020-12 and checks the schema itself
	// against the draft's meta-schema when compiling it.
	"github.com/santhosh-tekuri/jsonschema/v6"

	"github.com/kbc-project/kbc/build"
)

func compileSchema(t *testing.T) *jsonschema.Schema {
	t.Helper()
	doc, err := jsonschema.UnmarshalJSON(bytes.NewReader(schema))
	if err != nil {
		t.Fatal(err)
	}
	c := jsonschema.NewCompiler()
	c.DefaultDraft(jsonschema.Draft2020)
	const url = "urn:kbc:bundle:passage:1"
	if err := c.AddResource(url, doc); err != nil {
		t.Fatal(err)
	}
	sch, err := c.Compile(url)
	if err != nil {
		t.Fatal(err)
	}
	return sch
}

// TestSchemaValidatesPassages checks every line Write puts in
// passages.jsonl against passages.schema.json.
func TestSchemaValidatesPassages(t *testing.T) {
	sch := compileSchema(t)
	odd := mkPassage("odd", "dir/ünï cödé.md", 7, "<Title> & \"quotes\"", []string{"A > B", ""}, "line one\nline two\t\u2028 `code` <b>")
	odd.Anchor = "a-b"
	odd.Split = true
	ps := append(toyPassages(), odd)
	ps = append(ps, genPassages(50, 2)...)
	dir := filepath.Join(t.TempDir(), "b")
	mustWrite(t, dir, &Input{Passages: ps})
	f, err := os.Open(filepath.Join(dir, PassagesFile))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	n := 0
	for sc.Scan() {
		n++
		v, err := jsonschema.UnmarshalJSON(bytes.NewReader(sc.Bytes()))
		if err != nil {
			t.Fatalf("line %d: %v", n, err)
		}
		if err := sch.Validate(v); err != nil {
			t.Errorf("line %d: %v", n, err)
		}
	}
	if n != len(ps) {
		t.Errorf("%d lines, want %d", n, len(ps))
	}
}

// TestSchemaRejects checks that the schema is not too lax: each of these
// lines breaks one rule.
func TestSchemaRejects(t *testing.T) {
	sch := compileSchema(t)
	good := `{"id":"a","path":"p.md","title":"T","heading":[],"text":"x","line":1,"end_line":1,"tokens":1,"hash":"` + strings.Repeat("ab", 32) + `"}`
	tests := []struct{ name, from, to string }{
		{"missing hash", `,"hash":"` + strings.Repeat("ab", 32) + `"`, ``},
		{"extra field", `"id":"a"`, `"id":"a","score":1`},
		{"line zero", `"line":1`, `"line":0`},
		{"fractional line", `"line":1`, `"line":1.5`},
		{"heading null", `"heading":[]`, `"heading":null`},
		{"heading of numbers", `"heading":[]`, `"heading":[1]`},
		{"negative tokens", `"tokens":1`, `"tokens":-1`},
		{"upper-case hash", strings.Repeat("ab", 32), strings.Repeat("AB", 32)},
		{"empty id", `"id":"a"`, `"id":""`},
		{"split not boolean", `"id":"a"`, `"id":"a","split":"yes"`},
	}
	v, _ := jsonschema.UnmarshalJSON(strings.NewReader(good))
	if err := sch.Validate(v); err != nil {
		t.Fatalf("good line rejected: %v", err)
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			line := strings.Replace(good, tt.from, tt.to, 1)
			if line == good {
				t.Fatal("test case changes nothing")
			}
			v, err := jsonschema.UnmarshalJSON(strings.NewReader(line))
			if err != nil {
				t.Fatal(err)
			}
			if sch.Validate(v) == nil {
				t.Errorf("accepted %s", line)
			}
		})
	}
}

// TestSchemaCoversPassage keeps the schema in step with build.Passage: its
// properties are the struct's JSON names, and it requires exactly those
// without omitempty or omitzero.
func TestSchemaCoversPassage(t *testing.T) {
	var s struct {
		Required   []string                   `json:"required"`
		Properties map[string]json.RawMessage `json:"properties"`
	}
	if err := json.Unmarshal(schema, &s); err != nil {
		t.Fatal(err)
	}
	var names, required []string
	typ := reflect.TypeFor[build.Passage]()
	for i := 0; i < typ.NumField(); i++ {
		tag := typ.Field(i).Tag.Get("json")
		name, opts, _ := strings.Cut(tag, ",")
		names = append(names, name)
		if !strings.Contains(opts, "omitempty") && !strings.Contains(opts, "omitzero") {
			required = append(required, name)
		}
	}
	var props []string
	for p := range s.Properties {
		props = append(props, p)
	}
	slices.Sort(names)
	slices.Sort(props)
	slices.Sort(required)
	slices.Sort(s.Required)
	if !slices.Equal(names, props) {
		t.Errorf("build.Passage has %v, schema properties %v", names, props)
	}
	if !slices.Equal(required, s.Required) {
		t.Errorf("build.Passage always writes %v, schema requires %v", required, s.Required)
	}
}
