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
			dup := uniformPoints(rng, n/2, d)
			for range n / 4 {
				i := rng.IntN(n / 2)
				dup = append(dup, dup[i*d:(i+1)*d]...)
			}
			sets = append(sets, pointSet{"copies", d, dup})
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
