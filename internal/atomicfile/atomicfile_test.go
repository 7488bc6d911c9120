package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	name := filepath.Join(dir, "state.json")
	if err := WriteFile(name, []byte("old"), Flush); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("boom")
	err := Write(name, NoFlush, func(w io.Writer) error {
		w.Write([]byte("half"))
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("err = %v", err)
	}
	if data, _ := os.ReadFile(name); string(data) != "old" {
		t.Errorf("a failed write left %q", data)
	}
	if err := WriteFile(name, []byte("new"), NoFlush); err != nil {
		t.Fatal(err)
	}
	if data, _ := os.ReadFile(name); string(data) != "new" {
		t.Errorf("read %q", data)
	}
	st, _ := os.Stat(name)
	if st.Mode().Perm() != 0o644 {
		t.Errorf("mode %v", st.Mode())
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("temporary files left: %v", entries)
	}
}
