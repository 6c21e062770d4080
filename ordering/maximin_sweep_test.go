package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// The sweeps must leave the ordering exactly the serial tournament's. The reference here is
// maximinHeapSearch (the kyroy searcher's path: an index-tracked heap and one radius query per
// pick, no sweeps), itself checked against the O(N²) definition in
// TestReverseMaximinAgainstBruteForce; these sets are too large for that. Uniform, clustered,
// lattice (exact ties, also on region and box faces) and copied points (zero distances), in
// 1–3 dimensions, with and without a boundary, on 1 and 2 workers (2: sweeps of the two
// regions in parallel, and points whose ball leaves its region). The test also asserts that
// the sweeps did the bulk of the picking, so that it cannot pass by never sweeping.
func TestSweepsAgainstHeapSearch(t *testing.T) {
	n := 20000
	if testing.Short() {
		n = 6000
	}
	var rounds, swept, border, rest int
	sweepStats = func(r, s, b, x int) { rounds, swept, border, rest = r, s, b, x }
	defer func() { sweepStats = nil }()
	for _, d := range []int{1, 2, 3} {
		rng := rand.New(rand.NewPCG(7, 7))
		sets := testPointSets(n, d)
		sets = append(sets, copiesPointSet(rng, n, d))
		for _, set := range sets {
			for _, boundary := range [][]float64{nil, facePoints(rng, 10*d, d)} {
				want := Settings{Workers: 1, search: searchKyroy}.ReverseMaximin(set.points, d, boundary)
				for _, workers := range []int{1, 2} {
					name := fmt.Sprintf("d=%d/set=%s/boundary=%v/workers=%d", d, set.name, boundary != nil, workers)
					rounds, swept, border, rest = 0, 0, 0, 0
					got := Settings{Workers: workers}.ReverseMaximin(set.points, d, boundary)
					if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
						t.Errorf("%s: differs from the heap search\n got %v\nwant %v", name, head(got.Order), head(want.Order))
					}
					// The tournament hands over after a quarter of the picks (on 2 workers: once
					// the first region has picked a quarter of its points); the sweeps must
					// then pick most of the rest.
					if rounds < 1 || swept < n/2 {
						t.Errorf("%s: the sweeps picked %d of %d points in %d rounds (the tournament %d after them)", name, swept, n, rounds, rest)
					}
					if workers == 2 && border == 0 {
						t.Errorf("%s: no swept point left its region", name)
					}
				}
			}
		}
	}
}

// sortPicks must order as the serial tournament picks (tournamentBest.before, a total order on
// picks with distinct indices), checked against slices.SortFunc with that comparison: many
// ties in distance, zeros, indices above 2²⁴ (all four index bytes), and sets whose keys share
// bytes (passes skipped).
func TestSortPicks(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	for _, n := range []int{0, 1, 2, 3, 100, 5000} {
		for _, kind := range []string{"few distances", "spread", "one distance", "zeros"} {
			picks := make([]tournamentBest, n)
			perm := rng.Perm(n)
			for k := range picks {
				var v float64
				switch kind {
				case "few distances":
					v = float64(rng.IntN(4)) * 0.25
				case "spread":
					v = math.Ldexp(rng.Float64(), -rng.IntN(60))
				case "one distance":
					v = 0.3
				}
				// Distinct indices up to 8·10⁷ > 2²⁴ (n = 5000).
				picks[k] = tournamentBest{dist: v, slot: int32(k), index: int32(perm[k] * 16411)}
			}
			want := slices.Clone(picks)
			slices.SortFunc(want, func(a, b tournamentBest) int {
				if a.before(b) {
					return -1
				}
				if b.before(a) {
					return 1
				}
				return 0
			})
			sortPicks(picks)
			if !slices.Equal(picks, want) {
				t.Errorf("n=%d/%s: sortPicks differs from slices.SortFunc", n, kind)
			}
		}
	}
}

// Awkward point sets for the sweeps' check and their regions, against the same reference as
// above: all points identical, two points repeated, points on a line, 1000 exponentially spaced
// columns (distances from 1 down to 2⁻⁹⁹⁹), coordinates of 10¹⁵⁰ and 10⁻¹⁵⁰ together, and a
// lattice; on 1, 2 and 3 workers.
func TestSweepsOnAwkwardPoints(t *testing.T) {
	n := 5000
	if testing.Short() {
		n = 2000
	}
	rng := rand.New(rand.NewPCG(9, 9))
	identical, two, line, spaced := make([]float64, 2*n), make([]float64, 2*n), make([]float64, 2*n), make([]float64, 2*n)
	for i := range n {
		identical[2*i], identical[2*i+1] = 0.5, 0.5
		two[2*i] = float64(i % 2)
		u := rng.Float64()
		line[2*i], line[2*i+1] = u, 2*u
		spaced[2*i], spaced[2*i+1] = math.Ldexp(1, -(i%1000)), float64(i/1000)
	}
	scales := uniformPoints(rng, n, 2)
	for i := range scales {
		if i < n {
			scales[i] *= 1e150
		} else {
			scales[i] *= 1e-150
		}
	}
	sets := []pointSet{{"identical", 2, identical}, {"two points", 2, two}, {"line", 2, line}, {"spaced", 2, spaced}, {"scales", 2, scales}, {"lattice", 2, latticePoints(n, 2)}}
	withParallelMaximinFrom(0, func() {
		for _, set := range sets {
			want := Settings{Workers: 1, search: searchKyroy}.ReverseMaximin(set.points, 2, nil)
			for _, workers := range []int{1, 2, 3} {
				got := Settings{Workers: workers}.ReverseMaximin(set.points, 2, nil)
				if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
					t.Errorf("%s/workers=%d: differs from the heap search\n got %v\nwant %v", set.name, workers, head(got.Order), head(want.Order))
				}
			}
		}
	})
}
