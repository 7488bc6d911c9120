package store

import (
	"context"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// benchBundle returns the bundle to move: $KBC_BENCH_BUNDLE when set (e.g.
// one built from a real corpus with kbc build), else a generated one.
func benchBundle(b *testing.B) (string, int64) {
	dir := os.Getenv("KBC_BENCH_BUNDLE")
	if dir == "" {
		dir, _ = mkBundle(b, 11, 2000)
	}
	var size int64
	filepath.Walk(dir, func(_ string, fi os.FileInfo, err error) error {
		if err == nil && !fi.IsDir() {
			size += fi.Size()
		}
		return err
	})
	return dir, size
}

func benchStores(b *testing.B) []struct {
	name string
	loc  func(testing.TB) string
} {
	out := slices.Clone(kinds[:1])
	if os.Getenv("KBC_TEST_S3_ENDPOINT") != "" {
		out = append(out, kinds[2])
	}
	if os.Getenv("KBC_TEST_OCI") != "" {
		out = append(out, kinds[3])
	}
	return out
}

// BenchmarkPublish publishes a bundle to a fresh store each time: every
// object is uploaded.
func BenchmarkPublish(b *testing.B) {
	dir, size := benchBundle(b)
	ctx := context.Background()
	for _, k := range benchStores(b) {
		b.Run(k.name, func(b *testing.B) {
			b.SetBytes(size)
			for b.Loop() {
				b.StopTimer()
				s := mustOpen(b, k.loc(b))
				b.StartTimer()
				if _, err := s.Publish(ctx, dir, PublishOptions{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkPull pulls and verifies a bundle into a fresh folder each time.
func BenchmarkPull(b *testing.B) {
	dir, size := benchBundle(b)
	ctx := context.Background()
	for _, k := range benchStores(b) {
		b.Run(k.name, func(b *testing.B) {
			s := mustOpen(b, k.loc(b))
			if _, err := s.Publish(ctx, dir, PublishOptions{}); err != nil {
				b.Fatal(err)
			}
			b.SetBytes(size)
			for b.Loop() {
				b.StopTimer()
				out := filepath.Join(b.TempDir(), "serve")
				b.StartTimer()
				if _, err := s.Pull(ctx, out, Ref{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
