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
	if opts.Desc == "" {
		opts.Desc = summary(rows)
	}
	c := newChart(rows, opts)
	var b strings.Builder
	id := esc(opts.ID)
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" role="img" width="%d" height="%d" viewBox="0 0 %d %d" aria-labelledby="%s-title %s-desc" font-family="sans-serif" font-size="12">`+"\n",
		opts.Width, c.h, opts.Width, c.h, id, id)
	fmt.Fprintf(&b, "<title id=\"%s-title\">%s</title>\n<desc id=\"%s-desc\">%s</desc>\n", id, esc(opts.Title), id, esc(opts.Desc))
	fmt.Fprintf(&b, `<rect width="%d" height="%d" fill="#ffffff"/>`+"\n", opts.Width, c.h)
	legend(&b)
	c.axis(&b, max(len(rows), 1))
	if len(rows) == 0 {
		fmt.Fprintf(&b, `<text x="%d" y="%d">no pages</text>`+"\n", c.plotX+8, topH+rowH/2+4)
	}
	for i := range rows {
		c.band(&b, i, &rows[i])
	}
	b.WriteString("</svg>\n")
	return b.String()
}

// chart is the geometry of one image.
type chart struct {
	width, h     int
	plotX, plotW int // the day axis
	noDateX      int // the middle of the "no date" column
	maxAge, step int
	over         bool // pages older than maxAge are drawn at it
}

func newChart(rows []Row, opts Options) *chart {
	oldest := 0
	for _, r := range rows {
		for _, p := range r.Pages {
			if p.AgeDays > oldest && norm(p.Status) != Unknown {
				oldest = p.AgeDays
			}
		}
	}
	c := &chart{width: opts.Width, plotX: labelW, plotW: opts.Width - labelW - countW - noDateW}
	c.h = topH + max(len(rows), 1)*rowH + axisH
	c.noDateX = c.plotX + c.plotW + noDateW/2
	// A fixed end is kept as given, and pages past it are drawn at it,
	// its label saying so ("730+"); an end fitted to the data is rounded
	// up to a tick.
	c.maxAge, c.step = opts.MaxAgeDays, tickStep(opts.MaxAgeDays)
	if c.maxAge > 0 {
		c.over = oldest > c.maxAge
	} else {
		c.step = tickStep(oldest)
		c.maxAge = max(c.step, int(math.Ceil(float64(oldest)/float64(c.step)))*c.step)
	}
	return c
}

// ageX is where a page of this age sits on the day axis.
func (c *chart) ageX(days int) float64 {
	return float64(c.plotX) + float64(min(days, c.maxAge))*float64(c.plotW-2*marker)/float64(c.maxAge) + marker
}

// axis draws the bands' shading, the day grid with its labels and the
// "no date" column for nrows bands.
func (c *chart) axis(b *strings.Builder, nrows int) {
	top, bottom := topH, topH+nrows*rowH
	for i := range nrows {
		if i%2 == 1 {
			fmt.Fprintf(b, `<rect x="0" y="%d" width="%d" height="%d" fill="#f2f2f2"/>`+"\n", topH+i*rowH, c.width, rowH)
		}
	}
	var ticks []int
	for d := 0; d < c.maxAge; d += c.step {
		if c.maxAge-d >= c.step/2 { // else too close to the end's tick
			ticks = append(ticks, d)
		}
	}
	for _, d := range append(ticks, c.maxAge) {
		x := c.ageX(d)
		label := fmt.Sprint(d)
		if d == c.maxAge && c.over {
			label += "+"
		}
		fmt.Fprintf(b, `<line x1="%.1f" y1="%d" x2="%.1f" y2="%d" stroke="#cccccc"/>`+"\n", x, top, x, bottom)
		fmt.Fprintf(b, `<text x="%.1f" y="%d" text-anchor="middle">%s</text>`+"\n", x, bottom+14, label)
	}
	fmt.Fprintf(b, `<line x1="%d" y1="%d" x2="%d" y2="%d" stroke="#666666"/>`+"\n", c.plotX+c.plotW+4, top, c.plotX+c.plotW+4, bottom)
	fmt.Fprintf(b, `<text x="%d" y="%d" text-anchor="middle">no date</text>`+"\n", c.noDateX, bottom+14)
	fmt.Fprintf(b, `<text x="%d" y="%d" text-anchor="middle">days since last update</text>`+"\n", c.plotX+c.plotW/2, bottom+29)
}

// perSpot is how many markers one spot of a band shows: the middle, one
// above and one below. More would leave the band; the rest of the spot's
// pages are counted in a "+N" beside it.
const perSpot = 3

// band draws row i: its label, its pages' markers and its counts. Pages
// that land on the same spot are stacked up and down from the band's
// middle in the order given, so the first (for a staleness report, the
// worst) stay visible.
func (c *chart) band(b *strings.Builder, i int, r *Row) {
	mid := float64(topH+i*rowH) + rowH/2
	owner := r.Owner
	if owner == "" {
		owner = "(no owner)"
	}
	fmt.Fprintf(b, `<g><text x="8" y="%.1f">%s<title>%s</title></text>`+"\n", mid+4, esc(clip(owner, 22)), esc(owner))
	used := map[int]int{}
	var spots []int         // in order of first use
	at := map[int]float64{} // a spot's x
	for _, p := range r.Pages {
		st := norm(p.Status)
		x := float64(c.noDateX)
		if st != Unknown && p.AgeDays >= 0 {
			x = c.ageX(p.AgeDays)
		}
		spot := int(x) / (2 * marker)
		n := used[spot]
		if n == 0 {
			spots = append(spots, spot)
			at[spot] = x
		}
		used[spot]++
		if n >= perSpot {
			continue
		}
		off := float64((n+1)/2) * (marker + 2)
		if n%2 == 1 {
			off = -off
		}
		shape(b, st, x, mid+off, tooltip(p, st))
	}
	for _, spot := range spots {
		if more := used[spot] - perSpot; more > 0 {
			fmt.Fprintf(b, `<text x="%.1f" y="%.1f" font-size="10">+%d<title>%d more pages here</title></text>`+"\n", at[spot]+marker+3, mid+4, more, more)
		}
	}
	fmt.Fprintf(b, `<text x="%d" y="%.1f" font-size="11">%s</text></g>`+"\n", c.plotX+c.plotW+noDateW+8, mid+4, esc(counts(r.Pages)))
}

// tooltip is a marker's title: the page, its status and age.
func tooltip(p Page, st Status) string {
	switch {
	case p.Title == "":
		return ""
	case st == Unknown:
		return p.Title + ": no date"
	case p.AgeDays < 0:
		return fmt.Sprintf("%s: %s, no date", p.Title, labels[st])
	}
	return fmt.Sprintf("%s: %s, %d days", p.Title, labels[st], p.AgeDays)
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
