package fresh_test

import (
	"encoding/json"
	"testing"

	"github.com/kbc-project/kbc/build/fresh"
)

func TestParseDuration(t *testing.T) {
	tests := []struct {
		in       string
		days     int
		text     string // String's form
		errorMsg string
	}{
		{in: "90d", days: 90, text: "90d"},
		{in: "1d", days: 1, text: "1d"},
		{in: "0d", days: 0, text: "0d"},
		{in: "12w", days: 84, text: "12w"},
		{in: "6m", days: 180, text: "180d"},
		{in: "6mo", days: 180, text: "180d"},
		{in: "1y", days: 365, text: "1y"},
		{in: "2y", days: 730, text: "2y"},
		{in: "14d", days: 14, text: "2w"},
		{in: "365d", days: 365, text: "1y"},
		{in: "3 months", days: 90, text: "90d"},
		{in: "1 Year", days: 365, text: "1y"},
		{in: " 2 weeks ", days: 14, text: "2w"},
		{in: "1 day", days: 1, text: "1d"},
		{in: "10000y", days: 3650000, text: "10000y"},
		{in: "90", errorMsg: `duration "90": missing unit: d (days), w (weeks), m (30-day months) or y (365-day years)`},
		{in: "", errorMsg: `duration "": want a whole number and a unit, as in 90d, 12w, 6m or 1y`},
		{in: "d", errorMsg: `duration "d": want a whole number and a unit, as in 90d, 12w, 6m or 1y`},
		{in: "-5d", errorMsg: `duration "-5d": want a whole number and a unit, as in 90d, 12w, 6m or 1y`},
		{in: "1.5y", errorMsg: `duration "1.5y": unknown unit ".5y": want d, w, m or y`},
		{in: "3h", errorMsg: `duration "3h": unknown unit "h": want d, w, m or y`},
		{in: "1y6m", errorMsg: `duration "1y6m": unknown unit "y6m": want d, w, m or y`},
		// "12 months" and "1y" would not agree (360 and 365 days): refused.
		{in: "12 months", errorMsg: `duration "12 months": write 1y: a month counts 30 days here, so 12 months would be 360 days, not 1 year(s)`},
		{in: "24m", errorMsg: `duration "24m": write 2y: a month counts 30 days here, so 24 months would be 720 days, not 2 year(s)`},
		{in: "13m", days: 390, text: "390d"},
		{in: "10001y", errorMsg: `duration "10001y": longer than 10000 years`},
		{in: "99999999999999999999999d", errorMsg: `duration "99999999999999999999999d": longer than 10000 years`},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			d, err := fresh.ParseDuration(tt.in)
			if tt.errorMsg != "" {
				if err == nil || err.Error() != tt.errorMsg {
					t.Fatalf("ParseDuration(%q) = %v, %v; want error %s", tt.in, d, err, tt.errorMsg)
				}
				return
			}
			if err != nil || d.Days != tt.days {
				t.Fatalf("ParseDuration(%q) = %v, %v; want %d days", tt.in, d, err, tt.days)
			}
			if d.String() != tt.text {
				t.Errorf("String() = %q, want %q", d.String(), tt.text)
			}
			back, err := fresh.ParseDuration(d.String())
			if err != nil || back != d {
				t.Errorf("ParseDuration(String()) = %v, %v; want %v", back, err, d)
			}
		})
	}
}

func TestDurationJSON(t *testing.T) {
	type config struct {
		Every fresh.Duration            `json:"every"`
		Rules []fresh.AgeRule           `json:"rules"`
		Opt   *fresh.Duration           `json:"opt,omitempty"`
		Pol   fresh.Policy              `json:"policy"`
		Map   map[string]fresh.Duration `json:"map"`
	}
	in := `{"every":"6m","rules":[{"pattern":"api/**","max_age":"90d"}],"opt":"2w","policy":{"due_soon":"1w"},"map":{"a":"1y"}}`
	var c config
	if err := json.Unmarshal([]byte(in), &c); err != nil {
		t.Fatal(err)
	}
	if c.Every.Days != 180 || c.Rules[0].MaxAge.Days != 90 || c.Opt.Days != 14 || c.Pol.DueSoon.Days != 7 || c.Map["a"].Days != 365 {
		t.Fatalf("decoded %+v", c)
	}
	out, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	const want = `{"every":"180d","rules":[{"pattern":"api/**","max_age":"90d"}],"opt":"2w","policy":{"default_max_age":"0d","due_soon":"1w"},"map":{"a":"1y"}}`
	if string(out) != want {
		t.Errorf("encoded\n %s\nwant\n %s", out, want)
	}
	for _, bad := range []string{`{"every":90}`, `{"every":"90"}`, `{"every":"soon"}`} {
		if err := json.Unmarshal([]byte(bad), &c); err == nil {
			t.Errorf("json.Unmarshal(%s) accepted it", bad)
		}
	}
	if _, err := json.Marshal(fresh.Duration{Days: -1}); err == nil {
		t.Error("a negative duration was encoded")
	}
}

// FuzzParseDuration checks: a parsed span is never negative nor over
// 10000 years, and String writes it so that ParseDuration reads it back.
func FuzzParseDuration(f *testing.F) {
	for _, s := range []string{"90d", "12w", "6m", "1y", "3 months", "10000y", "90", "-1d", "1.5y"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		d, err := fresh.ParseDuration(s)
		if err != nil {
			return
		}
		if d.Days < 0 || d.Days > 10000*365 {
			t.Fatalf("ParseDuration(%q) = %d days", s, d.Days)
		}
		back, err := fresh.ParseDuration(d.String())
		if err != nil || back != d {
			t.Fatalf("ParseDuration(%q) = %v; String %q reads back as %v, %v", s, d, d.String(), back, err)
		}
	})
}

func TestPolicyValidate(t *testing.T) {
	tests := []struct {
		name string
		p    fresh.Policy
		want string
	}{
		{"zero", fresh.Policy{}, ""},
		{"default", fresh.DefaultPolicy(), ""},
		{"good rules", fresh.Policy{MaxAge: []fresh.AgeRule{{"api/**", fresh.Duration{90}}, {"*.md", fresh.Duration{30}}}}, ""},
		{"bad glob", fresh.Policy{MaxAge: []fresh.AgeRule{{"api/[a-", fresh.Duration{90}}}}, `max_age rule 1: pattern "api/[a-": syntax error in pattern`},
		{"empty pattern", fresh.Policy{MaxAge: []fresh.AgeRule{{"", fresh.Duration{90}}}}, `max_age rule 1: empty pattern`},
		{"zero age", fresh.Policy{MaxAge: []fresh.AgeRule{{"a/*", fresh.Duration{90}}, {"b/*", fresh.Duration{}}}}, `max_age rule 2 (b/*): max_age must be at least 1d`},
		{"negative", fresh.Policy{DueSoon: fresh.Duration{-1}}, `negative duration`},
		{"empty field", fresh.Policy{DateFields: []string{"updated", " "}}, `date_fields: empty field name`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.p.Validate()
			got := ""
			if err != nil {
				got = err.Error()
			}
			if got != tt.want {
				t.Errorf("Validate() = %q, want %q", got, tt.want)
			}
		})
	}
}
