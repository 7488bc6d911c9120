package synth

import (
	"testing"
)

func TestCorpus(t *testing.T) {
	cfg := Config{N: 20000, Light: 0.02, Heavy: 0.02, Block: 0.01, ExactGroups: 3, ExactSize: 50, Seed: 7}
	c, d := New(cfg), New(cfg)
	t.Run("deterministic", func(t *testing.T) {
		for i := 0; i < c.N(); i += 997 {
			first := c.Text(i)
			if again := c.Text(i); first != again || first != d.Text(i) {
				t.Fatalf("passage %d differs between calls", i)
			}
		}
	})
	t.Run("injected", func(t *testing.T) {
		count := map[Kind]int{}
		for _, in := range c.Injected() {
			count[in.Kind]++
			if c.Kind(in.Src) != Original {
				t.Errorf("copy %d has a source %d that is a copy itself", in.Copy, in.Src)
			}
			if in.Kind == Exact && c.Text(in.Src) != c.Text(in.Copy) {
				t.Errorf("exact copy %d differs from %d", in.Copy, in.Src)
			}
		}
		want := map[Kind]int{Light: 400, Heavy: 400, Block: 200, Exact: 3 * 49}
		for k, n := range want {
			if count[k] != n {
				t.Errorf("%v copies = %d, want %d", k, count[k], n)
			}
		}
	})
	// The most frequent word of a Zipf(1) distribution over 200000 ranks has
	// probability 1/H(200000), H the harmonic number: 1/12.78 = 0.078.
	t.Run("zipf", func(t *testing.T) {
		rng := seeded(1, 0, 9)
		const draws = 1 << 20
		top := 0
		for range draws {
			if c.word(&rng) == 0 {
				top++
			}
		}
		if got := float64(top) / draws; got < 0.076 || got > 0.080 {
			t.Errorf("rank 0 frequency %.4f, want 0.078", got)
		}
	})
}

func BenchmarkText(b *testing.B) {
	c := New(Config{N: 100000, Light: .025, Heavy: .025, Seed: 1})
	n := 0
	for i := 0; b.Loop(); i++ {
		n += len(c.Text(i % c.N()))
	}
	b.SetBytes(int64(n / b.N))
}
