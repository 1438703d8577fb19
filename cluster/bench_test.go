package cluster

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkHierarchy clusters p variables with uniform random strengths (seeded).
//
//	go test ./cluster -run '^$' -bench . -benchtime 3x
func BenchmarkHierarchy(b *testing.B) {
	for _, p := range []int{100, 300, 1000} {
		in := randomInput(rand.New(rand.NewPCG(1, uint64(p))), p)
		for _, m := range []Method{Average, Single, Complete} {
			b.Run(fmt.Sprintf("p=%d/%v", p, m), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, err := Hierarchy(in, m); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

// BenchmarkCutAuto searches every cut of an average-linkage tree for the best silhouette.
func BenchmarkCutAuto(b *testing.B) {
	for _, p := range []int{100, 300, 1000} {
		in := randomInput(rand.New(rand.NewPCG(1, uint64(p))), p)
		tr, err := Hierarchy(in, Average)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("p=%d", p), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				tr.CutAuto(0)
			}
		})
	}
}
