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
			// Same source: when CG terminates, the Krylov space is invariant and the Ritz
			// values are the eigenvalues that b excites, here all of levels[:distinct]. The
			// slack 1e-8 (relative) for rounding is our choice.
			lo, hi := levels[0], slices.Max(levels[:distinct])
			if math.Abs(res.RitzMin-lo) > 1e-8*lo || math.Abs(res.RitzMax-hi) > 1e-8*hi {
				t.Fatalf("Ritz values [%.12g, %.12g], want [%g, %g]", res.RitzMin, res.RitzMax, lo, hi)
			}
		})
	}
}

func TestConjugateGradientRitzValuesAgainstDenseSpectrum(t *testing.T) {
	// Reference: gonum's dense eigenvalues of the preconditioned operator. With Θ = UᵀU
	// (gonum's mat.Cholesky) and P = Θ̃⁻¹ formed column by column with SolveTo, P·Θ is similar
	// to the symmetric U P Uᵀ, whose spectrum mat.EigenSym computes. The Ritz values lie inside
	// that spectrum (Cauchy interlacing; Saad, Iterative Methods for Sparse Linear Systems,
	// 2nd ed., §6.7.3) and, by the time CG reaches 1e-12, the extreme ones have converged to the
	// extreme eigenvalues; the 1e-6 slack for rounding and the 2 % closeness are our choices,
	// the closeness checked against what this problem shows (0.11 % or better).
	const n, d = 400, 2
	points := uniformPoints(n, d, 41)
	for _, c := range []struct {
		name    string
		pattern Settings
		nugget  float64
		plain   bool // no preconditioner
	}{
		{"m=3", Settings{Neighbors: 3, Lambda: 1}, 1e-6, false},
		{"rho=2", Settings{Rho: 2}, 1e-6, false},
		{"none", Settings{}, 1e-2, true}, // no factor is built
	} {
		t.Run(c.name, func(t *testing.T) {
			k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.1, Nugget: c.nugget}
			theta := denseKernelMatrix(k, points, d)
			var chol mat.Cholesky
			if !chol.Factorize(theta) {
				t.Fatal("dense Θ not positive definite")
			}
			var u mat.TriDense
			chol.UTo(&u)
			pmat := mat.NewDense(n, n, nil)
			var precond Preconditioner
			if c.plain {
				for i := range n {
					pmat.Set(i, i, 1)
				}
			} else {
				f, err := New(context.Background(), points, d, k, &c.pattern)
				if err != nil {
					t.Fatal(err)
				}
				precond = func(dst, r []float64) { f.SolveTo(dst, r) }
				e := make([]float64, n)
				col := make([]float64, n)
				for j := range n {
					clear(e)
					e[j] = 1
					f.SolveTo(col, e)
					pmat.SetCol(j, col)
				}
			}
			var up, upu mat.Dense
			up.Mul(&u, pmat)
			upu.Mul(&up, u.T())
			sym := mat.NewSymDense(n, nil)
			for i := range n {
				for j := i; j < n; j++ {
					sym.SetSym(i, j, (upu.At(i, j)+upu.At(j, i))/2)
				}
			}
			var eig mat.EigenSym
			if !eig.Factorize(sym, false) {
				t.Fatal("EigenSym failed")
			}
			values := eig.Values(nil)
			lo, hi := values[0], values[n-1]
			b := randomVector(n, 43)
			_, res, err := ConjugateGradient(context.Background(), nil, b, denseOperator(theta), precond, &IterativeSettings{Tolerance: 1e-12})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("%d iterations; Ritz [%.6g, %.6g], spectrum [%.6g, %.6g]; κ estimate %.4g, κ %.4g",
				res.Iterations, res.RitzMin, res.RitzMax, lo, hi, res.ConditionEstimate(), hi/lo)
			if res.RitzMin < lo*(1-1e-6) || res.RitzMax > hi*(1+1e-6) {
				t.Fatalf("Ritz values [%g, %g] outside the spectrum [%g, %g]", res.RitzMin, res.RitzMax, lo, hi)
			}
			if res.RitzMin > lo*1.02 || res.RitzMax < hi/1.02 {
				t.Fatalf("Ritz values [%g, %g] not within 2 %% of the extremes [%g, %g]", res.RitzMin, res.RitzMax, lo, hi)
			}
		})
	}
}

func TestTridiagonalExtremesAgainstGonum(t *testing.T) {
	// Reference: gonum's mat.EigenSym on the same tridiagonal matrix stored dense. Relative
	// agreement 1e-12 of the spectral radius (bisection runs to adjacent floats; the slack is
	// our choice). Cases: sizes 1, 2, 7 and 60, random entries, one with zero off-diagonals
	// (a diagonal matrix, eigenvalues its entries) and one with repeated eigenvalues.
	rng := rand.New(rand.NewPCG(7, 8))
	cases := map[string][2][]float64{
		"diagonal": {{3, -1, 2, 0.5}, {0, 0, 0}},
		"repeated": {{2, 2, 2}, {0, 1, 0}},
	}
	for _, k := range []int{1, 2, 7, 60} {
		diag, off := make([]float64, k), make([]float64, k-1)
		for i := range diag {
			diag[i] = rng.NormFloat64()
		}
		for i := range off {
			off[i] = rng.NormFloat64()
		}
		cases[fmt.Sprintf("random-%d", k)] = [2][]float64{diag, off}
	}
	for name, c := range cases {
		t.Run(name, func(t *testing.T) {
			diag, off := c[0], c[1]
			k := len(diag)
			a := mat.NewSymDense(k, nil)
			for i := range k {
				a.SetSym(i, i, diag[i])
				if i+1 < k {
					a.SetSym(i, i+1, off[i])
				}
			}
			var eig mat.EigenSym
			if !eig.Factorize(a, false) {
				t.Fatal("EigenSym failed")
			}
			values := eig.Values(nil)
			scale := max(math.Abs(values[0]), math.Abs(values[k-1]))
			lo, hi := tridiagonalExtremes(diag, off)
			if math.Abs(lo-values[0]) > 1e-12*scale || math.Abs(hi-values[k-1]) > 1e-12*scale {
				t.Fatalf("extremes [%.15g, %.15g], gonum [%.15g, %.15g]", lo, hi, values[0], values[k-1])
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
