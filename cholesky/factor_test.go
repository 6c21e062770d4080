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
	"github.com/kchol/kchol/ordering"
)

var allFamilies = []kernels.Family{kernels.Matern12, kernels.Matern32, kernels.Matern52, kernels.Gaussian}

func TestFullPatternIsExactFactor(t *testing.T) {
	// Reference: gonum's dense mat.Cholesky. With ρ = ∞ the pattern is the full lower
	// triangle and the KL-optimal factor is the exact Cholesky factor of Θ⁻¹ in position order
	// (DESIGN.md §4), so L, LLᵀ's log det and solves must match the dense ones to rounding,
	// which grows like cond(Θ)·ε (standard backward-error behaviour of Cholesky, Higham,
	// Accuracy and Stability of Numerical Algorithms, 2nd ed., §10.1).
	const (
		// floorTolerance: measured with a prototype, errors are about 1e-12 when the
		// condition estimate is below 1e6.
		floorTolerance = 1e-11
		// condFactor: the prototype measured at most 0.03·cond·ε beyond that; we allow cond·ε.
		condFactor = 1.0
	)
	n := 400
	if testing.Short() {
		n = 150
	}
	for _, d := range []int{2, 3} {
		for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32, kernels.Matern52, kernels.Gaussian} {
			for _, lengthScale := range []float64{0.1, 0.3} {
				nugget := 0.0
				if family == kernels.Gaussian {
					nugget = 1e-6 // the Gaussian kernel matrix is numerically singular without one
				}
				name := fmt.Sprintf("d=%d/%v/l=%g/nugget=%g/n=%d", d, family, lengthScale, nugget, n)
				t.Run(name, func(t *testing.T) {
					points := uniformPoints(n, d, 7)
					k := kernels.Stationary{Family: family, Dimension: d, LengthScale: lengthScale, Nugget: nugget}
					f, err := New(context.Background(), points, d, k, &Settings{Rho: math.Inf(1)})
					if err != nil {
						t.Fatal(err)
					}
					if f.NNZ() != n*(n+1)/2 {
						t.Fatalf("nnz = %d, want the full triangle %d", f.NNZ(), n*(n+1)/2)
					}
					theta := denseKernelMatrix(k, points, d)
					chol := denseCholesky(t, theta)
					cond := chol.Cond()
					tol := max(floorTolerance, condFactor*cond*0x1p-52)

					// Exact L in user order: Θ⁻¹ = M Mᵀ with M = Π L Πᵀ. In positions,
					// Θ_pos = U Uᵀ with U = L⁻ᵀ upper triangular; reversing the positions
					// turns U into the ordinary lower Cholesky factor C of the reversed
					// matrix, so L = J C⁻ᵀ J.
					rev := make([]int, n) // rev[r] = user index at reversed position r
					for p := range n {
						rev[n-1-p] = f.order[p]
					}
					thetaRev := mat.NewSymDense(n, nil)
					for a := range n {
						for b := 0; b <= a; b++ {
							thetaRev.SetSym(a, b, theta.At(rev[a], rev[b]))
						}
					}
					cRev := denseCholesky(t, thetaRev)
					var c mat.TriDense
					cRev.LTo(&c)
					var cInv mat.TriDense
					if err := cInv.InverseTri(&c); err != nil {
						t.Fatal(err)
					}
					// L_pos[p][q] = (C⁻ᵀ)[n-1-p][n-1-q] = C⁻¹[n-1-q][n-1-p].
					var num, den float64
					for j := range n {
						rows, vals := f.col(j)
						for kk, p := range rows {
							want := cInv.At(n-1-j, n-1-int(p))
							num += (vals[kk] - want) * (vals[kk] - want)
							den += want * want
						}
					}
					errL := math.Sqrt(num / den)

					logDet := chol.LogDet()
					errLogDet := math.Abs(f.LogDet()-logDet) / math.Abs(logDet)

					rng := rand.New(rand.NewPCG(3, 3))
					b := make([]float64, n)
					for i := range b {
						b[i] = rng.NormFloat64()
					}
					var want mat.VecDense
					if err := chol.SolveVecTo(&want, mat.NewVecDense(n, b)); err != nil {
						t.Fatal(err)
					}
					errSolve := relativeError(f.SolveTo(nil, b), want.RawVector().Data)

					t.Logf("cond≈%.3g tol=%.3g: rel err L %.3g, log det %.3g, solve %.3g", cond, tol, errL, errLogDet, errSolve)
					if errL > tol || errLogDet > tol || errSolve > tol {
						t.Errorf("errors L %.3g, log det %.3g, solve %.3g exceed %.3g (cond %.3g)", errL, errLogDet, errSolve, tol, cond)
					}
				})
			}
		}
	}
}

func TestWorkersGiveIdenticalBits(t *testing.T) {
	// Property (DESIGN.md §4): columns are independent, so the bits cannot depend on the
	// number of workers.
	n := 5000
	if testing.Short() {
		n = 2000
	}
	for _, set := range []Settings{{Rho: 3}, {Neighbors: 20}} {
		t.Run(fmt.Sprintf("rho=%g/m=%d/n=%d", set.Rho, set.Neighbors, n), func(t *testing.T) {
			points := clusteredPoints(n, 2, 5)
			k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
			var ref *Factor
			for _, workers := range []int{1, 2, 7} {
				s := set
				s.Workers = workers
				f, err := New(context.Background(), points, 2, k, &s)
				if err != nil {
					t.Fatal(err)
				}
				if ref == nil {
					ref = f
					continue
				}
				if f.NNZ() != ref.NNZ() {
					t.Fatalf("workers=%d: nnz %d, want %d", workers, f.NNZ(), ref.NNZ())
				}
				for j := range f.n {
					rows, vals := f.col(j)
					refRows, refVals := ref.col(j)
					for i := range vals {
						if math.Float64bits(vals[i]) != math.Float64bits(refVals[i]) || rows[i] != refRows[i] {
							t.Fatalf("workers=%d: column %d entry %d differs", workers, j, i)
						}
					}
				}
			}
		})
	}
}

func TestDiagonalOfLTThetaLIsOne(t *testing.T) {
	// At the KL-optimal factor every column satisfies L_{s,j}ᵀ Θ_{s,s} L_{s,j} = 1 (from the
	// closed form L_{s,j} = Θ_{s,s}⁻¹e₁/√(e₁ᵀΘ_{s,s}⁻¹e₁), Schäfer–Katzfuss–Owhadi 2021,
	// Theorem 2.1), so tr(LᵀΘL) = N and log det Θ̃ − log det Θ = 2·KL exactly.
	const tolerance = 1e-9
	n := 1200
	for _, family := range allFamilies {
		for _, set := range []Settings{{Rho: 2}, {Neighbors: 10}} {
			t.Run(fmt.Sprintf("%v/rho=%g/m=%d/n=%d", family, set.Rho, set.Neighbors, n), func(t *testing.T) {
				points := uniformPoints(n, 2, 11)
				k := kernels.Stationary{Family: family, Dimension: 2, LengthScale: 0.2, Nugget: 1e-4}
				f, err := New(context.Background(), points, 2, k, &set)
				if err != nil {
					t.Fatal(err)
				}
				theta := denseKernelMatrix(k, points, 2)
				chol := denseCholesky(t, theta)
				kl, trace := klDivergence(f, theta, chol.LogDet())
				if math.Abs(trace-float64(n)) > tolerance*float64(n) {
					t.Errorf("tr(LᵀΘL) = %.12g, want N = %d", trace, n)
				}
				gap := f.LogDet() - chol.LogDet()
				if math.Abs(gap-2*kl) > tolerance*(math.Abs(chol.LogDet())+float64(n)) {
					t.Errorf("log det Θ̃ − log det Θ = %.12g, 2·KL = %.12g", gap, 2*kl)
				}
				if kl < -tolerance*float64(n) {
					t.Errorf("KL = %g < 0", kl)
				}
			})
		}
	}
}

func TestOperationsAreConsistent(t *testing.T) {
	// Algebraic identities of M = Π L Πᵀ checked against a dense copy of M built entry by entry
	// (gonum mat as reference): M x, Mᵀ x, M⁻¹ b, M⁻ᵀ b, Θ̃⁻¹ b = M Mᵀ b, Θ̃ v = M⁻ᵀ M⁻¹ v.
	const tolerance = 1e-10
	for _, n := range []int{1, 2, 3, 64, 700} {
		t.Run(fmt.Sprintf("n=%d", n), func(t *testing.T) {
			points := uniformPoints(n, 2, 2)
			k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.2}
			f, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 8})
			if err != nil {
				t.Fatal(err)
			}
			m := denseL(f)
			rng := rand.New(rand.NewPCG(4, 4))
			x := make([]float64, n)
			for i := range x {
				x[i] = rng.NormFloat64()
			}
			xv := mat.NewVecDense(n, x)
			var want mat.VecDense
			check := func(name string, got []float64, want *mat.VecDense) {
				t.Helper()
				if e := relativeError(got, want.RawVector().Data); e > tolerance {
					t.Errorf("%s: relative error %g", name, e)
				}
			}
			want.MulVec(m, xv)
			check("MulLTo", f.MulLTo(nil, x), &want)
			want.MulVec(m.T(), xv)
			check("MulLTTo", f.MulLTTo(nil, x), &want)
			if err := want.SolveVec(m, xv); err != nil {
				t.Fatal(err)
			}
			check("SolveLTo", f.SolveLTo(nil, x), &want)
			if err := want.SolveVec(m.T(), xv); err != nil {
				t.Fatal(err)
			}
			check("SolveLTTo", f.SolveLTTo(nil, x), &want)
			var prec mat.Dense
			prec.Mul(m, m.T())
			want.MulVec(&prec, xv)
			check("SolveTo", f.SolveTo(nil, x), &want)
			if err := want.SolveVec(&prec, xv); err != nil {
				t.Fatal(err)
			}
			check("MulCovTo", f.MulCovTo(nil, x), &want)
			// SolveTo in place and SolveColumnsTo agree with SolveTo.
			ref := f.SolveTo(nil, x)
			inPlace := append([]float64(nil), x...)
			f.SolveTo(inPlace, inPlace)
			b := mat.NewDense(n, 3, nil)
			for c := range 3 {
				b.SetCol(c, x)
			}
			cols := f.SolveColumnsTo(nil, b, 2)
			for i := range n {
				if inPlace[i] != ref[i] || cols.At(i, 2) != ref[i] {
					t.Fatalf("in-place or column solve differs at %d", i)
				}
			}
		})
	}
}

func TestSampleCovariance(t *testing.T) {
	// Law of large numbers: the empirical covariance of S draws from N(0, Θ̃) converges to Θ̃
	// with standard error about √((Θ̃ᵢᵢΘ̃ⱼⱼ + Θ̃ᵢⱼ²)/S) (Wishart variance, a textbook fact).
	const draws = 40000
	points := uniformPoints(6, 2, 9)
	k := kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.5}
	f, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 2})
	if err != nil {
		t.Fatal(err)
	}
	n := f.N()
	cov := mat.NewDense(n, n, nil)
	e := make([]float64, n)
	for j := range n { // Θ̃ column by column
		clear(e)
		e[j] = 1
		cov.SetCol(j, f.MulCovTo(nil, e))
	}
	rng := rand.New(rand.NewPCG(1, 1))
	emp := mat.NewDense(n, n, nil)
	x := make([]float64, n)
	for range draws {
		f.SampleTo(x, rng)
		for i := range n {
			for j := range n {
				emp.Set(i, j, emp.At(i, j)+x[i]*x[j]/draws)
			}
		}
	}
	for i := range n {
		for j := range n {
			se := math.Sqrt((cov.At(i, i)*cov.At(j, j) + cov.At(i, j)*cov.At(i, j)) / draws)
			if math.Abs(emp.At(i, j)-cov.At(i, j)) > 5*se {
				t.Errorf("cov[%d,%d]: empirical %.4f, Θ̃ %.4f (5 s.e. = %.4f)", i, j, emp.At(i, j), cov.At(i, j), 5*se)
			}
		}
	}
}

func TestInputErrors(t *testing.T) {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.3}
	ctx := context.Background()
	dup := []float64{0, 0, 1, 1, 0.5, 0.2, 1, 1, 0.3, 0.9}
	if _, err := New(ctx, dup, 2, k, nil); err == nil || !strings.Contains(err.Error(), "points 1 and 3 coincide") &&
		!strings.Contains(err.Error(), "points 3 and 1 coincide") {
		t.Errorf("duplicates: err = %v, want one naming points 1 and 3", err)
	}
	withNugget := k
	withNugget.Nugget = 1e-3
	if _, err := New(ctx, dup, 2, withNugget, nil); err != nil {
		t.Errorf("duplicates with a nugget: %v", err)
	}
	if _, err := New(ctx, []float64{0, 0, math.NaN(), 1}, 2, k, nil); err == nil {
		t.Error("NaN coordinate accepted")
	}
	if _, err := New(ctx, nil, 2, k, nil); err == nil {
		t.Error("empty input accepted")
	}
	cancelled, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := New(cancelled, uniformPoints(3000, 2, 1), 2, k, nil); err == nil {
		t.Error("cancelled context accepted")
	}
	// A single point: L = 1/√Θ₁₁, log det = log Θ₁₁.
	one, err := New(ctx, []float64{0.3, 0.4}, 2, kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 1, Variance: 4}, nil)
	if err != nil || math.Abs(one.LogDet()-math.Log(4)) > 1e-15 {
		t.Errorf("one point: log det %v, err %v; want log 4", one.LogDet(), err)
	}
}

func TestColumnAllocatesNothing(t *testing.T) {
	points := uniformPoints(2000, 2, 1)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	f, err := New(context.Background(), points, 2, k, &Settings{Neighbors: 30})
	if err != nil {
		t.Fatal(err)
	}
	maxRows := 0
	for s := range f.Supernodes() {
		maxRows = max(maxRows, int(f.superRowStart[s+1]-f.superRowStart[s]))
	}
	w := newWorkspace(maxRows)
	s := 0
	allocs := testing.AllocsPerRun(200, func() {
		if _, err := f.supernode(s%f.Supernodes(), w); err != nil {
			t.Fatal(err)
		}
		s++
	})
	if allocs != 0 {
		t.Errorf("supernode allocates %v times", allocs)
	}
}

var _ = ordering.Ordering{}

func TestKLDivergenceMatchesTestFormula(t *testing.T) {
	// The exported KLDivergence against this package's own test oracle (dense_test.go), on an
	// aggregated pattern, and KL = 0 (to rounding) for the full pattern.
	points := uniformPoints(500, 2, 8)
	k := kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.2}
	theta := denseKernelMatrix(k, points, 2)
	logDet := denseCholesky(t, theta).LogDet()
	for _, s := range []Settings{{Neighbors: 10}, {Rho: math.Inf(1)}} {
		f, err := New(context.Background(), points, 2, k, &s)
		if err != nil {
			t.Fatal(err)
		}
		kl, trace := f.KLDivergence(theta, logDet)
		wantKL, wantTrace := klDivergence(f, theta, logDet)
		if math.Abs(kl-wantKL) > 1e-9*(1+wantKL) || math.Abs(trace-wantTrace) > 1e-9*wantTrace {
			t.Errorf("rho=%g m=%d: KL %g, trace %g; test oracle %g, %g", s.Rho, s.Neighbors, kl, trace, wantKL, wantTrace)
		}
		if math.IsInf(s.Rho, 1) && math.Abs(kl) > 1e-8*float64(f.N()) {
			t.Errorf("full pattern: KL %g, want 0 to rounding", kl)
		}
	}
}
