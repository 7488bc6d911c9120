// Package fresh dates documents and says how fresh they are.
//
// For each document, [Evaluate] finds when it was last updated, whether
// someone reviewed it since, who owns it and when it must be looked at
// again, and gives it a [Status]: fresh, due soon, stale or expired.
// [GitDates] collects the date of the last content change of every file of
// a git work tree in one git run, for Evaluate to fall back on when front
// matter has no date.
//
// # Where the dates come from
//
// The updated date is the first of these that gives a usable date:
//
//  1. the front matter fields of [Policy.DateFields], in order
//     (default "updated", then "date");
//  2. the committer date of the last commit that changed the file, from
//     [GitDates];
//  3. the file's modification time, unless it is a time that tools stamp
//     rather than authors (see [Sentinel]: the Unix epoch, the earliest ZIP
//     time, the time npm packs files with, anything before 1990 or after
//     the build time). Such a time is set aside ([Info.SetAside]) and the
//     page stays undated: unknown, not decades stale.
//
// A front matter value that cannot be read as a date (see [ParseDate]), or
// that lies more than a day in the future, gives a warning at the line of
// its key and is skipped: the next source is used. A git date in the
// future (a machine with a wrong clock) is taken as now, with a warning.
// No zero date is ever taken as a real one.
//
// These front matter fields are read as well, each optional:
//
//	reviewed:     2026-05-01   # someone checked the page without changing it
//	owner:        docs-team    # a string, or a list of strings
//	audience:     internal     # the audience label passages carry
//	review_every: 90d          # overrides the policy's maximum age (see ParseDuration)
//	expires:      2026-12-31   # the page is wrong from this instant on
//
// # Status
//
// The base date is the later of updated and reviewed. The review-by date
// is the base date plus review_every when the page sets it, else plus the
// maximum age of the first [AgeRule] whose pattern matches the page's path
// (sources.Match), else plus [Policy.DefaultMaxAge]. Then, at the instant
// now given to Evaluate:
//
//   - [Expired] when expires is set and now is at or after it;
//   - [Unknown] when there is no date at all (no front matter date, no git
//     date, no file time that is not a sentinel);
//   - [Stale] when now is at or after the review-by date;
//   - [DueSoon] when the review-by date, or the expiry date, is at most
//     [Policy.DueSoon] away;
//   - [Fresh] otherwise.
//
// All times are UTC. Evaluate is a pure function of its arguments: pass a
// fixed now (from SOURCE_DATE_EPOCH, say) and the result is reproducible.
package fresh
