package bundle

import (
	"reflect"
	"testing"

	"github.com/kbc-project/kbc/build"
)

func TestDiff(t *testing.T) {
	old := []build.Passage{{ID: "a", Hash: "1"}, {ID: "b", Hash: "2"}, {ID: "c", Hash: "3"}}
	cur := []build.Passage{{ID: "a", Hash: "1", Line: 40}, {ID: "c", Hash: "9"}, {ID: "d", Hash: "4"}}
	got := Diff(old, cur)
	want := &Delta{Added: []string{"d"}, Changed: []Change{{ID: "c", OldHash: "3", NewHash: "9"}}, Removed: []string{"b"}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Diff = %+v, want %+v", got, want)
	}
	if !Diff(cur, cur).Empty() {
		t.Error("a bundle differs from itself")
	}
}
