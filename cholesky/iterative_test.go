package cholesky

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

// denseOperator returns A·v with gonum's SymDense.MulVec.
func denseOperator(a *mat.SymDense) Operator {
	return func(_ context.Context, dst, v []float64) error {
		mat.NewVecDense(len(dst), dst).MulVec(a, mat.NewVecDense(len(v), v))
		return nil
	}
}

// denseResidual returns ‖b − Θx‖₂/‖b‖₂ computed with gonum's dense Θ.
func denseResidual(theta *mat.SymDense, x, b []float64) float64 {
	var r mat.VecDense
	r.MulVec(theta, mat.NewVecDense(len(x), x))
	r.SubVec(mat.NewVecDense(len(b), b), &r)
	return mat.Norm(&r, 2) / mat.Norm(mat.NewVecDense(len(b), b), 2)
}

func TestSolveExactReachesTolerance(t *testing.T) {
	// Reference: the residual recomputed with gonum's dense Θ (SymDense.MulVec). The
	// result's Residual is the true one, so it must match the dense residual to the rounding
	// of a residual evaluation, about N·ε·‖Θ‖·‖x‖/‖b‖ (the dot-product bound, Higham,
	// Accuracy and Stability of Numerical Algorithms, 2nd ed., §3.1). Nuggets keep cond(Θ)·ε
	// below the tightest tolerance, or it could not be reached at all.
	const roundingFactor = 4 // slack on the rounding bound, our choice
	nuggets := map[kernels.Family]float64{kernels.Matern12: 0, kernels.Matern32: 1e-6, kernels.Matern52: 1e-4}
	n := 1500
	if testing.Short() {
		n = 700
	}
	for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32, kernels.Matern52} {
		for _, tol := range []float64{1e-6, 1e-10} {
			for _, pattern := range []Settings{{Neighbors: 10}, {Rho: 2}} {
				nugget := nuggets[family]
				name := fmt.Sprintf("n=%d/%v/nugget=%g/tol=%g/rho=%g/m=%d", n, family, nugget, tol, pattern.Rho, pattern.Neighbors)
				t.Run(name, func(t *testing.T) {
					const d = 2
					points := uniformPoints(n, d, 11)
					k := kernels.Stationary{Family: family, Dimension: d, LengthScale: 0.1, Nugget: nugget}
					f, err := New(context.Background(), points, d, k, &pattern)
					if err != nil {
						t.Fatal(err)
					}
					b := randomVector(n, 13)
					x, res, err := f.SolveExactTo(context.Background(), nil, b, &IterativeSettings{Tolerance: tol, Workers: 2})
					if err != nil {
						t.Fatal(err)
					}
					theta := denseKernelMatrix(k, points, d)
					dense := denseResidual(theta, x, b)
					t.Logf("iterations %d, products %d, residual %.3g (dense %.3g)", res.Iterations, res.Products, res.Residual, dense)
					if !res.Converged || res.Residual > tol {
						t.Fatalf("converged %v, residual %g > %g", res.Converged, res.Residual, tol)
					}
					rounding := roundingFactor * float64(n) * 0x1p-52 * mat.Norm(theta, 2) * norm2(x) / norm2(b)
					if dense > tol+rounding {
						t.Fatalf("dense residual %g > tolerance %g + rounding %g", dense, tol, rounding)
					}
					if math.Abs(dense-res.Residual) > rounding {
						t.Fatalf("reported residual %g, dense residual %g", res.Residual, dense)
					}
				})
			}
		}
	}
}

func TestSolveExactFullPatternConvergesAtOnce(t *testing.T) {
	// With ρ = ∞ the factor is exact (DESIGN.md §4), so the preconditioned matrix is I up to
	// rounding, and preconditioned CG converges in one iteration in exact arithmetic (a
	// standard fact: CG terminates after as many iterations as the preconditioned matrix has
	// distinct eigenvalues, Golub & Van Loan, Matrix Computations, 4th ed., §11.3). We allow
	// two for rounding.
	const maxIterations = 2
	n := 400
	if testing.Short() {
		n = 200
	}
	for _, family := range allFamilies {
		t.Run(fmt.Sprintf("n=%d/%v/tol=1e-10", n, family), func(t *testing.T) {
			const d = 2
			nugget := 0.0
			if family == kernels.Gaussian {
				nugget = 1e-4 // keeps cond(Θ)·ε well below the tolerance
			}
			points := uniformPoints(n, d, 17)
			k := kernels.Stationary{Family: family, Dimension: d, LengthScale: 0.1, Nugget: nugget}
			f, err := New(context.Background(), points, d, k, &Settings{Rho: math.Inf(1)})
			if err != nil {
				t.Fatal(err)
			}
			b := randomVector(n, 19)
			_, res, err := f.SolveExactTo(context.Background(), nil, b, &IterativeSettings{Tolerance: 1e-10})
			if err != nil {
				t.Fatal(err)
			}
			if res.Iterations > maxIterations {
				t.Fatalf("%d iterations, want ≤ %d (residual %g)", res.Iterations, maxIterations, res.Residual)
			}
		})
	}
}

func TestSolveExactErrorAgainstDenseSolve(t *testing.T) {
	// Reference: gonum's dense Cholesky solve. The forward error of any x with relative
	// residual r is at most κ₂(Θ)·r (Golub & Van Loan, Matrix Computations, 4th ed., §2.6.2,
	// the perturbation bound ‖x̂ − x‖/‖x‖ ≤ κ(A)‖r‖/‖b‖). κ₂ comes from gonum's EigenSym.
	// The dense solve has its own error of about κ₂·ε, which we add.
	n := 800
	if testing.Short() {
		n = 400
	}
	const tol = 1e-10
	for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32} {
		t.Run(fmt.Sprintf("n=%d/%v/l=0.05/tol=%g", n, family, tol), func(t *testing.T) {
			const d = 2
			points := uniformPoints(n, d, 23)
			k := kernels.Stationary{Family: family, Dimension: d, LengthScale: 0.05}
			f, err := New(context.Background(), points, d, k, &Settings{Neighbors: 10})
			if err != nil {
				t.Fatal(err)
			}
			b := randomVector(n, 29)
			x, res, err := f.SolveExactTo(context.Background(), nil, b, &IterativeSettings{Tolerance: tol})
			if err != nil {
				t.Fatal(err)
			}
			theta := denseKernelMatrix(k, points, d)
			var eig mat.EigenSym
			if !eig.Factorize(theta, false) {
				t.Fatal("gonum: eigen decomposition failed")
			}
			values := eig.Values(nil)
			cond := values[len(values)-1] / values[0]
			chol := denseCholesky(t, theta)
			var want mat.VecDense
			if err := chol.SolveVecTo(&want, mat.NewVecDense(n, b)); err != nil {
				t.Fatal(err)
			}
			got := relativeError(x, want.RawVector().Data)
			bound := cond * (res.Residual + 0x1p-52)
			t.Logf("cond %.3g, iterations %d, residual %.3g, error %.3g, bound %.3g", cond, res.Iterations, res.Residual, got, bound)
			if got > bound {
				t.Fatalf("error against dense solve %g > cond·residual %g", got, bound)
			}
		})
	}
}

func TestConjugateGradientDistinctEigenvalues(t *testing.T) {
	// Standard fact (Golub & Van Loan, Matrix Computations, 4th ed., §11.3): unpreconditioned
	// CG on an SPD matrix with k distinct eigenvalues terminates after k iterations in exact
	// arithmetic. A = Q diag(1, 2, 5 repeated) Qᵀ with Q a Householder reflection; one extra
	// iteration is allowed for rounding.
	for _, n := range []int{1, 2, 3, 9, 40} {
		t.Run(fmt.Sprintf("n=%d", n), func(t *testing.T) {
			u := randomVector(n, 31)
			var uu float64
			for _, v := range u {
				uu += v * v
			}
			a := mat.NewSymDense(n, nil)
			levels := []float64{1, 2, 5}
			for i := range n {
				for j := 0; j <= i; j++ {
					// (Q D Qᵀ)ᵢⱼ with Q = I − 2uuᵀ/uᵀu.
					var s float64
					for k := range n {
						qik := -2 * u[i] * u[k] / uu
						qjk := -2 * u[j] * u[k] / uu
						if i == k {
							qik++
						}
						if j == k {
							qjk++
						}
						s += qik * levels[k%3] * qjk
					}
					a.SetSym(i, j, s)
				}
			}
			distinct := min(n, 3)
			b := randomVector(n, 37)
			x, res, err := ConjugateGradient(context.Background(), nil, b, denseOperator(a), nil, &IterativeSettings{Tolerance: 1e-12})
			if err != nil {
				t.Fatal(err)
			}
			if res.Iterations > distinct+1 {
				t.Fatalf("%d iterations, want ≤ %d", res.Iterations, distinct+1)
			}
			if r := denseResidual(a, x, b); r > 1e-12 {
				t.Fatalf("dense residual %g", r)
			}
		})
	}
}

func TestConjugateGradientFailures(t *testing.T) {
	const n = 50
	points := uniformPoints(n, 2, 41)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.3}
	theta := denseKernelMatrix(k, points, 2)
	b := randomVector(n, 43)
	t.Run("iteration limit", func(t *testing.T) {
		x, res, err := ConjugateGradient(context.Background(), nil, b, denseOperator(theta), nil, &IterativeSettings{Tolerance: 1e-14, MaxIterations: 2})
		if !errors.Is(err, ErrNotConverged) {
			t.Fatalf("err = %v, want ErrNotConverged", err)
		}
		if res.Converged || res.Iterations != 2 {
			t.Fatalf("result %+v", res)
		}
		// The reported residual is the true one of the returned iterate.
		if r := denseResidual(theta, x, b); math.Abs(r-res.Residual) > 1e-12 {
			t.Fatalf("residual %g, dense %g", res.Residual, r)
		}
	})
	t.Run("not positive definite", func(t *testing.T) {
		negative := func(_ context.Context, dst, v []float64) error {
			for i := range v {
				dst[i] = -v[i]
			}
			return nil
		}
		if _, _, err := ConjugateGradient(context.Background(), nil, b, negative, nil, nil); err == nil || errors.Is(err, ErrNotConverged) {
			t.Fatalf("err = %v, want a positive-definiteness error", err)
		}
	})
	t.Run("zero right-hand side", func(t *testing.T) {
		x, res, err := ConjugateGradient(context.Background(), nil, make([]float64, n), denseOperator(theta), nil, nil)
		if err != nil || !res.Converged || res.Iterations != 0 || slices.ContainsFunc(x, func(v float64) bool { return v != 0 }) {
			t.Fatalf("x = %v, res = %+v, err = %v", x[:3], res, err)
		}
	})
	t.Run("cancelled", func(t *testing.T) {
		f, err := New(context.Background(), points, 2, k, nil)
		if err != nil {
			t.Fatal(err)
		}
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		if _, _, err := f.SolveExactTo(ctx, nil, b, nil); !errors.Is(err, context.Canceled) {
			t.Fatalf("err = %v, want context.Canceled", err)
		}
	})
	t.Run("bad settings panic", func(t *testing.T) {
		defer func() {
			if recover() == nil {
				t.Fatal("no panic")
			}
		}()
		ConjugateGradient(context.Background(), nil, b, denseOperator(theta), nil, &IterativeSettings{Tolerance: -1})
	})
}

func TestSolveExactWorkerDeterminism(t *testing.T) {
	// Property: the exact product gives the same bits for any worker count, so the whole
	// iteration does too.
	const n, d = 900, 2
	points := uniformPoints(n, d, 47)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.1}
	f, err := New(context.Background(), points, d, k, nil)
	if err != nil {
		t.Fatal(err)
	}
	b := randomVector(n, 53)
	want, _, err := f.SolveExactTo(context.Background(), nil, b, &IterativeSettings{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, workers := range []int{2, 5} {
		got, _, err := f.SolveExactTo(context.Background(), nil, b, &IterativeSettings{Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(got, want) {
			t.Fatalf("workers=%d: solution differs from workers=1", workers)
		}
	}
}
