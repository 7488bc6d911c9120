package agechart_test

import (
	"fmt"
	"strings"

	"github.com/kbc-project/kbc/bundle/agechart"
)

// The chart of two owners' pages, written out as an image; here only its
// accessible description is printed.
func ExampleSVG() {
	rows := []agechart.Row{
		{Owner: "lock-keepers", Pages: []agechart.Page{
			{AgeDays: 400, Status: agechart.Expired, Title: "Sluice gate drill"},
			{AgeDays: 10, Status: agechart.Fresh, Title: "Opening hours"},
		}},
		{Owner: "chandlery", Pages: []agechart.Page{
			{AgeDays: 95, Status: agechart.Stale, Title: "Rope sizes"},
		}},
	}
	svg := agechart.SVG(rows, agechart.Options{Title: "Canal docs by owner"})
	for _, line := range strings.Split(svg, "\n") {
		if strings.HasPrefix(line, "<title") || strings.HasPrefix(line, "<desc") {
			fmt.Println(line)
		}
	}
	// Output:
	// <title id="agechart-title">Canal docs by owner</title>
	// <desc id="agechart-desc">Pages by owner and status. lock-keepers: 1 expired, 1 fresh; chandlery: 1 stale.</desc>
}
