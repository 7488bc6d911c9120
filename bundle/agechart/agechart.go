package agechart

import (
	"encoding/xml"
	"fmt"
	"math"
	"strings"
)

// Status is a page's freshness status. Its values are the spellings the
// staleness report uses, so a caller converts with Status(s).
type Status string

// The statuses, from good to bad; an unrecognised Status is drawn as
// Unknown.
const (
	Fresh   Status = "fresh"
	DueSoon Status = "due-soon"
	Stale   Status = "stale"
	Expired Status = "expired"
	Unknown Status = "unknown"
)

// Statuses lists the statuses in the order the legend and the counts use,
// worst first.
var statuses = [...]Status{Expired, Stale, Unknown, DueSoon, Fresh}

// Page is one page in a [Row].
type Page struct {
	// AgeDays is the number of days since the page was last updated; a
	// negative age means the page has no date.
	AgeDays int
	Status  Status
	// Title, when set, is shown as the marker's tooltip with its age.
	Title string
}

// Row is one owner's band in the chart.
type Row struct {
	Owner string // shown as the band's label; "" is shown as "(no owner)"
	Pages []Page
}

// Options adjusts the chart; the zero value gives a 860-pixel-wide chart
// titled "Page age by owner and status".
type Options struct {
	// Title and Desc are the image's accessible title and description. An
	// empty Desc is filled with a summary of the counts.
	Title, Desc string
	// Width is the image width in pixels; below 480 gives the default.
	Width int
	// MaxAgeDays is the right end of the day axis; 0 fits the oldest
	// page. Older pages are drawn at the end of the axis, whose label
	// then reads "N+".
	MaxAgeDays int
	// ID prefixes the element ids inside the image, so that several
	// charts can share one HTML page; default "agechart".
	ID string
}

// Layout constants, in pixels.
const (
	labelW  = 150 // owner labels
	countW  = 250 // counts at the right
	noDateW = 72  // the "no date" column
	rowH    = 30
	topH    = 44 // legend
	axisH   = 34
	marker  = 5 // marker radius
)

var colours = map[Status]string{
	Expired: "#D55E00", // vermillion
	Stale:   "#E69F00", // orange
	Unknown: "#999999", // grey
	DueSoon: "#56B4E9", // sky blue
	Fresh:   "#009E73", // bluish green
}

var labels = map[Status]string{
	Expired: "expired",
	Stale:   "stale",
	Unknown: "no date",
	DueSoon: "due soon",
	Fresh:   "fresh",
}

func norm(s Status) Status {
	if _, ok := colours[s]; ok {
		return s
	}
	return Unknown
}

// SVG returns the chart of rows as an <svg> element. Rows are drawn in the
// order given; an empty rows slice gives a chart that says "no pages".
func SVG(rows []Row, opts Options) string {
	if opts.Title == "" {
		opts.Title = "Page age by owner and status"
	}
	if opts.Width < 480 {
		opts.Width = 860
	}
	if opts.ID == "" {
		opts.ID = "agechart"
	}
	oldest := 0
	for _, r := range rows {
		for _, p := range r.Pages {
			if p.AgeDays > oldest && norm(p.Status) != Unknown {
				oldest = p.AgeDays
			}
		}
	}
	// A fixed end is kept as given, and pages past it are drawn at it,
	// its label saying so ("730+"); an end fitted to the data is rounded
	// up to a tick.
	maxAge, over := opts.MaxAgeDays, false
	step := tickStep(maxAge)
	if maxAge > 0 {
		over = oldest > maxAge
	} else {
		step = tickStep(oldest)
		maxAge = max(step, int(math.Ceil(float64(oldest)/float64(step)))*step)
	}

	nrows := max(len(rows), 1)
	h := topH + nrows*rowH + axisH
	plotX := labelW
	plotW := opts.Width - labelW - countW - noDateW
	noDateX := plotX + plotW + noDateW/2
	ageX := func(days int) float64 {
		return float64(plotX) + float64(min(days, maxAge))*float64(plotW-2*marker)/float64(maxAge) + marker
	}
	if opts.Desc == "" {
		opts.Desc = summary(rows)
	}

	var b strings.Builder
	id := esc(opts.ID)
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" role="img" width="%d" height="%d" viewBox="0 0 %d %d" aria-labelledby="%s-title %s-desc" font-family="sans-serif" font-size="12">`+"\n",
		opts.Width, h, opts.Width, h, id, id)
	fmt.Fprintf(&b, "<title id=\"%s-title\">%s</title>\n<desc id=\"%s-desc\">%s</desc>\n", id, esc(opts.Title), id, esc(opts.Desc))
	fmt.Fprintf(&b, `<rect width="%d" height="%d" fill="#ffffff"/>`+"\n", opts.Width, h)
	legend(&b)

	// Bands, the day grid and the axis.
	plotTop, plotBottom := topH, topH+nrows*rowH
	for i := range nrows {
		if i%2 == 1 {
			fmt.Fprintf(&b, `<rect x="0" y="%d" width="%d" height="%d" fill="#f2f2f2"/>`+"\n", topH+i*rowH, opts.Width, rowH)
		}
	}
	var ticks []int
	for d := 0; d < maxAge; d += step {
		if maxAge-d >= step/2 { // else too close to the end's tick
			ticks = append(ticks, d)
		}
	}
	for _, d := range append(ticks, maxAge) {
		x := ageX(d)
		label := fmt.Sprint(d)
		if d == maxAge && over {
			label += "+"
		}
		fmt.Fprintf(&b, `<line x1="%.1f" y1="%d" x2="%.1f" y2="%d" stroke="#cccccc"/>`+"\n", x, plotTop, x, plotBottom)
		fmt.Fprintf(&b, `<text x="%.1f" y="%d" text-anchor="middle">%s</text>`+"\n", x, plotBottom+14, label)
	}
	fmt.Fprintf(&b, `<line x1="%d" y1="%d" x2="%d" y2="%d" stroke="#666666"/>`+"\n", plotX+plotW+4, plotTop, plotX+plotW+4, plotBottom)
	fmt.Fprintf(&b, `<text x="%d" y="%d" text-anchor="middle">no date</text>`+"\n", noDateX, plotBottom+14)
	fmt.Fprintf(&b, `<text x="%d" y="%d" text-anchor="middle">days since last update</text>`+"\n", plotX+plotW/2, plotBottom+29)

	if len(rows) == 0 {
		fmt.Fprintf(&b, `<text x="%d" y="%d">no pages</text>`+"\n", plotX+8, topH+rowH/2+4)
	}
	for i, r := range rows {
		y := topH + i*rowH
		mid := float64(y) + rowH/2
		owner := r.Owner
		if owner == "" {
			owner = "(no owner)"
		}
		fmt.Fprintf(&b, `<g><text x="8" y="%.1f">%s<title>%s</title></text>`+"\n", mid+4, esc(clip(owner, 22)), esc(owner))
		// Markers that would land on the same spot are stacked up and
		// down from the band's middle, so each page stays visible.
		used := map[int]int{}
		for _, p := range r.Pages {
			st := norm(p.Status)
			var x float64
			if st == Unknown || p.AgeDays < 0 {
				x = float64(noDateX)
			} else {
				x = ageX(p.AgeDays)
			}
			slot := int(x) / (2 * marker)
			n := used[slot]
			used[slot]++
			off := float64((n+1)/2) * (marker + 2)
			if n%2 == 1 {
				off = -off
			}
			off = math.Max(-rowH/2+marker, math.Min(rowH/2-marker, off))
			tip := ""
			if p.Title != "" {
				switch {
				case st == Unknown:
					tip = p.Title + ": no date"
				case p.AgeDays < 0:
					tip = fmt.Sprintf("%s: %s, no date", p.Title, labels[st])
				default:
					tip = fmt.Sprintf("%s: %s, %d days", p.Title, labels[st], p.AgeDays)
				}
			}
			shape(&b, st, x, mid+off, tip)
		}
		fmt.Fprintf(&b, `<text x="%d" y="%.1f" font-size="11">%s</text></g>`+"\n", plotX+plotW+noDateW+8, mid+4, esc(counts(r.Pages)))
	}
	b.WriteString("</svg>\n")
	return b.String()
}

// legend draws one shape and label per status along the top.
func legend(b *strings.Builder) {
	x := 8.0
	for _, s := range statuses {
		shape(b, s, x+marker, 20, "")
		fmt.Fprintf(b, `<text x="%.1f" y="24">%s</text>`+"\n", x+2*marker+5, labels[s])
		x += 2*marker + 12 + 7*float64(len(labels[s]))
	}
}

// shape draws the marker of status s centred on (x, y), with tip as its
// tooltip when set.
func shape(b *strings.Builder, s Status, x, y float64, tip string) {
	c := colours[s]
	r := float64(marker)
	title := ""
	if tip != "" {
		title = "<title>" + esc(tip) + "</title>"
	}
	switch s {
	case Fresh:
		fmt.Fprintf(b, `<circle cx="%.1f" cy="%.1f" r="%.1f" fill="%s" stroke="#000000" stroke-width="0.5">%s</circle>`+"\n", x, y, r, c, title)
	case DueSoon:
		fmt.Fprintf(b, `<path d="M%.1f %.1fL%.1f %.1fL%.1f %.1fZ" fill="%s" stroke="#000000" stroke-width="0.5">%s</path>`+"\n",
			x, y-r, x+r, y+r*0.8, x-r, y+r*0.8, c, title)
	case Stale:
		fmt.Fprintf(b, `<rect x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s" stroke="#000000" stroke-width="0.5">%s</rect>`+"\n", x-r*0.9, y-r*0.9, 1.8*r, 1.8*r, c, title)
	case Expired:
		fmt.Fprintf(b, `<path d="M%.1f %.1fL%.1f %.1fM%.1f %.1fL%.1f %.1f" stroke="%s" stroke-width="3">%s</path>`+"\n",
			x-r, y-r, x+r, y+r, x-r, y+r, x+r, y-r, c, title)
	default:
		fmt.Fprintf(b, `<path d="M%.1f %.1fL%.1f %.1fL%.1f %.1fL%.1f %.1fZ" fill="%s" stroke="#000000" stroke-width="0.5">%s</path>`+"\n",
			x, y-r, x+r, y, x, y+r, x-r, y, c, title)
	}
}

// counts spells out a row's counts per status, worst first, leaving out
// the statuses it has none of.
func counts(pages []Page) string {
	n := map[Status]int{}
	for _, p := range pages {
		n[norm(p.Status)]++
	}
	var parts []string
	for _, s := range statuses {
		if n[s] > 0 {
			parts = append(parts, fmt.Sprintf("%d %s", n[s], labels[s]))
		}
	}
	if len(parts) == 0 {
		return "no pages"
	}
	return strings.Join(parts, ", ")
}

// summary is the default description: each owner with its counts.
func summary(rows []Row) string {
	if len(rows) == 0 {
		return "No pages."
	}
	var parts []string
	for _, r := range rows {
		owner := r.Owner
		if owner == "" {
			owner = "(no owner)"
		}
		parts = append(parts, owner+": "+counts(r.Pages))
	}
	return "Pages by owner and status. " + strings.Join(parts, "; ") + "."
}

// tickStep picks a round day interval for about five to ten grid lines.
func tickStep(maxAge int) int {
	for _, s := range []int{7, 15, 30, 60, 90, 180, 365, 730} {
		if maxAge <= s*8 {
			return s
		}
	}
	return 365 * int(math.Ceil(float64(maxAge)/(365*8)))
}

// clip shortens s to n runes, ending with an ellipsis when cut.
func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// esc escapes s for XML text and attribute values; characters XML cannot
// carry become U+FFFD.
func esc(s string) string {
	var b strings.Builder
	xml.EscapeText(&b, []byte(s)) // writes to a strings.Builder never fail
	return b.String()
}
