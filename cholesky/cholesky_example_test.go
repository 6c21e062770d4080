package cholesky_test

import (
	"context"
	"fmt"
	"log"
	"math/rand/v2"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

func ExampleNew() {
	// 2000 points in the unit square, Matérn 3/2 with length scale 0.1.
	rng := rand.New(rand.NewPCG(1, 1))
	points := make([]float64, 2*2000)
	for i := range points {
		points[i] = rng.Float64()
	}
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1, Nugget: 1e-6}
	f, err := cholesky.New(context.Background(), points, 2, k, &cholesky.Settings{Neighbors: 20})
	if err != nil {
		log.Fatal(err)
	}
	// Θ̃⁻¹ b for a right-hand side in the points' own order, and log det Θ̃.
	b := make([]float64, f.N())
	b[0] = 1
	x := f.SolveTo(nil, b)
	// Applying Θ̃ to the solution gives b back: the factor's operations are consistent.
	back := f.MulCovTo(nil, x)
	fmt.Printf("N = %d, nonzeros per column %.0f\n", f.N(), float64(f.NNZ())/float64(f.N()))
	fmt.Printf("log det = %.1f, Θ̃(Θ̃⁻¹b)₀ = %.6f\n", f.LogDet(), back[0])
	// Output:
	// N = 2000, nonzeros per column 39
	// log det = -8699.2, Θ̃(Θ̃⁻¹b)₀ = 1.000000
}
