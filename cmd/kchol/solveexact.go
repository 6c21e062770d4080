package main

import (
	"context"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
)

// checkExactFlags validates -tol and -max-iterations of kchol solve.
func checkExactFlags(o *solveOptions, set map[string]bool) error {
	switch {
	case !(o.tol >= 0) || math.IsInf(o.tol, 0):
		return usagef("solve: -tol %v, want a finite value > 0 (or 0 for the factor alone)", o.tol)
	case set["tol"] && o.tol == 0:
		return usagef("solve: -tol 0: give a tolerance > 0, or leave -tol out to apply the factor alone")
	case o.tol > 0 && o.tol >= 1:
		return usagef("solve: -tol %v, want a relative residual < 1", o.tol)
	case set["max-iterations"] && !set["tol"]:
		return usagef("solve: -max-iterations needs -tol")
	case o.maxIterations < 1:
		return usagef("solve: -max-iterations %d, want ≥ 1", o.maxIterations)
	}
	return nil
}

// solveExact solves Θ X = B column by column with cholesky.Factor.SolveExactTo (conjugate
// gradients, exact matrix-free Θ, the factor as preconditioner). It returns X and a report of
// one line per column (iterations and final relative residual), or an error naming the
// first column that did not converge; then nothing is written.
func solveExact(ctx context.Context, f *cholesky.Factor, b *mat.Dense, o *solveOptions, header []string) (*mat.Dense, string, error) {
	rows, cols := b.Dims()
	x := mat.NewDense(rows, cols, nil)
	set := &cholesky.IterativeSettings{Tolerance: o.tol, MaxIterations: o.maxIterations, Workers: o.workers}
	var note strings.Builder
	for c := range cols {
		col, res, err := f.SolveExactTo(ctx, nil, mat.Col(nil, c, b), set)
		if err != nil {
			return nil, "", fmt.Errorf("column %q: %w", header[c], err)
		}
		x.SetCol(c, col)
		fmt.Fprintf(&note, "kchol solve: column %q: %d iterations, relative residual ‖b − Θx‖/‖b‖ = %.3g (tolerance %.3g, exact Θ); eigenvalues of the preconditioned Θ estimated in [%.4g, %.4g], condition number ≈ %.4g\n",
			header[c], res.Iterations, res.Residual, o.tol, res.RitzMin, res.RitzMax, res.ConditionEstimate())
	}
	return x, note.String(), nil
}
