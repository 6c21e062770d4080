package ordering_test

import (
	"fmt"

	"github.com/kchol/kchol/ordering"
)

// Five points on a line. The centroid is 2, so point 2 is picked first (ℓ = +Inf); 0 and 4
// follow at distance 2, then 1 and 3 at distance 1. Positions run fine to coarse.
func ExampleReverseMaximin() {
	points := []float64{0, 1, 2, 3, 4}
	o := ordering.ReverseMaximin(points, 1, nil)
	fmt.Println("order:       ", o.Order)
	fmt.Println("length scale:", o.LengthScale)
	// Output:
	// order:        [3 1 4 0 2]
	// length scale: [1 1 2 2 +Inf]
}

// The patterns take the points in position order. With ρ = 1 a column keeps the coarser
// points within one length scale; the nearest-neighbour pattern keeps the m nearest. Worked by
// hand: position 2 (x=4, ℓ=2) reaches x=2 at distance 2 but not x=0 at distance 4, while its
// two nearest coarser points are the only two there are.
func ExampleRadius() {
	points := []float64{0, 1, 2, 3, 4}
	o := ordering.ReverseMaximin(points, 1, nil)
	positioned := make([]float64, len(o.Order))
	for p, i := range o.Order {
		positioned[p] = points[i]
	}
	radius := ordering.Radius(positioned, 1, o.LengthScale, 1)
	nearest := ordering.NearestNeighbors(positioned, 1, 2)
	for j := range radius.N() {
		fmt.Printf("column %d at x=%g: radius rows %v, nearest rows %v\n", j, positioned[j], radius.Col(j), nearest.Col(j))
	}
	// Output:
	// column 0 at x=3: radius rows [0 2 4], nearest rows [0 2 4]
	// column 1 at x=1: radius rows [1 3 4], nearest rows [1 3 4]
	// column 2 at x=4: radius rows [2 4], nearest rows [2 3 4]
	// column 3 at x=0: radius rows [3 4], nearest rows [3 4]
	// column 4 at x=2: radius rows [4], nearest rows [4]
}
