package main

import "testing"

func TestNearest(t *testing.T) {
	names := []string{"build", "stale", "version", "versions", "max-stale", "max-unknown", "json", "k"}
	for _, tc := range []struct{ in, want string }{
		{"biuld", "build"},         // two letters swapped
		{"max-stail", "max-stale"}, // one letter wrong, one missing
		{"jsn", "json"},
		{"versoins", "versions"},
		{"x", ""}, // one letter is too short to guess from
		{"deploy", ""},
		{"aim", ""},
	} {
		if got := nearest(tc.in, names); got != tc.want {
			t.Errorf("nearest(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	for _, tc := range []struct {
		a, b string
		d    int
	}{{"", "abc", 3}, {"kitten", "sitting", 3}, {"ab", "ba", 1}, {"same", "same", 0}} {
		if got := editDistance(tc.a, tc.b); got != tc.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tc.a, tc.b, got, tc.d)
		}
	}
}
