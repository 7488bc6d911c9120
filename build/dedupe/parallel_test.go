package dedupe

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSortEntries: the radix partition gives the same order as a plain
// comparison sort, at sizes around its threshold, with repeated keys and
// with keys crowded into one partition (high bits all zero).
func TestSortEntries(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{0, 1, 2, radixMin - 1, radixMin, 1000, 20000, 70000} {
		for _, shape := range []string{"uniform", "repeats", "crowded"} {
			e := make([]entry, n)
			for i := range e {
				k := r.Uint64()
				switch shape {
				case "repeats":
					k = uint64(r.IntN(max(n/4, 1))) << 40
				case "crowded":
					k >>= 20
				}
				e[i] = entry{key: k, id: uint32(r.IntN(1 << 20))}
			}
			want := slices.Clone(e)
			slices.SortFunc(want, cmpEntry)
			got := sortEntries(e, make([]entry, n))
			if !slices.Equal(got, want) {
				t.Errorf("%d %s entries: sorted differently", n, shape)
			}
		}
	}
}
