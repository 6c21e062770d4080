package cholesky

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

func randomVector(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, seed))
	v := make([]float64, n)
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	return v
}

func TestKernelMatrixMulVecAgainstDense(t *testing.T) {
	// Reference: gonum's mat.SymDense.MulVec on the dense Θ built entry by entry with
	// Kernel.Eval (denseKernelMatrix). The two sums differ only in their order, so they agree
	// to about N·ε relative to Σ|Θᵢⱼ vⱼ| (standard rounding bound for dot products, Higham,
	// Accuracy and Stability of Numerical Algorithms, 2nd ed., §3.1).
	const roundingFactor = 4 // slack on the N·ε bound, our choice
	sizes := []int{1, 2, 3, 63, 64, 65, 511, 512, 513, 1100}
	if testing.Short() {
		sizes = []int{1, 2, 3, 63, 64, 65, 513}
	}
	for _, n := range sizes {
		for _, d := range []int{1, 2, 3} {
			for _, family := range allFamilies {
				nugget := 0.0
				if family == kernels.Matern32 {
					nugget = 0.25
				}
				name := fmt.Sprintf("n=%d/d=%d/%v/nugget=%g", n, d, family, nugget)
				t.Run(name, func(t *testing.T) {
					points := uniformPoints(n, d, 3)
					k := kernels.Stationary{Family: family, Dimension: d, LengthScale: 0.2, Variance: 1.5, Nugget: nugget}
					theta := denseKernelMatrix(k, points, d)
					v := randomVector(n, 5)
					var want mat.VecDense
					want.MulVec(theta, mat.NewVecDense(n, v))
					got, err := NewKernelMatrix(points, d, k).MulVecTo(context.Background(), nil, v, 2)
					if err != nil {
						t.Fatal(err)
					}
					for i := range n {
						var scale float64
						for j := range n {
							scale += math.Abs(theta.At(i, j) * v[j])
						}
						if diff := math.Abs(got[i] - want.AtVec(i)); diff > roundingFactor*float64(n)*0x1p-52*scale {
							t.Fatalf("row %d: got %v, gonum %v (difference %g, scale %g)", i, got[i], want.AtVec(i), diff, scale)
						}
					}
				})
			}
		}
	}
}

func TestKernelMatrixAt(t *testing.T) {
	// Reference: Kernel.Eval plus the nugget on the diagonal (the definition of Θ).
	const n, d = 7, 2
	points := uniformPoints(n, d, 1)
	k := kernels.Stationary{Family: kernels.Matern52, Dimension: d, LengthScale: 0.3, Nugget: 0.1}
	m := NewKernelMatrix(points, d, k)
	if r, c := m.Dims(); r != n || c != n || m.SymmetricDim() != n {
		t.Fatalf("Dims = %d, %d, SymmetricDim %d; want %d", r, c, m.SymmetricDim(), n)
	}
	const tolerance = 1e-15 // FillBlock and Eval compute the same formula, differently scaled
	for i := range n {
		for j := range n {
			want := k.Eval(points[i*d:(i+1)*d], points[j*d:(j+1)*d])
			if i == j {
				want += k.Nugget
			}
			if got := m.At(i, j); math.Abs(got-want) > tolerance {
				t.Errorf("At(%d, %d) = %v, want %v", i, j, got, want)
			}
			if m.At(i, j) != m.T().At(i, j) {
				t.Errorf("T().At(%d, %d) differs", i, j)
			}
		}
	}
}

func TestKernelMatrixWorkerDeterminism(t *testing.T) {
	// Property (the package's concurrency contract): the same bits for any worker count.
	n := 3000
	if testing.Short() {
		n = 1300
	}
	for _, d := range []int{2, 3} {
		t.Run(fmt.Sprintf("n=%d/d=%d", n, d), func(t *testing.T) {
			points := uniformPoints(n, d, 2)
			k := kernels.Stationary{Family: kernels.Matern12, Dimension: d, LengthScale: 0.1}
			m := NewKernelMatrix(points, d, k)
			v := randomVector(n, 9)
			want, err := m.MulVecTo(context.Background(), nil, v, 1)
			if err != nil {
				t.Fatal(err)
			}
			for _, workers := range []int{2, 3, 7} {
				got, err := m.MulVecTo(context.Background(), make([]float64, n), v, workers)
				if err != nil {
					t.Fatal(err)
				}
				if !slices.Equal(got, want) {
					t.Fatalf("workers=%d: result differs from workers=1", workers)
				}
			}
		})
	}
}

func TestKernelMatrixCancelled(t *testing.T) {
	const n, d = 2000, 2
	m := NewKernelMatrix(uniformPoints(n, d, 1), d, kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.1})
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := m.MulVecTo(ctx, nil, make([]float64, n), 2); !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
}

func TestKernelMatrixFromFactor(t *testing.T) {
	// The factor's exact operator is that of its points and kernel in the user's order:
	// checked against denseKernelMatrix of the original points.
	const n, d = 300, 2
	points := uniformPoints(n, d, 4)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.2}
	f, err := New(context.Background(), points, d, k, nil)
	if err != nil {
		t.Fatal(err)
	}
	m := f.KernelMatrix()
	theta := denseKernelMatrix(k, points, d)
	const tolerance = 1e-15 // the same formula evaluated twice
	for i := range n {
		for j := range n {
			if math.Abs(m.At(i, j)-theta.At(i, j)) > tolerance {
				t.Fatalf("At(%d, %d) = %v, dense %v", i, j, m.At(i, j), theta.At(i, j))
			}
		}
	}
}

func TestKernelMatrixPanics(t *testing.T) {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.2}
	m := NewKernelMatrix(uniformPoints(4, 2, 1), 2, k)
	for _, c := range []struct {
		name string
		f    func()
	}{
		{"points not a multiple of d", func() { NewKernelMatrix(make([]float64, 3), 2, k) }},
		{"kernel dimension", func() { NewKernelMatrix(make([]float64, 6), 3, k) }},
		{"short v", func() { m.MulVecTo(context.Background(), nil, make([]float64, 3), 1) }},
		{"short dst", func() { m.MulVecTo(context.Background(), make([]float64, 3), make([]float64, 4), 1) }},
		{"At out of range", func() { m.At(4, 0) }},
	} {
		t.Run(c.name, func(t *testing.T) {
			defer func() {
				if recover() == nil {
					t.Fatal("no panic")
				}
			}()
			c.f()
		})
	}
}

func BenchmarkKernelMatrixMulVec(b *testing.B) {
	for _, n := range []int{1000, 10000} {
		b.Run(fmt.Sprintf("n=%d", n), func(b *testing.B) {
			points := uniformPoints(n, 2, 1)
			k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
			m := NewKernelMatrix(points, 2, k)
			v := randomVector(n, 1)
			dst := make([]float64, n)
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				if _, err := m.MulVecTo(context.Background(), dst, v, 0); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(n)*float64(n)*float64(b.N)/b.Elapsed().Seconds()/1e9, "Gentries/s")
		})
	}
}
