package fresh_test

import (
	"strings"
	"testing"
	"time"

	"github.com/kbc-project/kbc/build/fresh"
)

func TestParseDate(t *testing.T) {
	tests := []struct {
		name, in, want string // want in RFC 3339, UTC
	}{
		// RFC 3339 section 5.8, "Examples". The UTC instants were checked
		// with GNU date (date -u -d '<in>' +%FT%T.%NZ), except the leap
		// second, which GNU date refuses (see below).
		{"rfc3339 5.8 fraction", "1985-04-12T23:20:50.52Z", "1985-04-12T23:20:50.52Z"},
		{"rfc3339 5.8 offset", "1996-12-19T16:39:57-08:00", "1996-12-20T00:39:57Z"},
		{"rfc3339 5.8 odd offset", "1937-01-01T12:00:27.87+00:20", "1937-01-01T11:40:27.87Z"},
		// RFC 3339 section 5.8 gives 1990-12-31T23:59:60Z and the same
		// instant as 1990-12-31T15:59:60-08:00. Go's time.Parse, GNU date
		// and Python's datetime all refuse :60; we fold it into the next
		// second as POSIX time does, so both spellings give one instant.
		{"rfc3339 5.8 leap second", "1990-12-31T23:59:60Z", "1991-01-01T00:00:00Z"},
		{"rfc3339 5.8 leap second offset", "1990-12-31T15:59:60-08:00", "1991-01-01T00:00:00Z"},
		// RFC 3339 section 4.3: -00:00 is UTC with an unknown local offset.
		{"rfc3339 4.3 unknown offset", "2026-09-02T08:30:00-00:00", "2026-09-02T08:30:00Z"},
		{"rfc3339 Z", "2026-09-02T08:30:00Z", "2026-09-02T08:30:00Z"},
		{"rfc3339 lower case", "2026-09-02t08:30:00z", "2026-09-02T08:30:00Z"}, // RFC 3339 section 5.6, NOTE
		{"rfc3339 offset", "2026-09-02T10:30:00+02:00", "2026-09-02T08:30:00Z"},
		{"rfc3339 space", "2026-09-02 10:30:00+02:00", "2026-09-02T08:30:00Z"}, // RFC 3339 section 5.6, NOTE
		{"rfc3339 nanoseconds", "2026-09-02T08:30:00.123456789Z", "2026-09-02T08:30:00.123456789Z"},
		{"rfc3339 beyond nanoseconds", "2026-09-02T08:30:00.1234567891234Z", "2026-09-02T08:30:00.123456789Z"},
		{"date only", "2026-10-14", "2026-10-14T00:00:00Z"},
		{"date only, spaces", "  2026-10-14 \n", "2026-10-14T00:00:00Z"},
		{"leap day", "2024-02-29", "2024-02-29T00:00:00Z"},
		{"leap day 400 rule", "2000-02-29", "2000-02-29T00:00:00Z"},
		// git's ISO-like format (git log --date=iso, %ci) and what YAML
		// front matter holds; instants checked with GNU date.
		{"git offset", "2026-08-19 14:05:00 +0200", "2026-08-19T12:05:00Z"},
		{"git negative offset", "2026-08-19 14:05:00 -0130", "2026-08-19T15:35:00Z"},
		{"space colon offset", "2026-08-19 14:05:00 +02:00", "2026-08-19T12:05:00Z"},
		{"space Z", "2026-08-19 14:05:00 Z", "2026-08-19T14:05:00Z"},
		{"fraction and offset", "2026-08-19 14:05:00.5 +0200", "2026-08-19T12:05:00.5Z"},
		{"no zone, space", "2026-08-19 14:05:00", "2026-08-19T14:05:00Z"},
		{"no zone, T", "2026-08-19T14:05:00", "2026-08-19T14:05:00Z"},
		{"year 0", "0000-01-01", "0000-01-01T00:00:00Z"},
		{"end of day", "2026-12-31T23:59:59.999999999Z", "2026-12-31T23:59:59.999999999Z"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := fresh.ParseDate(tt.in)
			if err != nil {
				t.Fatalf("ParseDate(%q): %v", tt.in, err)
			}
			want, err := time.Parse(time.RFC3339Nano, tt.want)
			if err != nil {
				t.Fatal(err)
			}
			if !got.Equal(want) || got.Location() != time.UTC {
				t.Errorf("ParseDate(%q) = %s, want %s", tt.in, got.Format(time.RFC3339Nano), tt.want)
			}
			// Reference: Go's own RFC 3339 parser must agree wherever it
			// accepts the text (it refuses a leap second, lower case and
			// a space instead of T).
			if ref, err := time.Parse(time.RFC3339Nano, strings.TrimSpace(tt.in)); err == nil && !ref.Equal(got) {
				t.Errorf("ParseDate(%q) = %s, time.Parse gives %s", tt.in, got, ref)
			}
		})
	}
}

func TestParseDateErrors(t *testing.T) {
	const forms = "want YYYY-MM-DD, or YYYY-MM-DD, T or a space, hh:mm:ss[.fraction], and an optional zone Z, +hh:mm or +hhmm"
	tests := []struct {
		name, in, want string
	}{
		{"empty", "", `date "": ` + forms},
		{"word", "yesterday", `date "yesterday": ` + forms},
		{"day first", "19/08/2026", `date "19/08/2026": ` + forms},
		{"one digit month", "2026-8-19", `date "2026-8-19": ` + forms},
		{"compact", "20260819", `date "20260819": ` + forms},
		{"full-width digits", "２０２６-08-19", `date "２０２６-08-19": ` + forms},
		{"month 13", "2026-13-01", `date "2026-13-01": month 13 out of range`},
		{"month 0", "2026-00-10", `date "2026-00-10": month 00 out of range`},
		{"day 0", "2026-01-00", `date "2026-01-00": day 00 out of range for 2026-01`},
		{"feb 29 common year", "2026-02-29", `date "2026-02-29": day 29 out of range for 2026-02`},
		{"feb 29 century", "1900-02-29", `date "1900-02-29": day 29 out of range for 1900-02`},
		{"april 31", "2026-04-31", `date "2026-04-31": day 31 out of range for 2026-04`},
		{"hour 24", "2026-08-19 24:00:00", `date "2026-08-19 24:00:00": hour 24 out of range`},
		{"minute 60", "2026-08-19 14:60:00", `date "2026-08-19 14:60:00": minute 60 out of range`},
		{"leap second not at minute end", "2026-08-19 14:05:60", `date "2026-08-19 14:05:60": second 60 out of range`},
		{"second 61", "2026-08-19 14:59:61", `date "2026-08-19 14:59:61": second 61 out of range`},
		{"no seconds", "2026-08-19 14:05", `date "2026-08-19 14:05": ` + forms},
		{"bad separator", "2026-08-19_14:05:00", `date "2026-08-19_14:05:00": ` + forms},
		{"short offset", "2026-08-19 14:05:00 +2", `date "2026-08-19 14:05:00 +2": ` + forms},
		{"offset hour 24", "2026-08-19T14:05:00+24:00", `date "2026-08-19T14:05:00+24:00": zone offset +24:00 out of range`},
		{"offset minute 60", "2026-08-19T14:05:00+0160", `date "2026-08-19T14:05:00+0160": zone offset +0160 out of range`},
		{"empty fraction", "2026-08-19T14:05:00.Z", `date "2026-08-19T14:05:00.Z": ` + forms},
		{"zone name", "2026-08-19T14:05:00 UTC", `date "2026-08-19T14:05:00 UTC": ` + forms},
		{"trailing text", "2026-08-19T14:05:00+02:00x", `date "2026-08-19T14:05:00+02:00x": ` + forms},
		{"two spaces", "2026-08-19 14:05:00  +0200", `date "2026-08-19 14:05:00  +0200": ` + forms},
		{"after 9999 in UTC", "9999-12-31T23:00:00-02:00", `date "9999-12-31T23:00:00-02:00": outside the years 0000 to 9999 in UTC`},
		{"before 0000 in UTC", "0000-01-01T00:30:00+01:00", `date "0000-01-01T00:30:00+01:00": outside the years 0000 to 9999 in UTC`},
		{"zero date", "0001-01-01", `date "0001-01-01": the zero date 0001-01-01T00:00:00Z is a placeholder, not a date`},
		{"zero date time", "0001-01-01T00:00:00Z", `date "0001-01-01T00:00:00Z": the zero date 0001-01-01T00:00:00Z is a placeholder, not a date`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := fresh.ParseDate(tt.in)
			if err == nil {
				t.Fatalf("ParseDate(%q) = %s, want an error", tt.in, got)
			}
			if err.Error() != tt.want {
				t.Errorf("ParseDate(%q) error\n got %s\nwant %s", tt.in, err, tt.want)
			}
			if !got.IsZero() {
				t.Errorf("ParseDate(%q) returned %s with its error", tt.in, got)
			}
		})
	}
}

// FuzzParseDate checks, for any text: a date is returned only without an
// error and is never the zero time; it is in UTC; its RFC 3339 form reads
// back to the same instant; and Go's RFC 3339 parser, where it accepts
// the text, finds the same instant (reference: time.Parse).
func FuzzParseDate(f *testing.F) {
	for _, s := range []string{
		"1985-04-12T23:20:50.52Z", "1996-12-19T16:39:57-08:00", "1990-12-31T23:59:60Z",
		"1937-01-01T12:00:27.87+00:20", "2026-10-14", "2026-08-19 14:05:00 +0200",
		"2026-08-19 14:05:00 +02:00", "2026-08-19 14:05:00", "2026-08-19T14:05:00",
		"2026-02-29", "0001-01-01", "2026-08-19T14:05:00.Z", "9999-12-31T23:59:59.999999999-23:59",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, err := fresh.ParseDate(s)
		if err != nil {
			if !got.IsZero() {
				t.Fatalf("ParseDate(%q) = %s with error %v", s, got, err)
			}
			return
		}
		if got.IsZero() || got.Location() != time.UTC {
			t.Fatalf("ParseDate(%q) = %#v", s, got)
		}
		back, err := fresh.ParseDate(got.Format(time.RFC3339Nano))
		if err != nil || !back.Equal(got) {
			t.Fatalf("ParseDate(%q) = %s, reading it back gives %s, %v", s, got.Format(time.RFC3339Nano), back, err)
		}
		if ref, err := time.Parse(time.RFC3339Nano, strings.TrimSpace(s)); err == nil && !ref.Equal(got) {
			t.Fatalf("ParseDate(%q) = %s, time.Parse gives %s", s, got, ref)
		}
	})
}
