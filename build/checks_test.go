package build

import (
	"encoding/json"
	"testing"
)

func TestLimit(t *testing.T) {
	tests := []struct {
		limit        string
		stale, total int
		fail         bool
	}{
		{"", 40, 40, false},
		{"5", 5, 40, false},
		{"5", 6, 40, true},
		{"0", 0, 40, false},
		{"0", 1, 40, true},
		{"10%", 4, 40, false}, // exactly 10%: not crossed
		{"10%", 5, 40, true},
		{"0%", 0, 0, false},
	}
	for _, tc := range tests {
		l, err := ParseLimit(tc.limit)
		if err != nil {
			t.Fatal(err)
		}
		c := Checks{MaxStale: l}
		got := c.Evaluate(CheckInput{Staleness: StatusCounts{Stale: tc.stale, Total: tc.total}})
		if (len(got) > 0) != tc.fail {
			t.Errorf("limit %q, %d of %d: %v, want fail=%v", tc.limit, tc.stale, tc.total, got, tc.fail)
		}
		if l.String() != tc.limit {
			t.Errorf("ParseLimit(%q).String() = %q", tc.limit, l.String())
		}
	}
	for _, bad := range []string{"x", "-1", "2.5", "120%"} {
		if _, err := ParseLimit(bad); err == nil {
			t.Errorf("ParseLimit(%q) accepted", bad)
		}
	}
	l, _ := ParseLimit("5")
	u, _ := ParseLimit("50%")
	c := Checks{MaxStale: l, MaxUnknown: u, FailOnDivergent: true, FailOnSecrets: true}
	got := c.Evaluate(CheckInput{Staleness: StatusCounts{Stale: 7, Unknown: 30, Total: 40}, Divergent: 2, Secrets: -1})
	want := []string{
		"check max-stale failed: 7 of 40 documents stale or expired (17.5%), limit 5 (over by 2)",
		"check max-unknown failed: 30 of 40 documents undated (75.0%), limit 50% (over by 25.0 points)",
		"check fail-on-divergent failed: 2 near-duplicate pair(s) differ in numbers, versions, dates or units",
	}
	if len(got) != len(want) {
		t.Fatalf("got %v", got)
	}
	for i := range want {
		if got[i].Msg != want[i] {
			t.Errorf("got  %s\nwant %s", got[i].Msg, want[i])
		}
	}
	if _, err := ParseLimit("x"); err == nil || err.Error() != `"x" is not a count or a percentage, e.g. "5" or "10%"` {
		t.Errorf("ParseLimit(x): %v", err)
	}
}

func TestChecksJSON(t *testing.T) {
	data, _ := json.Marshal(Checks{})
	if string(data) != "{}" {
		t.Errorf("no checks: %s", data)
	}
	l, _ := ParseLimit("10%")
	c := Checks{MaxStale: l, FailOnSecrets: true}
	data, _ = json.Marshal(c)
	if string(data) != `{"max_stale":"10%","fail_on_secrets":true}` {
		t.Errorf("got %s", data)
	}
	var back Checks
	if err := json.Unmarshal(data, &back); err != nil || back != c {
		t.Errorf("read back %+v, %v", back, err)
	}
}
