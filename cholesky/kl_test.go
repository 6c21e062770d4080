package cholesky

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

func TestKLNonIncreasingInRhoAndNeighbors(t *testing.T) {
	// Property: S_ρ grows with ρ and the m-nearest sets grow with m, and the KL-optimal factor
	// on a larger pattern minimises KL over a larger set, so KL cannot increase (Schäfer,
	// Katzfuss, Owhadi 2021, §2). KL is computed with the dense Θ (DESIGN.md §4). The values
	// are logged as a table; they are measurements, not assertions. No supernodes (λ = 1):
	// aggregated patterns at different ρ or m need not be nested.
	n := 2000
	if testing.Short() {
		n = 600
	}
	rhos := []float64{1, 1.5, 2, 3, 4, 6, 8}
	ms := []int{5, 10, 20, 30, 50}
	sets := []struct {
		name   string
		d      int
		points []float64
	}{
		{"uniform2d", 2, uniformPoints(n, 2, 31)},
		{"clustered2d", 2, clusteredPoints(n, 2, 32)},
		{"sphere3d", 3, spherePoints(n, 33)},
	}
	var table strings.Builder
	fmt.Fprintf(&table, "\n| points | kernel | pattern | nnz/N | KL | KL/N | rel. err log det | rel. err solve (random b) | rel. err solve (b ~ GP) |\n|---|---|---|---|---|---|---|---|---|\n")
	for _, set := range sets {
		for _, family := range allFamilies {
			lengthScale, nugget := 0.1, 0.0
			if family == kernels.Gaussian {
				nugget = 1e-6 // the dense Gaussian kernel matrix is singular in floating point without it
			}
			name := fmt.Sprintf("%s/n=%d/%v/l=%g/nugget=%g", set.name, n, family, lengthScale, nugget)
			t.Run(name, func(t *testing.T) {
				k := kernels.Stationary{Family: family, Dimension: set.d, LengthScale: lengthScale, Nugget: nugget}
				theta := denseKernelMatrix(k, set.points, set.d)
				chol := denseCholesky(t, theta)
				logDet := chol.LogDet()
				// Right-hand sides: standard normal, and a draw of the GP itself (b = C z
				// with Θ = C Cᵀ), whose solve errors are what a regression user sees.
				rng := rand.New(rand.NewPCG(5, 5))
				random := make([]float64, n)
				z := make([]float64, n)
				for i := range n {
					random[i], z[i] = rng.NormFloat64(), rng.NormFloat64()
				}
				var c mat.TriDense
				chol.LTo(&c)
				var gp mat.VecDense
				gp.MulVec(&c, mat.NewVecDense(n, z))
				exact := func(b []float64) []float64 {
					var x mat.VecDense
					if err := chol.SolveVecTo(&x, mat.NewVecDense(n, b)); err != nil {
						t.Fatal(err)
					}
					return x.RawVector().Data
				}
				exactRandom, exactGP := exact(random), exact(gp.RawVector().Data)
				// tolerance for "non-increasing": rounding in the dense KL formula.
				tolerance := 1e-9 * (math.Abs(logDet) + float64(n))
				check := func(label string, settings []Settings) {
					previous := math.Inf(1)
					for _, s := range settings {
						f, err := New(context.Background(), set.points, set.d, k, &s)
						if err != nil {
							t.Fatal(err)
						}
						kl, _ := klDivergence(f, theta, logDet)
						errLogDet := math.Abs(f.LogDet()-logDet) / math.Abs(logDet)
						errRandom := relativeError(f.SolveTo(nil, random), exactRandom)
						errGP := relativeError(f.SolveTo(nil, gp.RawVector().Data), exactGP)
						pattern := fmt.Sprintf("m=%d", s.Neighbors)
						if s.Rho > 0 {
							pattern = fmt.Sprintf("ρ=%g", s.Rho)
						}
						fmt.Fprintf(&table, "| %s | %v | %s | %.1f | %.4g | %.3g | %.2g | %.2g | %.2g |\n", set.name, family, pattern,
							float64(f.NNZ())/float64(n), kl, kl/float64(n), errLogDet, errRandom, errGP)
						if kl > previous+tolerance {
							t.Errorf("%s %s: KL %.6g exceeds the smaller pattern's %.6g", label, pattern, kl, previous)
						}
						if kl < -tolerance {
							t.Errorf("%s %s: KL %.6g < 0", label, pattern, kl)
						}
						previous = kl
					}
				}
				var byRho, byM []Settings
				for _, r := range rhos {
					byRho = append(byRho, Settings{Rho: r, Lambda: 1})
				}
				for _, m := range ms {
					byM = append(byM, Settings{Neighbors: m, Lambda: 1})
				}
				check("radius", byRho)
				check("neighbours", byM)
			})
		}
	}
	t.Log(table.String())
}
