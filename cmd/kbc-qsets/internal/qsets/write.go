package qsets

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
)

// Write writes the set into dir as NAME.queries.tsv (qid TAB text),
// NAME.qrels (section level: qid 0 path#anchor 1) and NAME-page.qrels
// (page level: qid 0 path 1), in the formats of the TREC evaluation tool.
// Each file is written to a temporary name and renamed into place.
func Write(dir string, s *Set) error {
	var q, sec, pg bytes.Buffer
	for _, x := range s.Queries {
		fmt.Fprintf(&q, "%s\t%s\n", x.ID, x.Text)
		for _, d := range x.Sections {
			fmt.Fprintf(&sec, "%s 0 %s 1\n", x.ID, d)
		}
		for _, d := range x.Pages {
			fmt.Fprintf(&pg, "%s 0 %s 1\n", x.ID, d)
		}
	}
	for name, b := range map[string][]byte{
		s.Name + ".queries.tsv": q.Bytes(),
		s.Name + ".qrels":       sec.Bytes(),
		s.Name + "-page.qrels":  pg.Bytes(),
	} {
		if err := writeFile(filepath.Join(dir, name), b); err != nil {
			return err
		}
	}
	return nil
}

func writeFile(name string, b []byte) error {
	f, err := os.CreateTemp(filepath.Dir(name), "."+filepath.Base(name)+".tmp*")
	if err != nil {
		return err
	}
	_, err = f.Write(b)
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(f.Name(), name)
	}
	if err != nil {
		os.Remove(f.Name())
	}
	return err
}
