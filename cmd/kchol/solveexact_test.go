package main

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

func TestMainSolveExact(t *testing.T) {
	// Reference: gonum's dense Θ. kchol solve -tol must print, per column, the iterations and a
	// relative residual ≤ tol, and the written X must have that residual when recomputed with
	// the dense Θ (to the rounding of one residual evaluation, rounding below).
	const (
		n, d = 400, 2
		tol  = 1e-10
		// rounding: a residual evaluation with ‖Θ‖ ≈ 30 and ‖x‖/‖b‖ ≈ 1e2 here rounds at
		// about N·ε·3e3 ≈ 3e-10 at worst; measured agreement is far better (our bound).
		rounding = 3e-10
	)
	dir := t.TempDir()
	points := testPoints(n, d)
	pointsPath := writeCSV(t, dir, "points.csv", []string{"x", "y"}, points)
	rng := rand.New(rand.NewPCG(1, 1))
	rhs := make([]float64, 2*n)
	for i := range rhs {
		rhs[i] = rng.NormFloat64()
	}
	rhsPath := writeCSV(t, dir, "rhs.csv", []string{"a", "b"}, rhs)
	factorPath := filepath.Join(dir, "f.kchol")
	outPath := filepath.Join(dir, "x.csv")
	if code, _, stderr := runKchol("factor", "-points", pointsPath, "-kernel", "matern12", "-lengthscale", "0.1", "-neighbors", "10", "-o", factorPath); code != 0 {
		t.Fatalf("factor: exit %d, %s", code, stderr)
	}
	code, _, stderr := runKchol("solve", "-factor", factorPath, "-rhs", rhsPath, "-tol", fmt.Sprint(tol), "-o", outPath)
	if code != 0 {
		t.Fatalf("solve: exit %d, %s", code, stderr)
	}
	line := regexp.MustCompile(`column "(\w)": (\d+) iterations, relative residual ‖b − Θx‖/‖b‖ = (\S+) `)
	matches := line.FindAllStringSubmatch(stderr, -1)
	if len(matches) != 2 {
		t.Fatalf("stderr %q: want one iteration line per column", stderr)
	}
	_, x := readResult(t, outPath)
	k := kernels.Stationary{Family: kernels.Matern12, Dimension: d, LengthScale: 0.1}
	theta := mat.NewSymDense(n, nil)
	for i := range n {
		for j := 0; j <= i; j++ {
			theta.SetSym(i, j, k.Eval(points[i*d:i*d+d], points[j*d:j*d+d]))
		}
	}
	for c, m := range matches {
		reported, err := strconv.ParseFloat(m[3], 64)
		if err != nil {
			t.Fatal(err)
		}
		b := make([]float64, n)
		for i := range n {
			b[i] = rhs[i*2+c]
		}
		var r mat.VecDense
		r.MulVec(theta, mat.NewVecDense(n, x[c]))
		r.SubVec(mat.NewVecDense(n, b), &r)
		dense := mat.Norm(&r, 2) / mat.Norm(mat.NewVecDense(n, b), 2)
		t.Logf("column %s: %s iterations, reported residual %g, dense %g", m[1], m[2], reported, dense)
		if reported > tol || dense > tol+rounding {
			t.Errorf("column %s: reported residual %g, dense %g, tolerance %g", m[1], reported, dense, tol)
		}
	}

	// Not converging is an error and writes nothing.
	failPath := filepath.Join(dir, "fail.csv")
	code, _, stderr = runKchol("solve", "-factor", factorPath, "-rhs", rhsPath, "-tol", "1e-14", "-max-iterations", "1", "-o", failPath)
	if code != 1 || !strings.Contains(stderr, "did not reach the tolerance") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	if _, err := os.Stat(failPath); !os.IsNotExist(err) {
		t.Fatalf("%s exists after a failed solve", failPath)
	}
	for _, args := range [][]string{{"-tol", "-1"}, {"-tol", "0"}, {"-tol", "2"}, {"-max-iterations", "5"}, {"-tol", "1e-8", "-max-iterations", "0"}} {
		all := append([]string{"solve", "-factor", factorPath, "-rhs", rhsPath, "-o", failPath}, args...)
		if code, _, stderr := runKchol(all...); code != 2 {
			t.Errorf("%v: exit %d, want 2 (stderr %q)", args, code, stderr)
		}
	}
}
