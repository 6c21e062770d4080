package main

import (
	"context"
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"os"
	"strconv"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
)

// solveOptions are the flags of kchol solve.
type solveOptions struct {
	factor, rhs, output string
	workers             int
	// tol and maxIterations select the exact iterative solve (solveexact.go).
	tol           float64
	maxIterations int
}

func solveCommand() (*flag.FlagSet, func(context.Context, *flag.FlagSet, io.Writer, io.Writer) error) {
	fs := newFlagSet("solve")
	o := &solveOptions{}
	fs.StringVar(&o.factor, "factor", "", "factor `file` written by kchol factor (required)")
	fs.StringVar(&o.rhs, "rhs", "", "CSV `file` of right-hand sides, one column each, rows in the order of the points, with a header row (required)")
	fs.IntVar(&o.workers, "workers", 0, "number of goroutines; 0 means one per CPU")
	fs.Float64Var(&o.tol, "tol", 0, "solve the exact system Θ X = B by conjugate gradients, with the factor as preconditioner, to this relative `residual` (0: apply the factor only, X = L Lᵀ B); costs O(N²) per iteration")
	fs.IntVar(&o.maxIterations, "max-iterations", cholesky.DefaultMaxIterations, "iteration limit of -tol, per right-hand side")
	fs.StringVar(&o.output, "o", "", "CSV `file` to write the solutions to, with the header of -rhs (required)")
	return fs, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error {
		return runSolve(ctx, fs, o, stderr)
	}
}

func runSolve(ctx context.Context, fs *flag.FlagSet, o *solveOptions, stderr io.Writer) error {
	set := flagsSet(fs)
	for _, name := range []string{"factor", "rhs", "o"} {
		if !set[name] || (name == "o" && o.output == "") {
			return usagef("solve: missing -%s", name)
		}
	}
	if o.workers < 0 {
		return usagef("solve: -workers %d, want ≥ 0", o.workers)
	}
	if err := checkExactFlags(o, set); err != nil {
		return err
	}
	start := time.Now()
	f, err := cholesky.ReadFile(o.factor)
	if err != nil {
		return err
	}
	readFactorTime := time.Since(start)

	start = time.Now()
	file, err := os.Open(o.rhs)
	if err != nil {
		return err
	}
	b, err := readCSV(file, o.rhs, nil)
	file.Close()
	if err != nil {
		return err
	}
	if b.rows != f.N() {
		return fmt.Errorf("%s: %d data rows (lines 2 to %d), but the factor %s has %d points", o.rhs, b.rows, b.rows+1, o.factor, f.N())
	}
	readRHSTime := time.Since(start)

	start = time.Now()
	var x *mat.Dense
	var exactNote string
	if o.tol > 0 {
		if x, exactNote, err = solveExact(ctx, f, mat.NewDense(b.rows, b.cols, b.values), o, b.header); err != nil {
			return err
		}
	} else {
		x = f.SolveColumnsTo(nil, mat.NewDense(b.rows, b.cols, b.values), o.workers)
	}
	solveTime := time.Since(start)

	start = time.Now()
	if err := writeAtomic(o.output, func(w io.Writer) error { return writeTable(w, b.header, x) }); err != nil {
		return err
	}
	writeTime := time.Since(start)
	fmt.Fprintf(stderr, "kchol solve: %s, %d right-hand sides; seconds: read factor %s, read rhs %s, solve %s, write %s%s\n",
		describe(f), b.cols, seconds(readFactorTime), seconds(readRHSTime), seconds(solveTime), seconds(writeTime), jitterNote(f))
	fmt.Fprint(stderr, exactNote)
	return nil
}

// writeTable writes header and the rows of x as CSV, each value formatted as %.17g so that
// it reads back to the same float64.
func writeTable(w io.Writer, header []string, x *mat.Dense) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(header); err != nil {
		return err
	}
	rows, cols := x.Dims()
	record := make([]string, cols)
	for i := range rows {
		for j := range cols {
			record[j] = strconv.FormatFloat(x.At(i, j), 'g', 17, 64) // the same digits as %.17g
		}
		if err := cw.Write(record); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
