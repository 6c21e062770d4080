package bench

import (
	"context"
	"errors"
	"math"
	"time"

	"github.com/kchol/kchol/cholesky"
)

// CGRun is one conjugate-gradient solve of Θ x = b with the dense Θ as operator.
type CGRun struct {
	// Preconditioner is "none", "diagonal", or the factor's pattern ("rho=3", "m=30").
	Preconditioner string `json:"preconditioner"`
	Iterations     int    `json:"iterations"`
	// Residual is the final true relative residual; Converged whether it reached Tolerance.
	Residual  float64 `json:"residual"`
	Converged bool    `json:"converged"`
	// Seconds is the wall time of the iteration (the factor's construction excluded; see
	// SetupSeconds).
	Seconds      float64 `json:"seconds"`
	SetupSeconds float64 `json:"setup_seconds"`
	// Error is the relative error against the dense solve.
	Error float64 `json:"error_vs_dense"`
	// RitzMin and RitzMax estimate the extreme eigenvalues of the preconditioned operator
	// (cholesky.IterativeResult); Kappa is their ratio, the estimate of its condition number.
	RitzMin float64 `json:"ritz_min"`
	RitzMax float64 `json:"ritz_max"`
	Kappa   float64 `json:"kappa_estimate"`
}

// RunCG solves Θ x = b (b standard normal from seed) by conjugate gradients with gonum's dense
// SymDense.MulVec as the product, with the preconditioner P = diag(Θ)⁻¹ when diagonal is set,
// with P = Θ̃⁻¹ of f when f is not nil, or with none. It returns an error only for a failure
// other than reaching the iteration limit (that is reported in the run).
func RunCG(ctx context.Context, ref *DenseReference, f *cholesky.Factor, diagonal bool, name string, s *cholesky.IterativeSettings, seed uint64) (CGRun, error) {
	n := ref.Theta.SymmetricDim()
	b := Normal(n, seed)
	op := func(_ context.Context, dst, v []float64) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		copy(dst, ref.Mul(v))
		return nil
	}
	var precond cholesky.Preconditioner
	switch {
	case f != nil:
		precond = func(dst, r []float64) { f.SolveTo(dst, r) }
	case diagonal:
		inv := make([]float64, n)
		for i := range inv {
			inv[i] = 1 / ref.Theta.At(i, i)
		}
		precond = func(dst, r []float64) {
			for i, v := range r {
				dst[i] = inv[i] * v
			}
		}
	}
	start := time.Now()
	x, res, err := cholesky.ConjugateGradient(ctx, nil, b, op, precond, s)
	run := CGRun{Preconditioner: name, Iterations: res.Iterations, Residual: res.Residual, Converged: res.Converged, Seconds: time.Since(start).Seconds(),
		RitzMin: res.RitzMin, RitzMax: res.RitzMax, Kappa: res.ConditionEstimate()}
	if err != nil && !errors.Is(err, cholesky.ErrNotConverged) {
		return run, err
	}
	run.Error = RelativeError(x, ref.Solve(b))
	return run, nil
}

// CGBoundIterations returns the k at which the classical conjugate-gradient bound
// ‖e_k‖_A ≤ 2((√κ−1)/(√κ+1))ᵏ ‖e₀‖_A (Golub and Van Loan, Matrix Computations, 4th ed.,
// Theorem 11.3.3; Saad, Iterative Methods for Sparse Linear Systems, 2nd ed., §6.11.3) reaches
// tol: k = ln(2/tol) / ln((√κ+1)/(√κ−1)), not rounded. It is 0 for κ ≤ 1 and +Inf for κ = +Inf.
// It bounds the error in the A-norm, not the residual; it serves to compare preconditioners.
func CGBoundIterations(kappa, tol float64) float64 {
	if !(kappa > 1) {
		return 0
	}
	s := math.Sqrt(kappa)
	return math.Log(2/tol) / math.Log((s+1)/(s-1))
}

// CGBoundKappa is the inverse of CGBoundIterations: the largest κ whose bound reaches tol in k
// iterations, ((q+1)/(q−1))² with q = (2/tol)^(1/k). It is +Inf for k ≤ 0.
func CGBoundKappa(k, tol float64) float64 {
	if !(k > 0) {
		return math.Inf(1)
	}
	q := math.Pow(2/tol, 1/k)
	return ((q + 1) / (q - 1)) * ((q + 1) / (q - 1))
}
