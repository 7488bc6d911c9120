package dedupe

import (
	"encoding/json"
	"fmt"
	"math"
	"testing"
)

// TestCatchProbability checks the S-curve against Leskovec, Rajaraman and
// Ullman, Mining of Massive Datasets, section 3.4.2, Fig. 3.8 (Example 3.11):
// b = 20 bands of r = 5 rows. The book prints 0.047 at s = 0.3 and 0.9996 at
// s = 0.8; the six-decimal values here are recomputed from 1-(1-s^r)^b.
func TestCatchProbability(t *testing.T) {
	tests := []struct {
		s    float64
		b, r int
		want float64
	}{
		{0.2, 20, 5, 0.006381}, // book: .006
		{0.3, 20, 5, 0.047494}, // book: .047
		{0.4, 20, 5, 0.186050}, // book: .186
		{0.5, 20, 5, 0.470051}, // book: .470
		{0.6, 20, 5, 0.801902}, // book: .802
		{0.7, 20, 5, 0.974781}, // book: .975
		{0.8, 20, 5, 0.999644}, // book: .9996
		{0, 20, 5, 0},
		{1, 20, 5, 1},
	}
	for _, tt := range tests {
		t.Run(fmt.Sprintf("s=%v,b=%d,r=%d", tt.s, tt.b, tt.r), func(t *testing.T) {
			got := CatchProbability(tt.s, tt.b, tt.r)
			if math.Abs(got-tt.want) > 5e-7 {
				t.Errorf("CatchProbability = %.6f, want %.6f", got, tt.want)
			}
		})
	}
}

// TestBands pins the banding of the defaults and checks the rule for other
// sizes: r is the largest row count that still catches pairs at the
// threshold with probability 0.99.
func TestBands(t *testing.T) {
	b, r := Bands(128, 0.8)
	t.Logf("Bands(128, 0.8) = %d bands x %d rows; catch at 0.8 = %.6f, at 0.65 = %.6f, at 0.5 = %.6f",
		b, r, CatchProbability(0.8, b, r), CatchProbability(0.65, b, r), CatchProbability(0.5, b, r))
	if b != 21 || r != 6 {
		t.Fatalf("Bands(128, 0.8) = %d, %d, want 21, 6", b, r)
	}
	// Pinned from the formula above (computed here, not from a source).
	for _, p := range []struct{ s, want float64 }{{0.8, 0.998312}, {0.5, 0.281590}} {
		if got := CatchProbability(p.s, b, r); math.Abs(got-p.want) > 5e-7 {
			t.Errorf("CatchProbability(%v, 21, 6) = %.6f, want %.6f", p.s, got, p.want)
		}
	}
	tests := []struct {
		hashes    int
		threshold float64
	}{
		{128, 0.5}, {128, 0.7}, {128, 0.8}, {128, 0.9}, {128, 0.95}, {64, 0.8}, {256, 0.8}, {16, 0.3}, {128, 1},
	}
	for _, tt := range tests {
		t.Run(fmt.Sprintf("%d/%v", tt.hashes, tt.threshold), func(t *testing.T) {
			b, r := Bands(tt.hashes, tt.threshold)
			if b*r > tt.hashes || b != tt.hashes/r {
				t.Fatalf("Bands = %d x %d, not hashes/r bands", b, r)
			}
			if p := CatchProbability(tt.threshold, b, r); p < minCatch && r > 1 {
				t.Errorf("catch at threshold %.4f < %v", p, minCatch)
			}
			for r2 := r + 1; r2 <= tt.hashes; r2++ {
				if p := CatchProbability(tt.threshold, tt.hashes/r2, r2); p >= minCatch {
					t.Errorf("r = %d, but r = %d also catches %.4f", r, r2, p)
				}
			}
		})
	}
}

func TestOptionsErrors(t *testing.T) {
	tests := []struct {
		name string
		opts Options
		n    int
		want string
	}{
		{"hashes", Options{Hashes: -1}, 1, "dedupe: hashes -1 out of range 1..65536"},
		{"shingle", Options{Shingle: -2}, 1, "dedupe: shingle -2 must be at least 1"},
		{"threshold", Options{Threshold: 1.5}, 1, "dedupe: threshold 1.5 out of range (0, 1]"},
		{"nan", Options{Threshold: math.NaN()}, 1, "dedupe: threshold NaN out of range (0, 1]"},
		{"min shingles", Options{MinShingles: -1}, 1, "dedupe: min shingles -1 must be at least 1"},
		{"max bucket", Options{MaxBucket: 1}, 1, "dedupe: max bucket 1 must be at least 2"},
		{"workers", Options{Workers: -1}, 1, "dedupe: workers -1 must be at least 1"},
		{"set memory", Options{SetMemory: -1}, 1, "dedupe: set memory -1 must be positive"},
		{"n", Options{}, -1, "dedupe: -1 passages out of range 0..2147483647"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Find(tt.n, func(int) string { return "" }, tt.opts)
			if err == nil || err.Error() != tt.want {
				t.Errorf("Find error = %v, want %q", err, tt.want)
			}
		})
	}
}

// A manifest records the options in snake_case, as every other setting.
func TestOptionsJSON(t *testing.T) {
	data, err := json.Marshal(DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	want := `{"hashes":128,"shingle":5,"threshold":0.8,"min_shingles":8,"max_bucket":64,"set_memory":268435456}`
	if string(data) != want {
		t.Errorf("got  %s\nwant %s", data, want)
	}
}
