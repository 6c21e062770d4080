package kernels_test

import (
	"fmt"

	"github.com/kchol/kchol/kernels"
)

func ExampleStationary() {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.5, Nugget: 1e-6}
	x := []float64{0, 0, 0.3, 0.4} // two points, 0.5 apart
	block := make([]float64, 4)
	kernels.FillBlock(k, block, 2, x, []int32{0, 1}, []int32{0, 1})
	fmt.Printf("%.6f %.6f\n%.6f %.6f\n", block[0], block[1], block[2], block[3])
	// Output:
	// 1.000001 0.483358
	// 0.483358 1.000001
}
