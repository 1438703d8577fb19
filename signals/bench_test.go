package signals

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkGower times the nearest-neighbour pass (every pair once) of the
// robust Gower distance on seeded synthetic mixed data with 5% missing values;
// the largest size is the 5,000 subjects × 300 variables target (< 30 s on 2 cores).
func BenchmarkGower(b *testing.B) {
	for _, sz := range []struct{ n, p int }{{500, 50}, {1000, 100}, {5000, 300}} {
		b.Run(fmt.Sprintf("n=%d/p=%d", sz.n, sz.p), func(b *testing.B) {
			m := randomMixed(rand.New(rand.NewPCG(1, 1)), sz.n, sz.p)
			b.ReportAllocs()
			for b.Loop() {
				g, err := NewGower(m, Robust)
				if err != nil {
					b.Fatal(err)
				}
				if _, _, err := g.Nearest(context.Background(), 0); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
