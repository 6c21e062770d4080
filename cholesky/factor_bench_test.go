package cholesky

import (
	"context"
	"fmt"
	"math"
	"testing"

	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// BenchmarkFactor times aggregation and the factor phase (ordering and pattern built before
// the timer), 2D uniform points, Matérn 3/2, for ρ = 3 and m = 30, default λ. For 10⁶ points
// use kchol timing -n 1000000.
func BenchmarkFactor(b *testing.B) {
	for _, n := range []int{1e4, 1e5} {
		for _, set := range []Settings{{Rho: 3}, {Neighbors: 30}} {
			b.Run(fmt.Sprintf("n=%.0e/rho=%g/m=%d", float64(n), set.Rho, set.Neighbors), func(b *testing.B) {
				points := uniformPoints(n, 2, 1)
				k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.05}
				ord := ordering.ReverseMaximin(points, 2, nil)
				permuted := make([]float64, len(points))
				for p, i := range ord.Order {
					copy(permuted[2*p:2*p+2], points[2*i:2*i+2])
				}
				var pat *ordering.Pattern
				if set.Rho > 0 {
					pat = ordering.Radius(permuted, 2, ord.LengthScale, set.Rho)
				} else {
					pat = ordering.NearestNeighbors(permuted, 2, set.Neighbors)
				}
				f, err := NewFromPattern(context.Background(), points, 2, k, ord, pat, nil)
				if err != nil || math.IsNaN(f.LogDet()) {
					b.Fatalf("factor: %v, log det %v", err, f.LogDet())
				}
				flops := f.Flops() // supernodal, with the default λ
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					if _, err := NewFromPattern(context.Background(), points, 2, k, ord, pat, nil); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(f.NNZ())/float64(n), "nnz/col")
				b.ReportMetric(flops*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
			})
		}
	}
}

// BenchmarkNew times the whole pipeline (ordering, pattern, factor).
func BenchmarkNew(b *testing.B) {
	for _, n := range []int{1e4, 1e5} {
		for _, set := range []Settings{{Rho: 3}, {Neighbors: 30}} {
			b.Run(fmt.Sprintf("n=%.0e/rho=%g/m=%d", float64(n), set.Rho, set.Neighbors), func(b *testing.B) {
				points := uniformPoints(n, 2, 1)
				k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.05}
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					s := set
					f, err := New(context.Background(), points, 2, k, &s)
					if err != nil || math.IsNaN(f.LogDet()) {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
