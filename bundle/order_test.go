package bundle

import (
	"slices"
	"testing"

	"github.com/kbc-project/kbc/build"
)

// TestSortedOrderKeepsReadingOrder: passages that start on the same line
// of a page (the parts of a cut one-line paragraph) keep the order they
// came in, which is reading order, whatever their ids.
func TestSortedOrderKeepsReadingOrder(t *testing.T) {
	ps := []build.Passage{
		{ID: "f0", Path: "b.html", Line: 1},
		{ID: "c1", Path: "b.html", Line: 1},
		{ID: "a2", Path: "b.html", Line: 1},
		{ID: "00", Path: "a.html", Line: 9},
		{ID: "e3", Path: "b.html", Line: 2},
	}
	if got, want := sortedOrder(ps), []int{3, 0, 1, 2, 4}; !slices.Equal(got, want) {
		t.Errorf("order %v, want %v", got, want)
	}
}
