// Package preview serves a live preview of a bundle: a small local web site
// over the bundle that kbc watch rebuilds, whose pages refresh by themselves
// after each rebuild.
//
// A [Server] is an [net/http.Handler]; the caller chooses where it listens
// (kbc watch --serve binds it to a loopback address). It answers
//
//	GET /             search: a search box with filters, and for ?q= the results
//	GET /results?q=   the search page's results alone (an HTML fragment)
//	GET /stale        staleness: a chart of page age by owner and status, and every page worst first
//	GET /duplicates   copies that disagree, side by side, and the copies folded into one passage
//	GET /warnings     the last build's warnings, each with its path:line
//	GET /source?id=   a hit's lines as its source file holds them now
//	GET /events       Server-Sent Events: "reload" after each rebuild
//
// Any page with ?part=main gives its main part alone: the fragment the page's
// script fetches and swaps in after a rebuild.
//
// # Search
//
// ?q= is the query, ?k= the number of results (DefaultResults unless asked,
// at most MaxResults). ?owner=, ?status= (fresh, due-soon, stale, expired,
// unknown), ?audience= (public, or one of the server's audiences) and ?path=
// (a path prefix) narrow the results; they never widen them. Each result
// shows its rank, BM25 score, freshness status, path#anchor, line range,
// title and the headings under it (a first heading that repeats the title
// is left out), owner, the copies that disagree with it, the places that
// hold a copy of it (also_at) and its first lines. The query's words are
// marked by [bundle.MatchSpans], which uses the analysis the search ranks
// with, so what is marked is what matched. The status is judged again at
// the time of the request, from the passage's review-by and expiry dates,
// with the due-soon window the bundle was built with; so are the rows of
// the staleness page.
//
// # What a page may show
//
// Every page obeys the audience rule of [bundle.Query]: a passage, page,
// pair or source labelled for an audience the server was not started with
// is left out. The source view reads only inside [Server.Source], through
// [sources.OpenDir] (a symlink or ".." that would leave the folder is an
// error), replaces credentials by their markers and HTML comments by a
// stub, and shows nothing of a page that holds text hidden from readers.
// Warnings pass through the credential check too.
//
// # Safety
//
// Pages are rendered with html/template, so passage text, names and paths
// are shown as text and never read as HTML. A page loads nothing from
// elsewhere: its style and its one small script are inline and named by
// their SHA-256 in the page's Content-Security-Policy, which allows nothing
// else (the staleness chart is inline SVG without script or style). The
// script only listens on /events (an EventSource), fetches the page's main
// part on "reload" and puts it in place of the old one, and submits the
// search form when a filter menu changes.
//
// [Server.Reload] opens the rebuilt bundle, swaps it in under a lock and
// closes the old one once the requests that were using it have finished,
// then tells every open page; [Server.SetWarnings] hands it the build's
// warnings first. A bundle that cannot be opened is reported and the old
// one keeps serving.
//
// Requests whose Host header names a host other than an IP address or
// localhost are refused, so that a web page elsewhere cannot read the
// preview through a DNS name rebound to 127.0.0.1. Event streams are
// capped (MaxStreams), each answered 503 beyond it.
package preview
