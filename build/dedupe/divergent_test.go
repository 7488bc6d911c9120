package dedupe

import (
	"reflect"
	"slices"
	"strings"
	"testing"
)

// run is a Difference without its sentences, which TestDivergentSentences
// checks.
type run struct {
	A, B string
	Fact bool
}

func TestDivergent(t *testing.T) {
	tests := []struct {
		name string
		a, b string
		want []run
		ok   bool
	}{
		{"days", "Keys rotate every 30 days.", "Keys rotate every 90 days.",
			[]run{{"30 days", "90 days", true}}, true},
		{"version", "Requires v1.2 or later.", "Requires v1.3 or later.",
			[]run{{"v1.2", "v1.3", true}}, true},
		{"dotted version", "Install 1.2.3 first", "Install 1.2.4 first",
			[]run{{"1.2.3 first", "1.2.4 first", true}}, true},
		{"iso date", "Released on 2026-01-04 to all users", "Released on 2026-02-04 to all users",
			[]run{{"2026-01-04 to", "2026-02-04 to", true}}, true},
		{"written date", "Support ends 4 January 2026.", "Support ends 4 March 2026.",
			[]run{{"January", "March", true}}, true},
		{"month abbreviation beside a number", "Due 4 Jan 2026", "Due 4 Feb 2026",
			[]run{{"Jan", "Feb", true}}, true},
		// A weekday is a date: a changed maintenance day is a changed fact.
		{"weekday", "Backups run every Tuesday night.", "Backups run every Thursday night.",
			[]run{{"Tuesday", "Thursday", true}}, true},
		{"unit", "Heat the probe to 30 °C first.", "Heat the probe to 30 °F first.",
			[]run{{"30 °C", "30 °F", true}}, true},
		{"unit word", "Wait 30 seconds.", "Wait 30 minutes.",
			[]run{{"seconds", "minutes", true}}, true},
		{"percent", "Alert above 80% disk use", "Alert above 90% disk use",
			[]run{{"80% disk", "90% disk", true}}, true},
		{"thousands", "Up to 2,500 queues", "Up to 3,500 queues",
			[]run{{"2,500 queues", "3,500 queues", true}}, true},
		{"time", "Starts at 10:30 UTC", "Starts at 11:30 UTC",
			[]run{{"10:30 UTC", "11:30 UTC", true}}, true},
		{"number word", "Keep three replicas", "Keep five replicas",
			[]run{{"three", "five", true}}, true},
		{"size", "Needs 4 GB of memory", "Needs 4 MB of memory",
			[]run{{"4 GB", "4 MB", true}}, true},
		{"wording", "Click the button to save your work.", "Select the button to save your work.",
			[]run{{"Click", "Select", false}}, false},
		{"may is a verb", "You may restart the broker.", "You can restart the broker.",
			[]run{{"may", "can", false}}, false},
		{"letter is no unit without a number", "Pass the -f flag", "Pass the -c flag",
			[]run{{"the -f", "the -c", false}}, false},
		{"inserted word", "The service is available", "The service is not available",
			[]run{{"available", "not available", false}}, false},
		{"deleted at the end", "Restart the broker now", "Restart the broker",
			[]run{{"broker now", "broker", false}}, false},
		{"several runs, one a fact", "Click Save and wait 5 minutes for the sync.", "Press Save and wait 15 minutes for the sync.",
			[]run{{"Click", "Press", false}, {"5 minutes", "15 minutes", true}}, true},
		{"case and punctuation only", "Hello, World!", "hello world", nil, false},
		{"identical", "same text", "same text", nil, false},
		{"both empty", "", "", nil, false},
		{"one empty", "", "Some words", []run{{"", "Some words", false}}, false},
		{"no shared word", "alpha beta", "gamma 7", []run{{"alpha beta", "gamma 7", true}}, true},
		{"white space collapsed", "wait 5\n  minutes", "wait 6 minutes", []run{{"5 minutes", "6 minutes", true}}, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			diffs, ok := Divergent(tt.a, tt.b)
			var got []run
			for _, d := range diffs {
				got = append(got, run{d.A, d.B, d.Fact})
			}
			if !reflect.DeepEqual(got, tt.want) || ok != tt.ok {
				t.Errorf("Divergent = %+v, %v; want %+v, %v", got, ok, tt.want, tt.ok)
			}
		})
	}
}

// Each difference comes with the sentence around it in each text: from
// the end of the sentence or line before to the end of its own, cut with
// "…" far from the run.
func TestDivergentSentences(t *testing.T) {
	long := strings.Repeat("word ", 60)
	tests := []struct {
		name, a, b string
		sa, sb     string
	}{
		{"middle sentence", "Dock 4 opens early. Keys rotate every 30 days at the depot. Ask the desk.",
			"Dock 4 opens early. Keys rotate every 90 days at the depot. Ask the desk.",
			"Keys rotate every 30 days at the depot.", "Keys rotate every 90 days at the depot."},
		{"line break ends a sentence", "| Vennholm | 6 doors |\n| Saltmere | 4 doors |",
			"| Vennholm | 6 doors |\n| Saltmere | 5 doors |",
			"| Saltmere | 4 doors |", "| Saltmere | 5 doors |"},
		{"version dots do not end it", "Requires v1.2 or later. Then restart.", "Requires v1.3 or later. Then restart.",
			"Requires v1.2 or later.", "Requires v1.3 or later."},
		{"long sentence is cut", long + "wait 5 minutes " + long + "end.", long + "wait 6 minutes " + long + "end.",
			"", ""},
		{"deleted word", "The gate is not open on Sunday. Call ahead.", "The gate is open on Sunday. Call ahead.",
			"The gate is not open on Sunday.", "The gate is open on Sunday."},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			diffs, _ := Divergent(tt.a, tt.b)
			if len(diffs) != 1 {
				t.Fatalf("differences %+v, want one", diffs)
			}
			d := diffs[0]
			if tt.sa == "" { // cut: the run and the marks are there, within bounds
				for _, s := range []string{d.SentenceA, d.SentenceB} {
					if !strings.HasPrefix(s, "… ") || !strings.HasSuffix(s, " …") || len(s) > 2*maxAround+40 {
						t.Errorf("sentence %q not cut on both sides", s)
					}
				}
				if !strings.Contains(d.SentenceA, "wait 5 minutes") || !strings.Contains(d.SentenceB, "wait 6 minutes") {
					t.Errorf("sentences %q, %q lack the runs", d.SentenceA, d.SentenceB)
				}
				return
			}
			if d.SentenceA != tt.sa || d.SentenceB != tt.sb {
				t.Errorf("sentences %q, %q; want %q, %q", d.SentenceA, d.SentenceB, tt.sa, tt.sb)
			}
		})
	}
}

// TestDivergentLong checks that texts too far apart for a full diff still
// give one run between their common start and end.
func TestDivergentLong(t *testing.T) {
	var a, b []string
	for i := range 3000 {
		a = append(a, "a"+strings.Repeat("x", i%7))
		b = append(b, "b"+strings.Repeat("y", i%5))
	}
	got, ok := Divergent("start "+strings.Join(a, " ")+" end", "start "+strings.Join(b, " ")+" end")
	if len(got) != 1 || ok {
		t.Fatalf("got %d differences, ok %v; want one run, false", len(got), ok)
	}
	if !strings.HasPrefix(got[0].A, "a ax") || !strings.HasSuffix(got[0].B, "byyy byyyy") {
		t.Errorf("run = %.20q ... %q", got[0].A, got[0].B[len(got[0].B)-20:])
	}
}

func TestWords(t *testing.T) {
	tests := []struct {
		in   string
		want []string
	}{
		{"Hello, World!", []string{"hello", "world"}},
		{"v1.2.3 and 2026-01-04 at 10:30 for 2,500 users.", []string{"v1.2.3", "and", "2026-01-04", "at", "10:30", "for", "2,500", "users"}},
		{"end. Next -flag --x a-b", []string{"end", "next", "flag", "x", "a-b"}},
		{"ÉCOLE Straße İ", []string{"école", "straße", "i"}},
		{"東京 tokyo", []string{"東", "京", "tokyo"}},
		{"नमस्ते दुनिया", []string{"नमस्ते", "दुनिया"}},
		{"1.", []string{"1"}},
		{"a.,b", []string{"a", "b"}},
		{"\xff bad \xfe", []string{"bad"}},
		{"", nil},
	}
	for _, tt := range tests {
		t.Run(tt.in, func(t *testing.T) {
			if got := words(tt.in); !reflect.DeepEqual(got, tt.want) {
				t.Errorf("words(%q) = %q, want %q", tt.in, got, tt.want)
			}
		})
	}
}

// FuzzDivergent checks Divergent's invariants: every difference really
// differs, each side's words are a run of that text's words, the result is
// the same with the texts swapped (A and B swapped too), ok says whether any
// difference carries a fact, and equal normalised texts give none.
func FuzzDivergent(f *testing.F) {
	for _, s := range [][2]string{
		{"Keys rotate every 30 days.", "Keys rotate every 90 days."},
		{"Requires v1.2 or later.", "Requires v1.3 or later."},
		{"The service is available", "The service is not available"},
		{"x y x", "x"},
		{"a b a b", "b a b a"},
		{"東京 tokyo", "京東 tokyo"},
		{"", "word"},
		{"Heat to 30 °C", "Heat to 30 °F"},
		{"$5 fee", "€5 fee"},
	} {
		f.Add(s[0], s[1])
	}
	f.Fuzz(func(t *testing.T, a, b string) {
		if len(a)+len(b) > 4096 {
			return // long inputs find nothing new and make minimising slow
		}
		diffs, ok := Divergent(a, b)
		back, okBack := Divergent(b, a)
		if ok != okBack || len(diffs) != len(back) {
			t.Fatalf("not symmetric: %+v, %v against %+v, %v", diffs, ok, back, okBack)
		}
		wa, wb := words(a), words(b)
		if slices.Equal(wa, wb) && len(diffs) != 0 {
			t.Fatalf("equal words, differences %+v", diffs)
		}
		if !slices.Equal(wa, wb) && len(diffs) == 0 {
			t.Fatalf("different words, no difference")
		}
		anyFact := false
		for i, d := range diffs {
			if back[i] != (Difference{A: d.B, B: d.A, Fact: d.Fact, SentenceA: d.SentenceB, SentenceB: d.SentenceA}) {
				t.Fatalf("difference %d: %+v, swapped %+v", i, d, back[i])
			}
			da, db := words(d.A), words(d.B)
			if slices.Equal(da, db) {
				t.Fatalf("difference %d does not differ: %+v", i, d)
			}
			if !isRun(da, wa) || !isRun(db, wb) {
				t.Fatalf("difference %d: %+v not runs of %q and %q", i, d, wa, wb)
			}
			if sa, sb := words(d.SentenceA), words(d.SentenceB); !isRun(da, sa) || !isRun(db, sb) || !isRun(sa, wa) || !isRun(sb, wb) {
				t.Fatalf("difference %d: %+v: runs not within their sentences, or sentences not within the texts", i, d)
			}
			anyFact = anyFact || d.Fact
		}
		if ok != anyFact {
			t.Fatalf("ok %v, but facts in differences: %v", ok, anyFact)
		}
	})
}

// isRun reports whether sub is a contiguous run of ws.
func isRun(sub, ws []string) bool {
	if len(sub) == 0 {
		return true
	}
	for i := 0; i+len(sub) <= len(ws); i++ {
		if slices.Equal(ws[i:i+len(sub)], sub) {
			return true
		}
	}
	return false
}
