package bundle_test

import (
	"fmt"

	"github.com/kbc-project/kbc/bundle"
)

// ExampleMatchSpans marks the words of a text that match a query as the
// search matches them: by stem, ignoring case and stop words.
func ExampleMatchSpans() {
	text := "The last crossing leaves the north pier; night crossings are cheaper."
	for _, s := range bundle.MatchSpans(text, "the night crossing") {
		fmt.Printf("%d-%d %s\n", s.Start, s.End, text[s.Start:s.End])
	}
	// Output:
	// 9-17 crossing
	// 41-46 night
	// 47-56 crossings
}
