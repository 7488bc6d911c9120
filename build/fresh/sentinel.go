package fresh

import "time"

// The file times below are stamped on files by tools, not by anyone who
// changed them, so they say nothing of when a page was last updated.
var (
	// unixEpoch is time zero of Unix clocks; tools that build
	// reproducible archives often stamp it (or one second after it), and
	// SOURCE_DATE_EPOCH=0 gives it.
	unixEpoch = time.Date(1970, 1, 1, 0, 0, 0, 0, time.UTC)
	// dosEpoch is the earliest time an MS-DOS date, and so a ZIP entry's
	// time, can hold (PKWARE APPNOTE.TXT section 4.4.6: the year is
	// stored as an offset from 1980); archivers write it for a file
	// whose time is unknown or earlier.
	dosEpoch = time.Date(1980, 1, 1, 0, 0, 0, 0, time.UTC)
	// npmPackTime is the time npm's packer gives every file of a package
	// tarball so that packing is reproducible (seen on every file of the
	// npm-packaged corpora here; the constant is in npm's tar code, from
	// memory).
	npmPackTime = time.Date(1985, 10, 26, 8, 15, 0, 0, time.UTC)
	// earliestPlausible bounds the rest: no documentation file in use
	// today kept a modification time from before 1990 (our judgement,
	// common practice rather than a source).
	earliestPlausible = time.Date(1990, 1, 1, 0, 0, 0, 0, time.UTC)
)

// Sentinel reports why the file time t cannot be a real last-change date
// at the build time now, or "" when it can. Times that tools stamp (the
// Unix epoch, the ZIP epoch, npm's packing time), any time before 1990 and
// any time more than a day after now are set aside: the page is then
// dated by nothing, its status is [Unknown], not years stale.
func Sentinel(t, now time.Time) string {
	t = t.UTC()
	switch {
	case t.Equal(npmPackTime):
		return "the time npm stamps on packed files"
	case !t.Before(unixEpoch) && t.Before(unixEpoch.Add(24*time.Hour)):
		return "the Unix epoch"
	case !t.Before(dosEpoch) && t.Before(dosEpoch.Add(24*time.Hour)):
		return "the earliest ZIP time"
	case t.Before(earliestPlausible):
		return "before 1990"
	case t.After(now.UTC().Add(futureSlack)):
		return "after the build time"
	}
	return ""
}
