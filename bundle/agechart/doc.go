// Package agechart draws the age of documentation pages, by owner and by
// freshness status, as one self-contained SVG image.
//
// The whole API is one call:
//
//	svg := agechart.SVG(rows, agechart.Options{Title: "Page age by owner"})
//
// Each [Row] is an owner and its pages; each [Page] has an age in days
// (since it was last updated) and a [Status]. The chart has one band per
// row, in the order given (the caller sorts), with one marker per page
// placed by age on a shared day axis; pages without a date ([Unknown], or
// a negative age) sit in a "no date" column at the right. Pages that land
// on one spot are stacked, up to three, in the order given; the rest are
// counted in a "+N" beside them. Beside each band the counts per status
// are written out ("2 stale, 5 fresh").
//
// # Reading it without colour
//
// A status is never told by hue alone: each has its own marker shape
// (circle, triangle, square, cross, diamond), the legend names every
// shape, and the counts are text. Colours come from the Okabe–Ito
// palette (Okabe and Ito, "Color Universal Design", 2008), chosen to stay
// distinct for the common forms of colour blindness.
//
// # Safety
//
// The result is a standalone <svg> element in the SVG namespace, fit to
// be written to a .svg file or put inline in an HTML page: it has no
// script, no external reference (no href, no font or style sheet from
// elsewhere) and a <title> and <desc> for screen readers (role="img").
// Every piece of caller text (owners, page titles, options) is escaped
// for XML, and characters XML cannot carry are replaced by U+FFFD, so
// hostile names cannot break out of the image.
//
// Output is deterministic: the same rows and options give the same bytes.
// SVG is safe to call from several goroutines; it keeps no state.
package agechart
