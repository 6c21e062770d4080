package cholesky

import (
	"context"
	"errors"
	"fmt"
	"math"
)

// Defaults of IterativeSettings.
const (
	// DefaultTolerance is the default relative residual ‖b − Θx‖₂/‖b‖₂ of iterative solves.
	DefaultTolerance = 1e-8
	// DefaultMaxIterations is the default iteration limit of iterative solves.
	DefaultMaxIterations = 1000
)

// ErrNotConverged is returned (wrapped) by the iterative solvers when the iteration limit is
// reached before the requested residual.
var ErrNotConverged = errors.New("cholesky: conjugate gradients did not reach the tolerance")

// IterativeSettings configures ConjugateGradient and Factor.SolveExactTo. The zero value, or
// nil, means the defaults.
type IterativeSettings struct {
	// Tolerance is the requested relative residual ‖b − Θx‖₂/‖b‖₂. 0 means DefaultTolerance.
	Tolerance float64
	// MaxIterations bounds the number of iterations. 0 means DefaultMaxIterations.
	MaxIterations int
	// Workers is the number of goroutines of the exact product Θ·v. 0 means GOMAXPROCS.
	Workers int
}

func (s *IterativeSettings) withDefaults() IterativeSettings {
	var out IterativeSettings
	if s != nil {
		out = *s
	}
	if out.Tolerance == 0 {
		out.Tolerance = DefaultTolerance
	}
	if !(out.Tolerance > 0) || math.IsInf(out.Tolerance, 0) {
		panic(fmt.Sprintf("cholesky: tolerance %v, want a finite value > 0", out.Tolerance))
	}
	if out.MaxIterations == 0 {
		out.MaxIterations = DefaultMaxIterations
	}
	if out.MaxIterations < 0 {
		panic(fmt.Sprintf("cholesky: %d maximum iterations, want ≥ 0", out.MaxIterations))
	}
	return out
}

// IterativeResult reports an iterative solve.
type IterativeResult struct {
	// Iterations is the number of conjugate-gradient iterations (one product Θ·p each).
	Iterations int
	// Products is the number of products with Θ, the iterations plus the residual checks.
	Products int
	// Residual is the final relative residual ‖b − Θx‖₂/‖b‖₂, computed afresh from x with the
	// operator (not the recursively updated residual of the iteration).
	Residual float64
	// Converged reports Residual ≤ Tolerance.
	Converged bool
	// RitzMin and RitzMax estimate the smallest and largest eigenvalues of the preconditioned
	// operator P·A: they are the extreme eigenvalues (Ritz values) of the Lanczos tridiagonal
	// matrix that conjugate gradients builds implicitly from its step lengths α and β
	// (Y. Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., SIAM 2003, §6.7.3). In
	// exact arithmetic they lie inside [λmin(PA), λmax(PA)] (Cauchy interlacing) and move out
	// to the extremes as the iteration goes on, so RitzMax/RitzMin is an estimate, and in
	// exact arithmetic a lower bound, of the condition number κ(PA) that governs the
	// iteration count. After a restart (see ConjugateGradient) they combine both runs. Both
	// are 0 when no iteration ran.
	RitzMin, RitzMax float64
}

// ConditionEstimate returns RitzMax/RitzMin, the estimate of κ(PA), or 0 when no iteration ran.
func (r IterativeResult) ConditionEstimate() float64 {
	if r.RitzMin == 0 {
		return 0
	}
	return r.RitzMax / r.RitzMin
}

// Operator sets dst = A v for a symmetric positive definite A; dst and v do not overlap.
type Operator func(ctx context.Context, dst, v []float64) error

// Preconditioner sets dst = P r for a symmetric positive definite P ≈ A⁻¹; dst and r do not
// overlap.
type Preconditioner func(dst, r []float64)

// ConjugateGradient solves A x = b by preconditioned conjugate gradients from x₀ = 0, writes x
// to dst (allocated when nil) and returns it with the result. precond nil means none (P = I).
// When the recursive residual reaches the tolerance, the true residual b − A x is computed
// with one more product; if it is still above the tolerance, the iteration restarts from it.
// The returned result always carries the true final residual.
//
// It returns an error wrapping ErrNotConverged if s.MaxIterations iterations do not reach the
// tolerance (dst then holds the last iterate), an error if A is found not positive definite
// (pᵀAp ≤ 0) or a value is not finite, and the operator's error (such as a cancelled
// context). It panics if dst (when not nil) and b differ in length. Cost: one product and one
// preconditioner application per iteration plus O(N).
//
// The iteration is Algorithm 11.5.1 of G. H. Golub, C. F. Van Loan, Matrix Computations,
// 4th ed., 2013 (preconditioned conjugate gradients).
func ConjugateGradient(ctx context.Context, dst, b []float64, op Operator, precond Preconditioner, s *IterativeSettings) (_ []float64, res IterativeResult, _ error) {
	set := s.withDefaults()
	n := len(b)
	if dst == nil {
		dst = make([]float64, n)
	} else if len(dst) != n {
		panic("cholesky: dst and b differ in length")
	}
	x := dst
	clear(x)
	normB := norm2(b)
	if normB == 0 {
		res.Converged = true
		return x, res, nil
	}
	r := append([]float64(nil), b...)
	z := make([]float64, n)
	p := make([]float64, n)
	q := make([]float64, n)
	applyP := func() {
		if precond == nil {
			copy(z, r)
		} else {
			precond(z, r)
		}
	}
	// trueResidual sets r = b − A x and returns ‖r‖/‖b‖.
	trueResidual := func() (float64, error) {
		if err := op(ctx, q, x); err != nil {
			return 0, err
		}
		res.Products++
		for i := range r {
			r[i] = b[i] - q[i]
		}
		return norm2(r) / normB, nil
	}
	applyP()
	copy(p, z)
	rz := dot(r, z)
	rel := 1.0
	// The Lanczos tridiagonal of the current run (since the start or the last restart):
	// diagonal diag, off-diagonal off, with the previous step's α and β in alphaPrev, betaPrev.
	var diag, off []float64
	alphaPrev, betaPrev := 0.0, 0.0
	ritz := false // whether a run has set res.RitzMin and res.RitzMax
	endRun := func() {
		if len(diag) == 0 {
			return
		}
		lo, hi := tridiagonalExtremes(diag, off)
		if !ritz {
			res.RitzMin, res.RitzMax, ritz = lo, hi, true
		} else {
			res.RitzMin, res.RitzMax = min(res.RitzMin, lo), max(res.RitzMax, hi)
		}
		diag, off = diag[:0], off[:0]
	}
	defer endRun() // res is a named result, so every return below reports the last run
	for res.Iterations < set.MaxIterations {
		if err := op(ctx, q, p); err != nil {
			return x, res, err
		}
		res.Iterations++
		res.Products++
		pq := dot(p, q)
		if !(pq > 0) || math.IsInf(pq, 0) {
			return x, res, fmt.Errorf("cholesky: conjugate gradients: pᵀAp = %v at iteration %d: the operator is not positive definite or not finite", pq, res.Iterations)
		}
		alpha := rz / pq
		if len(diag) == 0 {
			diag = append(diag, 1/alpha)
		} else {
			diag = append(diag, 1/alpha+betaPrev/alphaPrev)
			off = append(off, math.Sqrt(betaPrev)/alphaPrev)
		}
		alphaPrev = alpha
		for i := range x {
			x[i] += alpha * p[i]
			r[i] -= alpha * q[i]
		}
		rel = norm2(r) / normB
		if rel <= set.Tolerance {
			var err error
			if rel, err = trueResidual(); err != nil {
				return x, res, err
			}
			if rel <= set.Tolerance {
				res.Residual, res.Converged = rel, true
				return x, res, nil
			}
			// Restart from the true residual.
			endRun()
			applyP()
			copy(p, z)
			rz = dot(r, z)
			continue
		}
		applyP()
		rzNext := dot(r, z)
		if !(rzNext >= 0) {
			return x, res, fmt.Errorf("cholesky: conjugate gradients: rᵀPr = %v at iteration %d: the preconditioner is not positive definite or not finite", rzNext, res.Iterations)
		}
		beta := rzNext / rz
		betaPrev = beta
		rz = rzNext
		for i := range p {
			p[i] = z[i] + beta*p[i]
		}
	}
	var err error
	if rel, err = trueResidual(); err != nil {
		return x, res, err
	}
	res.Residual = rel
	if rel <= set.Tolerance {
		res.Converged = true
		return x, res, nil
	}
	return x, res, fmt.Errorf("%w: relative residual %.3g after %d iterations, tolerance %.3g", ErrNotConverged, rel, res.Iterations, set.Tolerance)
}

// SolveExactTo solves the exact system Θ x = b (Θ the kernel matrix of the factor's points and
// kernel, not the approximation Θ̃) by conjugate gradients with the factor as preconditioner,
// P = Θ̃⁻¹ = M Mᵀ, and the exact matrix-free product KernelMatrix.MulVecTo on s.Workers
// goroutines. It writes x to dst (allocated when nil) and returns dst and the result, whose
// Residual is ‖b − Θx‖₂/‖b‖₂ measured with the exact operator. Errors as ConjugateGradient;
// it panics if b (or dst, when not nil) does not have length N.
//
// Cost O(N² d) per iteration (the exact product), plus O(nnz) for the preconditioner: on two
// cores about a second per iteration at N = 10⁴ (see the bench package's report for measured
// times). The iteration count depends on how well Θ̃ approximates Θ; see the bench report.
func (f *Factor) SolveExactTo(ctx context.Context, dst, b []float64, s *IterativeSettings) ([]float64, IterativeResult, error) {
	f.checkLen(b, "b")
	if dst != nil {
		f.checkLen(dst, "dst")
	}
	set := s.withDefaults()
	theta := f.KernelMatrix()
	op := func(ctx context.Context, dst, v []float64) error {
		_, err := theta.MulVecTo(ctx, dst, v, set.Workers)
		return err
	}
	precond := func(dst, r []float64) { f.SolveTo(dst, r) }
	return ConjugateGradient(ctx, dst, b, op, precond, &set)
}

// tridiagonalExtremes returns the smallest and largest eigenvalues of the symmetric
// tridiagonal matrix with diagonal diag and off-diagonal off (len(off) = len(diag)−1), by
// bisection on Sturm sequence counts inside the Gershgorin interval (G. H. Golub,
// C. F. Van Loan, Matrix Computations, 4th ed., §8.4.1), each to adjacent floats or 200
// halvings. Cost O(k) per halving for k rows.
func tridiagonalExtremes(diag, off []float64) (lo, hi float64) {
	k := len(diag)
	glo, ghi := math.Inf(1), math.Inf(-1)
	for i, a := range diag {
		r := 0.0
		if i > 0 {
			r += math.Abs(off[i-1])
		}
		if i < k-1 {
			r += math.Abs(off[i])
		}
		glo, ghi = min(glo, a-r), max(ghi, a+r)
	}
	// below returns the number of eigenvalues < x: the negative pivots of T − xI (Sturm).
	below := func(x float64) int {
		count := 0
		q := 1.0
		for i, a := range diag {
			if i == 0 {
				q = a - x
			} else {
				q = a - x - off[i-1]*off[i-1]/q
			}
			if q == 0 {
				q = -math.SmallestNonzeroFloat64 // perturb a zero pivot (counted as negative)
			}
			if q < 0 {
				count++
			}
		}
		return count
	}
	// eigenvalue returns the i-th smallest (0-based) by bisection of [glo, ghi].
	eigenvalue := func(i int) float64 {
		a, b := glo, ghi
		for range 200 {
			mid := a + (b-a)/2
			if mid <= a || mid >= b {
				break
			}
			if below(mid) > i {
				b = mid
			} else {
				a = mid
			}
		}
		return a + (b-a)/2
	}
	return eigenvalue(0), eigenvalue(k - 1)
}

func dot(a, b []float64) float64 {
	var s float64
	for i, v := range a {
		s += v * b[i]
	}
	return s
}

// norm2 returns ‖a‖₂ without overflow for the values the solvers see (plain sum of squares).
func norm2(a []float64) float64 { return math.Sqrt(dot(a, a)) }
