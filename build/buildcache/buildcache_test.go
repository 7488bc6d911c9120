package buildcache

import (
	"encoding/gob"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestRoundTrip(t *testing.T) {
	name := filepath.Join(t.TempDir(), "state.gob")
	err := Write(name, Header{Layout: 2, Key: "k", Count: 1}, func(enc *gob.Encoder) error { return enc.Encode("record") })
	if err != nil {
		t.Fatal(err)
	}
	dec, h, err := Read(name, 2)
	if err != nil || h.Key != "k" || h.Count != 1 {
		t.Fatalf("header %+v, %v", h, err)
	}
	var rec string
	if err := dec.Decode(&rec); err != nil || rec != "record" {
		t.Errorf("record %q, %v", rec, err)
	}
	if _, _, err := Read(name, 3); err == nil || !strings.Contains(err.Error(), "cache layout 2, want 3") {
		t.Errorf("other layout: %v", err)
	}
	data, _ := os.ReadFile(name)
	data[len(data)/2] ^= 1
	if _, _, err := Open(name, data, 2); err == nil || !strings.Contains(err.Error(), "checksum mismatch") {
		t.Errorf("altered file: %v", err)
	}
}
