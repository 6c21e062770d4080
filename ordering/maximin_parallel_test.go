package ordering

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"
)

// withParallelMaximinFrom runs f with the parallel tournament used from n points on.
func withParallelMaximinFrom(n int, f func()) {
	old := parallelMaximinFrom
	parallelMaximinFrom = n
	defer func() { parallelMaximinFrom = old }()
	f()
}

// The parallel tournament must give exactly the serial ordering; here against the O(N²)
// definition (bruteReverseMaximin) on uniform, clustered and lattice points (the lattice has
// exact distance ties, so the tie rule across regions is exercised), with and without a
// boundary, and exact duplicates.
func TestParallelReverseMaximinAgainstBruteForce(t *testing.T) {
	n := 2000
	if testing.Short() {
		n = 500
	}
	withParallelMaximinFrom(0, func() {
		for _, d := range []int{1, 2, 3} {
			rng := rand.New(rand.NewPCG(3, 3))
			sets := testPointSets(n, d)
			sets = append(sets, copiesPointSet(rng, n, d))
			for _, set := range sets {
				for _, boundary := range [][]float64{nil, facePoints(rng, 10*d, d)} {
					want := bruteReverseMaximin(set.points, d, boundary)
					for _, workers := range []int{2, 3, 4, 8} {
						name := fmt.Sprintf("d=%d/set=%s/boundary=%v/workers=%d", d, set.name, boundary != nil, workers)
						got := Settings{Workers: workers}.ReverseMaximin(set.points, d, boundary)
						if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
							t.Errorf("%s: differs from brute force\n got %v\nwant %v", name, head(got.Order), head(want.Order))
						}
					}
				}
			}
		}
	})
}

// On larger sets, where the regions run long stretches independently, the parallel result
// must equal the serial tournament's (itself checked against brute force above): uniform and
// clustered points, a lattice (exact ties across the regions' boundary), and copies of a tenth
// of the points (zero distances).
func TestParallelReverseMaximinMatchesSerial(t *testing.T) {
	n := 100000
	if testing.Short() {
		n = 20000
	}
	rng := rand.New(rand.NewPCG(4, 4))
	for _, d := range []int{2, 3} {
		copies := make([]float64, 0, n*d)
		base := uniformPoints(rng, n/10, d)
		for range n {
			i := rng.IntN(n / 10)
			copies = append(copies, base[i*d:(i+1)*d]...)
		}
		sets := []pointSet{
			{"uniform", d, uniformPoints(rng, n, d)},
			{"clustered", d, clusteredPoints(rng, n, d)},
			{"lattice", d, latticePoints(n, d)},
			{"copies", d, copies},
		}
		for _, set := range sets {
			want := Settings{Workers: 1}.ReverseMaximin(set.points, d, nil)
			for _, workers := range []int{2, 4} {
				var got Ordering
				// Forced, so that the test does not depend on the threshold.
				withParallelMaximinFrom(0, func() { got = Settings{Workers: workers}.ReverseMaximin(set.points, d, nil) })
				if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
					t.Errorf("d=%d/set=%s/workers=%d: parallel ordering differs from serial", d, set.name, workers)
				}
			}
		}
	}
}

// withSchedule runs f with the regions' steps taken one at a time on this goroutine, in an
// order drawn from rng: for stretches of random length some regions are slowed a
// thousandfold, so the others run far ahead of them (the way an operating system may leave a
// worker's thread unscheduled for milliseconds). Drawn orders are reproducible and explore
// interleavings that two cores seldom produce.
func withSchedule(rng *rand.Rand, f func()) {
	old := runMaximinRegions
	runMaximinRegions = func(m *tournament, regions []*maximinRegion) {
		done := make([]bool, len(regions))
		weights := make([]float64, len(regions))
		for live, stretch := len(regions), 0; live > 0; stretch-- {
			if stretch <= 0 {
				stretch = 1 + rng.IntN(500)
				for k := range weights {
					weights[k] = 1
					if rng.IntN(3) == 0 {
						weights[k] = 1e-3
					}
				}
			}
			var total float64
			for k, w := range weights {
				if !done[k] {
					total += w
				}
			}
			u, k := rng.Float64()*total, 0
			for ; k < len(regions)-1; k++ {
				if !done[k] {
					if u -= weights[k]; u < 0 {
						break
					}
				}
			}
			for done[k] { // rounding left u ≥ 0 past the last live region
				k--
			}
			if left, _ := m.step(regions, k); !left {
				done[k] = true
				live--
			}
		}
	}
	defer func() { runMaximinRegions = old }()
	f()
}

// Under schedules that hold regions back while the others run ahead, a region receives picks
// that come after points it has not picked yet; those picks must not lower those points'
// distances (a pick at distance ℓ changes no point ℓ or more away from it). The result must
// still be the serial ordering. The first two sets are 1000 uniform points in the unit square,
// 500 copies of some of them and 20 boundary points, from the two seeds (90 and 220, of 300
// tried) on which unscheduled runs with 8 workers on 2 cores had gone wrong, about once in 600
// runs. Without the distance limit on received picks, 100 of the 400 schedules below failed
// on them; the other sets are for breadth.
func TestParallelReverseMaximinUnderDrawnSchedules(t *testing.T) {
	type scheduledSet struct {
		pointSet
		boundary  []float64
		workers   []int
		schedules int
	}
	var sets []scheduledSet
	for _, seed := range []uint64{90, 220} {
		rng := rand.New(rand.NewPCG(seed, 3))
		p := uniformPoints(rng, 1000, 2)
		for range 500 {
			i := rng.IntN(1000)
			p = append(p, p[2*i:2*i+2]...)
		}
		sets = append(sets, scheduledSet{pointSet{fmt.Sprintf("copies-seed-%d", seed), 2, p}, facePoints(rng, 20, 2), []int{8}, 200})
	}
	rng := rand.New(rand.NewPCG(5, 5))
	for _, d := range []int{1, 2, 3} {
		for _, set := range testPointSets(1000, d) {
			sets = append(sets, scheduledSet{set, facePoints(rng, 10*d, d), []int{4, 8}, 5})
		}
	}
	if testing.Short() {
		for k := range sets {
			sets[k].schedules = max(1, sets[k].schedules/5)
		}
	}
	for _, set := range sets {
		want := Settings{Workers: 1}.ReverseMaximin(set.points, set.d, set.boundary)
		for _, workers := range set.workers {
			fails := 0
			for range set.schedules {
				var got Ordering
				withParallelMaximinFrom(0, func() {
					withSchedule(rng, func() { got = Settings{Workers: workers}.ReverseMaximin(set.points, set.d, set.boundary) })
				})
				if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
					fails++
				}
			}
			if fails > 0 {
				t.Errorf("d=%d/set=%s/workers=%d: %d of %d schedules gave an ordering other than the serial one", set.d, set.name, workers, fails, set.schedules)
			}
		}
	}
}
