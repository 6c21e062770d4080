package ordering

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/kchol/kchol/kernels"
)

// BenchmarkGreedy times the greedy selection against the nearest-neighbour pattern it starts
// from (the baseline: c = m, which is the same pattern, costs the search and the same
// arithmetic with every candidate picked; the plain NearestNeighbors is the search alone).
// Uniform points in the unit square in reverse maximin positions, Matérn 3/2, ℓ = 0.05.
func BenchmarkGreedy(b *testing.B) {
	for _, n := range []int{10_000, 100_000} {
		rng := rand.New(rand.NewPCG(1, 1))
		raw := make([]float64, 2*n)
		for i := range raw {
			raw[i] = rng.Float64()
		}
		x := greedyPositionOrder(raw, 2)
		k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.05}
		for _, m := range []int{10, 20, 30} {
			// Correctness before timing: c = m reproduces the nearest-neighbour pattern.
			nn := NearestNeighbors(x, 2, m)
			if g := Greedy(x, 2, k, m, m); !slices.Equal(g.Rows, nn.Rows) {
				b.Fatal("Greedy with c = m differs from NearestNeighbors")
			}
			b.Run(fmt.Sprintf("n=%d/m=%d/pattern=neighbors", n, m), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					NearestNeighbors(x, 2, m)
				}
			})
			b.Run(fmt.Sprintf("n=%d/m=%d/pattern=greedy/c=%d", n, m, 4*m), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					Greedy(x, 2, k, m, 0)
				}
			})
		}
	}
}

// BenchmarkGreedyColumn times one column's selection on one goroutine (n = 10⁵ uniform points,
// Matérn 3/2, ℓ = 0.05), cycling over the columns.
func BenchmarkGreedyColumn(b *testing.B) {
	const n = 100_000
	rng := rand.New(rand.NewPCG(1, 1))
	raw := make([]float64, 2*n)
	for i := range raw {
		raw[i] = rng.Float64()
	}
	x := greedyPositionOrder(raw, 2)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.05}
	trees := newSuffixTrees(searchFlat, x, 2, n, 1, nil)
	for _, m := range []int{10, 20, 30} {
		b.Run(fmt.Sprintf("n=%d/m=%d/c=%d", n, m, 4*m), func(b *testing.B) {
			sel := greedySelector{points: x, d: 2, n: n, kernel: k, m: m, c: 4 * m, trees: trees, prior: priorVariances(x, k, n, m)}
			var w greedyWork
			var dst []int32
			j := 0
			b.ReportAllocs()
			for b.Loop() {
				dst, _ = sel.column(dst[:0], j, &w)
				j = (j + 7919) % n
			}
		})
	}
}
