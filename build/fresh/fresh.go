package fresh

import (
	"fmt"
	"path"
	"strings"
	"time"

	"github.com/kbc-project/kbc/sources"
)

// Policy says which front matter fields date a page and how old a page
// may get. Its zero value is usable: every zero field takes the value of
// DefaultPolicy. A Policy is plain data, safe to share between goroutines.
type Policy struct {
	// DateFields are the front matter fields that give the updated date,
	// tried in order. Empty means ["updated", "date"].
	DateFields []string `toml:"date_fields" json:"date_fields,omitempty"`
	// MaxAge holds per-path maximum ages; the first rule whose pattern
	// matches a page's path wins. A rule with a zero MaxAge is skipped.
	MaxAge []AgeRule `toml:"max_age" json:"max_age,omitempty"`
	// DefaultMaxAge applies when no rule matches. Zero means 365 days.
	DefaultMaxAge Duration `toml:"default_max_age" json:"default_max_age"`
	// DueSoon is how close the review-by date must be for a page to be
	// due soon. Zero means 30 days.
	DueSoon Duration `toml:"due_soon" json:"due_soon"`
}

// AgeRule sets the maximum age of the pages whose path matches Pattern,
// a glob as sources.Match reads it: a pattern without a slash matches the
// file name ("*.md"), one with a slash the whole path, "**" any number of
// folders ("api/**").
type AgeRule struct {
	Pattern string   `toml:"pattern" json:"pattern"`
	MaxAge  Duration `toml:"max_age" json:"max_age"`
}

// Defaults of Policy. A year is a common review cycle for reference
// documentation and a month a common warning window (common practice, no
// source).
var defaultDateFields = []string{"updated", "date"}

const (
	defaultMaxAgeDays  = daysPerYear
	defaultDueSoonDays = 30
	// futureSlack is how far in the future a date may lie before it is
	// suspicious: a day covers any time zone mix-up of a date written
	// without a zone.
	futureSlack = 24 * time.Hour
)

// lastInstant is the latest instant RFC 3339 and JSON can write.
var lastInstant = time.Date(9999, 12, 31, 23, 59, 59, 999999999, time.UTC)

// DefaultPolicy returns the stock policy: dates from "updated", then
// "date"; no per-path rules; a maximum age of 365 days; due soon 30 days
// before the review-by date.
func DefaultPolicy() Policy {
	return Policy{
		DateFields:    append([]string(nil), defaultDateFields...),
		DefaultMaxAge: Duration{Days: defaultMaxAgeDays},
		DueSoon:       Duration{Days: defaultDueSoonDays},
	}
}

// withDefaults fills the zero fields of p.
func (p Policy) withDefaults() Policy {
	if len(p.DateFields) == 0 {
		p.DateFields = defaultDateFields
	}
	if p.DefaultMaxAge.Days <= 0 {
		p.DefaultMaxAge = Duration{Days: defaultMaxAgeDays}
	}
	if p.DueSoon.Days <= 0 {
		p.DueSoon = Duration{Days: defaultDueSoonDays}
	}
	return p
}

// Validate reports the first problem of p that Evaluate would otherwise
// pass over: a malformed rule pattern (which never matches), a rule with
// no positive maximum age (which is skipped), a negative duration or an
// empty date field name.
func (p Policy) Validate() error {
	for i, r := range p.MaxAge {
		for _, part := range strings.Split(strings.Trim(r.Pattern, "/"), "/") {
			if _, err := path.Match(part, ""); err != nil {
				return fmt.Errorf("max_age rule %d: pattern %q: %w", i+1, r.Pattern, err)
			}
		}
		if r.Pattern == "" {
			return fmt.Errorf("max_age rule %d: empty pattern", i+1)
		}
		if r.MaxAge.Days <= 0 {
			return fmt.Errorf("max_age rule %d (%s): max_age must be at least 1d", i+1, r.Pattern)
		}
	}
	if p.DefaultMaxAge.Days < 0 || p.DueSoon.Days < 0 {
		return fmt.Errorf("negative duration")
	}
	for _, f := range p.DateFields {
		if strings.TrimSpace(f) == "" {
			return fmt.Errorf("date_fields: empty field name")
		}
	}
	return nil
}

// Status is how fresh a page is.
type Status string

// The statuses, from good to bad; see the package documentation.
const (
	Fresh   Status = "fresh"    // review-by date more than DueSoon away
	DueSoon Status = "due-soon" // review-by or expiry date at most DueSoon away
	Stale   Status = "stale"    // review-by date reached
	Expired Status = "expired"  // expiry date reached
	Unknown Status = "unknown"  // no date from any source
)

// Severity orders statuses from worst to best: 0 for expired, then stale,
// unknown, due soon, and 4 for fresh. Reports list the worst first;
// search prefers the freshest of equally relevant copies.
func (s Status) Severity() int {
	switch s {
	case Expired:
		return 0
	case Stale:
		return 1
	case Unknown:
		return 2
	case DueSoon:
		return 3
	}
	return 4
}

// Info is what Evaluate found out about one page. Times are UTC.
type Info struct {
	Updated       time.Time  `json:"updated,omitzero"`
	UpdatedSource string     `json:"updated_source,omitempty"` // "front matter: <field>", "git" or "file time"
	Reviewed      *time.Time `json:"reviewed,omitempty"`
	Owner         string     `json:"owner,omitempty"`
	Audience      string     `json:"audience,omitempty"`
	ReviewEvery   *Duration  `json:"review_every,omitempty"`
	Expires       *time.Time `json:"expires,omitempty"`
	// Period is the span added to the base date to get ReviewBy, and
	// PeriodSource where it came from: "front matter: review_every",
	// "rule: <pattern>" or "default".
	Period       Duration `json:"period"`
	PeriodSource string   `json:"period_source"`
	// ReviewBy is when the page turns stale: the later of Updated and
	// Reviewed, plus Period, but no later than the end of the year 9999.
	// Zero (and left out of JSON) when there is neither date.
	ReviewBy time.Time `json:"review_by,omitzero"`
	Status   Status    `json:"status"`
	// AgeDays is the number of whole days from the later of Updated and
	// Reviewed to now; never negative.
	AgeDays int `json:"age_days"`
	// SetAside names a file time that was not taken as the updated date
	// because a tool, not an author, stamped it (see [Sentinel]), e.g.
	// "file time 1985-10-26T08:15:00Z: the time npm stamps on packed
	// files". Such a page is undated unless another source dates it.
	SetAside string `json:"set_aside,omitempty"`
}

// Front matter fields Evaluate reads besides Policy.DateFields.
const (
	fieldReviewed    = "reviewed"
	fieldOwner       = "owner"
	fieldAudience    = "audience"
	fieldReviewEvery = "review_every"
	fieldExpires     = "expires"
)

// Evaluate dates doc and gives its freshness at the instant now under
// policy p; git holds last-change dates keyed by document path, as
// GitDates returns them (nil when there is no git history). The package
// documentation says where each date comes from and how the status is
// chosen.
//
// Each front matter value that cannot be used (a date or span that does
// not parse, a date more than a day in the future, a value of the wrong
// type) gives one warning positioned at the line of its key in the
// original file (doc.FrontKeys), and the field is ignored. Warnings are
// sorted by line. Evaluate does not change doc, never panics on any front
// matter, and is safe to call from many goroutines at once.
func Evaluate(doc *sources.Document, git map[string]time.Time, now time.Time, p Policy) (Info, []*sources.Error) {
	p = p.withDefaults()
	e := evaluator{doc: doc, now: now.UTC()}
	var info Info

	for _, f := range p.DateFields {
		if t, ok := e.date(f, false); ok {
			info.Updated, info.UpdatedSource = t, "front matter: "+f
			break
		}
	}
	if info.UpdatedSource == "" {
		if t, ok := git[doc.Path]; ok && !t.IsZero() {
			info.Updated, info.UpdatedSource = e.notFuture(t, "git date"), "git"
		} else if !doc.ModTime.IsZero() {
			if why := Sentinel(doc.ModTime, e.now); why != "" {
				info.SetAside = "file time " + doc.ModTime.UTC().Format(time.RFC3339) + ": " + why
			} else {
				info.Updated, info.UpdatedSource = doc.ModTime.UTC(), "file time"
			}
		}
	}
	if t, ok := e.date(fieldReviewed, false); ok {
		info.Reviewed = &t
	}
	if t, ok := e.date(fieldExpires, true); ok {
		info.Expires = &t
	}
	info.Owner = e.text(fieldOwner)
	info.Audience = e.text(fieldAudience)
	if d, ok := e.duration(fieldReviewEvery); ok {
		info.ReviewEvery = &d
	}

	switch {
	case info.ReviewEvery != nil:
		info.Period, info.PeriodSource = *info.ReviewEvery, "front matter: "+fieldReviewEvery
	default:
		info.Period, info.PeriodSource = p.DefaultMaxAge, "default"
		for _, r := range p.MaxAge {
			if r.MaxAge.Days > 0 && sources.Match(r.Pattern, doc.Path) {
				info.Period, info.PeriodSource = r.MaxAge, "rule: "+r.Pattern
				break
			}
		}
	}

	base := info.Updated
	if info.Reviewed != nil && info.Reviewed.After(base) {
		base = *info.Reviewed
	}
	if !base.IsZero() {
		info.ReviewBy = base.AddDate(0, 0, info.Period.Days)
		if info.ReviewBy.After(lastInstant) {
			info.ReviewBy = lastInstant // JSON cannot write a later year
		}
		// Whole days from Unix seconds: now.Sub would saturate at 292
		// years for an ancient (but valid) date.
		if age := (e.now.Unix() - base.Unix()) / 86400; age > 0 {
			info.AgeDays = int(age)
		}
	}
	info.Status = info.StatusAt(e.now, p.DueSoon)
	// A page whose file time was set aside is counted once for the whole
	// build (see Undated), not warned about page by page.
	if info.Status == Unknown && info.SetAside == "" {
		e.warn(0, "no date: no front matter date, git date or file time; freshness unknown")
	}
	sources.SortErrors(e.warns)
	return info, e.warns
}

// StatusAt returns the status of a page with these dates at the instant
// now, due soon when its review-by or expiry date is at most dueSoon away.
// A report read back later is judged again with it, so a bundle built in
// spring tells in autumn which pages have gone stale since.
func (info Info) StatusAt(now time.Time, dueSoon Duration) Status {
	soon := now.AddDate(0, 0, dueSoon.Days)
	switch {
	case info.Expires != nil && !now.Before(*info.Expires):
		return Expired
	case info.ReviewBy.IsZero():
		return Unknown
	case !now.Before(info.ReviewBy):
		return Stale
	case !soon.Before(info.ReviewBy), info.Expires != nil && !soon.Before(*info.Expires):
		return DueSoon
	}
	return Fresh
}

// evaluator holds one Evaluate call's state.
type evaluator struct {
	doc   *sources.Document
	now   time.Time
	warns []*sources.Error
}

func (e *evaluator) warn(line int, format string, args ...any) {
	e.warns = append(e.warns, &sources.Error{Path: e.doc.Path, Line: line, Msg: fmt.Sprintf(format, args...)})
}

// field returns the front matter value of key, whether it is set, and the
// line of key.
func (e *evaluator) field(key string) (any, bool, int) {
	v, ok := e.doc.Front[key]
	return v, ok, e.doc.FrontKeys[key]
}

// date reads the front matter date at key. A date more than a day ahead
// of now is refused unless future is set.
func (e *evaluator) date(key string, future bool) (time.Time, bool) {
	v, ok, line := e.field(key)
	if !ok {
		return time.Time{}, false
	}
	var t time.Time
	switch x := v.(type) {
	case string:
		var err error
		if t, err = ParseDate(x); err != nil {
			e.warn(line, "front matter %s: %v; ignored", key, err)
			return time.Time{}, false
		}
	case time.Time:
		if x.IsZero() {
			e.warn(line, "front matter %s: zero date; ignored", key)
			return time.Time{}, false
		}
		t = x.UTC()
	default:
		e.warn(line, "front matter %s: want a date such as 2026-10-14, found %s; ignored", key, describe(v))
		return time.Time{}, false
	}
	if !future && t.After(e.now.Add(futureSlack)) {
		e.warn(line, "front matter %s: %s is in the future; ignored", key, t.Format(time.RFC3339))
		return time.Time{}, false
	}
	return t, true
}

// notFuture returns t in UTC, or now, with a warning, when t is more than
// a day ahead of now.
func (e *evaluator) notFuture(t time.Time, what string) time.Time {
	t = t.UTC()
	if t.After(e.now.Add(futureSlack)) {
		e.warn(0, "%s %s is in the future; taken as now", what, t.Format(time.RFC3339))
		return e.now
	}
	return t
}

// text reads the front matter string at key; a list of strings is joined
// with ", ".
func (e *evaluator) text(key string) string {
	v, ok, line := e.field(key)
	if !ok {
		return ""
	}
	switch x := v.(type) {
	case string:
		return strings.TrimSpace(x)
	case []any:
		parts := make([]string, 0, len(x))
		for _, item := range x {
			s, ok := item.(string)
			if !ok {
				e.warn(line, "front matter %s: want a string or a list of strings, found a list holding %s; ignored", key, describe(item))
				return ""
			}
			if s = strings.TrimSpace(s); s != "" {
				parts = append(parts, s)
			}
		}
		return strings.Join(parts, ", ")
	}
	e.warn(line, "front matter %s: want a string or a list of strings, found %s; ignored", key, describe(v))
	return ""
}

// duration reads the front matter span at key; it must be at least a day.
func (e *evaluator) duration(key string) (Duration, bool) {
	v, ok, line := e.field(key)
	if !ok {
		return Duration{}, false
	}
	var s string
	switch x := v.(type) {
	case string:
		s = x
	case int, int64, float64:
		s = fmt.Sprint(x) // refused below: no unit
	default:
		e.warn(line, "front matter %s: want a span such as 90d, found %s; ignored", key, describe(v))
		return Duration{}, false
	}
	d, err := ParseDuration(s)
	if err == nil && d.Days == 0 {
		err = fmt.Errorf("duration %q: must be at least 1d", s)
	}
	if err != nil {
		e.warn(line, "front matter %s: %v; ignored", key, err)
		return Duration{}, false
	}
	return d, true
}

// describe names the kind of a decoded front matter value for a message.
func describe(v any) string {
	switch v.(type) {
	case nil:
		return "an empty value"
	case string:
		return "a string"
	case bool:
		return "true or false"
	case int, int64, int32, uint, uint64, uint32, float64, float32:
		return "a number"
	case []any:
		return "a list"
	case map[string]any:
		return "a table of keys"
	}
	return fmt.Sprintf("a %T value", v)
}
