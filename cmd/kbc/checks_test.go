package main

import "testing"

func TestStaleLimit(t *testing.T) {
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
		l, err := parseStaleLimit(tc.limit)
		if err != nil {
			t.Fatal(err)
		}
		if got := l.check(tc.stale, tc.total); (got != "") != tc.fail {
			t.Errorf("limit %q, %d of %d: %q, want fail=%v", tc.limit, tc.stale, tc.total, got, tc.fail)
		}
	}
	for _, bad := range []string{"x", "-1", "2.5", "120%"} {
		if _, err := parseStaleLimit(bad); err == nil {
			t.Errorf("parseStaleLimit(%q) accepted", bad)
		}
	}
	l, _ := parseStaleLimit("5")
	if got, want := l.check(7, 40), "check max-stale failed: 7 of 40 documents stale or expired (17.5%), limit 5 (over by 2)"; got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	u, _ := parseUnknownLimit("50%")
	if got, want := u.check(30, 40), "check max-unknown failed: 30 of 40 documents undated (75.0%), limit 50% (over by 25.0 points)"; got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	if _, err := parseUnknownLimit("x"); err == nil || err.Error() != `bad --max-unknown "x": want a whole number of documents or a percentage such as 10%` {
		t.Errorf("parseUnknownLimit(x): %v", err)
	}
}
