// Package preview serves a live preview of a bundle: a small local web page
// with a search box over the bundle, whose results refresh by themselves
// after each rebuild.
//
// A [Server] is an [net/http.Handler]; the caller chooses where it listens
// (kbc watch --serve binds it to a loopback address). It answers
//
//	GET /             the page: a search box, and for ?q= the results, rendered on the server
//	GET /results?q=   the results alone, an HTML fragment the page swaps in after a rebuild
//	GET /events       Server-Sent Events: "reload" after each rebuild
//
// The page is rendered with html/template, so passage text is shown as
// text and never read as HTML. It loads nothing from elsewhere: its style
// and its one small script are inline and named by their SHA-256 in the
// page's Content-Security-Policy, which allows nothing else. The script
// only listens on /events (an EventSource) and, on "reload", fetches
// /results for the query on screen and puts it in place of the old results.
//
// Each result shows its rank, BM25 score, freshness status, path#anchor,
// line range, heading trail, owner, the other places that hold a copy of it
// (also_at) and its first lines. The status is judged again at the time of
// the request, from the passage's review-by and expiry dates, with the
// due-soon window the bundle was built with.
//
// [Server.Reload] opens the rebuilt bundle, swaps it in under a lock and
// closes the old one once the searches that were using it have finished,
// then tells every open page. A bundle that cannot be opened is reported and
// the old one keeps serving.
//
// Requests whose Host header names a host other than an IP address or
// localhost are refused, so that a web page elsewhere cannot read the
// preview through a DNS name rebound to 127.0.0.1.
package preview
