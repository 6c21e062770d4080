package bench

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

func smallFactor(t *testing.T, n int, s *cholesky.Settings) (*cholesky.Factor, *DenseReference, []float64) {
	t.Helper()
	points := Uniform(n, 2, 1)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.2}
	f, err := cholesky.New(context.Background(), points, 2, k, s)
	if err != nil {
		t.Fatal(err)
	}
	ref, err := NewDenseReference(context.Background(), points, 2, k, 1)
	if err != nil {
		t.Fatal(err)
	}
	return f, ref, points
}

func TestKLDivergenceAgainstDenseFormula(t *testing.T) {
	// Reference: the Gaussian KL formula evaluated with dense gonum matrices,
	// 2·KL = tr(Θ̃⁻¹Θ) − N + log det Θ̃ − log det Θ with Θ̃⁻¹ = M Mᵀ (DESIGN.md §4), M built
	// column by column from MulLTo, tr by mat.Trace of MᵀΘM, log det Θ̃ from gonum's LU.
	const tolerance = 1e-8 // relative; both evaluate the same sums in different orders
	for _, s := range []cholesky.Settings{{Rho: 2}, {Neighbors: 5}, {Rho: math.Inf(1)}} {
		const n = 150
		t.Run(fmt.Sprintf("n=%d/rho=%g/m=%d", n, s.Rho, s.Neighbors), func(t *testing.T) {
			f, ref, _ := smallFactor(t, n, &s)
			kl, trace := KLDivergence(f, ref)
			m := mat.NewDense(n, n, nil)
			e := make([]float64, n)
			for j := range n {
				e[j] = 1
				m.SetCol(j, f.MulLTo(nil, e))
				e[j] = 0
			}
			var tm, mtm mat.Dense
			tm.Mul(ref.Theta, m)
			mtm.Mul(m.T(), &tm)
			wantTrace := mat.Trace(&mtm)
			var prec mat.Dense
			prec.Mul(m, m.T())
			logDetPrec, sign := mat.LogDet(&prec)
			if sign <= 0 {
				t.Fatal("M Mᵀ is not positive definite")
			}
			want := 0.5 * (wantTrace - n - logDetPrec - ref.LogDet)
			if math.Abs(trace-wantTrace) > tolerance*wantTrace {
				t.Errorf("trace %v, dense %v", trace, wantTrace)
			}
			if math.Abs(kl-want) > tolerance*math.Max(1, math.Abs(want)) {
				t.Errorf("KL %v, dense %v", kl, want)
			}
			if math.IsInf(s.Rho, 1) && math.Abs(kl) > 1e-8 {
				// The full pattern is the exact factor: KL = 0 to rounding (DESIGN.md §4).
				t.Errorf("full pattern KL %v, want 0", kl)
			}
		})
	}
}

func TestMeasureAccuracyFullPattern(t *testing.T) {
	// Fact of the method (DESIGN.md §4): ρ = ∞ gives the exact factor, so every error vanishes
	// to rounding (cond(Θ)·ε; cond here is below 1e6, measured in the test log).
	const tolerance = 1e-8
	f, ref, _ := smallFactor(t, 120, &cholesky.Settings{Rho: math.Inf(1)})
	a := MeasureAccuracy(f, ref, 3)
	t.Logf("%+v, cond %.3g", a, ref.Cholesky.Cond())
	for name, v := range map[string]float64{"log det": a.LogDetError, "solve": a.SolveError, "mul": a.MulError, "trace−N": math.Abs(a.Trace-120) / 120} {
		if v > tolerance {
			t.Errorf("%s error %g", name, v)
		}
	}
}

func TestNystromAgainstDense(t *testing.T) {
	// Reference: Θ_r = Θ_{:,I} Θ_{I,I}⁻¹ Θ_{I,:} + σ²I formed densely with gonum, its KL by
	// the Gaussian formula ½[tr(Θ_r⁻¹Θ) − N + log det Θ_r − log det Θ], and its solve by
	// gonum's Cholesky; the baseline's Woodbury forms must agree.
	const tolerance = 1e-6 // relative; Woodbury and dense forms round differently
	const n = 120
	_, ref, _ := smallFactor(t, n, nil)
	inducing := []int{3, 17, 40, 41, 77, 90, 101, 5, 60, 33}
	ny := NewNystrom(ref, inducing)
	for _, r := range []int{1, 4, 10} {
		t.Run(fmt.Sprintf("n=%d/r=%d", n, r), func(t *testing.T) {
			got, err := ny.Measure(r, 7)
			if err != nil {
				t.Fatal(err)
			}
			kII := mat.NewSymDense(r, nil)
			kNI := mat.NewDense(n, r, nil)
			for a := range r {
				for b := range r {
					kII.SetSym(a, b, ref.Theta.At(inducing[a], inducing[b]))
				}
				for i := range n {
					kNI.Set(i, a, ref.Theta.At(i, inducing[a]))
				}
			}
			var inv mat.SymDense
			var c mat.Cholesky
			if !c.Factorize(kII) {
				t.Fatal("inducing block not positive definite")
			}
			if err := c.InverseTo(&inv); err != nil {
				t.Fatal(err)
			}
			var tmp, low mat.Dense
			tmp.Mul(kNI, &inv)
			low.Mul(&tmp, kNI.T())
			approx := mat.NewSymDense(n, nil)
			for i := range n {
				for j := i; j < n; j++ {
					v := 0.5 * (low.At(i, j) + low.At(j, i))
					if i == j {
						v += got.Nugget
					}
					approx.SetSym(i, j, v)
				}
			}
			var ac mat.Cholesky
			if !ac.Factorize(approx) {
				t.Fatal("Θ_r not positive definite")
			}
			var sol mat.Dense
			if err := ac.SolveTo(&sol, ref.Theta); err != nil {
				t.Fatal(err)
			}
			wantKL := 0.5 * (mat.Trace(&sol) - n + ac.LogDet() - ref.LogDet)
			if math.Abs(got.KL-wantKL) > tolerance*math.Abs(wantKL) {
				t.Errorf("KL %v, dense %v", got.KL, wantKL)
			}
			b := Normal(n, 7)
			var x mat.VecDense
			if err := ac.SolveVecTo(&x, mat.NewVecDense(n, b)); err != nil {
				t.Fatal(err)
			}
			wantSolve := RelativeError(x.RawVector().Data, ref.Solve(b))
			if math.Abs(got.SolveError-wantSolve) > tolerance*wantSolve {
				t.Errorf("solve error %v, dense %v", got.SolveError, wantSolve)
			}
		})
	}
}

func TestNystromRankAndFitSlope(t *testing.T) {
	// NystromRank: 12 bytes per nonzero against 8 per entry of the N×r factor (its contract).
	for _, c := range []struct{ nnz, n, want int }{{3000, 100, 45}, {100, 100, 2}, {1, 1000, 1}} {
		if got := NystromRank(c.nnz, c.n); got != c.want {
			t.Errorf("NystromRank(%d, %d) = %d, want %d", c.nnz, c.n, got, c.want)
		}
	}
	// FitSlope recovers the exponent of an exact power law y = 3x^1.5.
	x := []float64{1e3, 1e4, 1e5, 1e6, 0}
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = 3 * math.Pow(v, 1.5)
	}
	if s, used := FitSlope(x, y); math.Abs(s-1.5) > 1e-12 || used != 4 {
		t.Errorf("FitSlope = %v from %d points, want 1.5 from 4", s, used)
	}
}

func TestRunCG(t *testing.T) {
	// With the exact factor (ρ = ∞) as preconditioner CG converges in one or two iterations
	// (Golub & Van Loan, Matrix Computations, 4th ed., §11.3: as many iterations as distinct
	// eigenvalues; rounding allows one more); without one it needs more and still reaches
	// the tolerance on this small, well-conditioned case.
	f, ref, _ := smallFactor(t, 200, &cholesky.Settings{Rho: math.Inf(1)})
	set := &cholesky.IterativeSettings{Tolerance: 1e-8, MaxIterations: 1000}
	exact, err := RunCG(context.Background(), ref, f, false, "rho=inf", set, 1)
	if err != nil {
		t.Fatal(err)
	}
	none, err := RunCG(context.Background(), ref, nil, false, "none", set, 1)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("exact: %+v; none: %+v", exact, none)
	if exact.Iterations > 2 || !exact.Converged || !none.Converged || none.Iterations <= exact.Iterations {
		t.Errorf("exact %+v, none %+v", exact, none)
	}
	// The spectrum estimates: with the exact factor P·A = I, so both Ritz values are 1 to
	// rounding (slack 1e-8, our choice); without a preconditioner they estimate the extreme
	// eigenvalues of Θ, here against gonum's mat.EigenSym (within 5 %, our choice; from inside
	// the spectrum by Cauchy interlacing, slack 1e-9 for rounding).
	if math.Abs(exact.RitzMin-1) > 1e-8 || math.Abs(exact.RitzMax-1) > 1e-8 || math.Abs(exact.Kappa-1) > 2e-8 {
		t.Errorf("exact factor: Ritz values [%.12g, %.12g], κ %.12g; want 1", exact.RitzMin, exact.RitzMax, exact.Kappa)
	}
	var eig mat.EigenSym
	if !eig.Factorize(ref.Theta, false) {
		t.Fatal("EigenSym failed")
	}
	values := eig.Values(nil)
	lo, hi := values[0], values[len(values)-1]
	if none.RitzMin < lo*(1-1e-9) || none.RitzMax > hi*(1+1e-9) || none.RitzMin > 1.05*lo || none.RitzMax < hi/1.05 {
		t.Errorf("no preconditioner: Ritz values [%g, %g], gonum's spectrum [%g, %g]", none.RitzMin, none.RitzMax, lo, hi)
	}
}

func TestCGBound(t *testing.T) {
	// The classical bound 2((√κ−1)/(√κ+1))ᵏ (Golub and Van Loan, Matrix Computations, 4th ed.,
	// Theorem 11.3.3): κ = 9 gives the factor 1/2 per iteration, so tol = 2⁻²⁰ needs
	// k = 21 (2·2⁻²¹ = 2⁻²⁰); κ = 1 needs none. CGBoundKappa inverts it.
	if k := CGBoundIterations(9, math.Ldexp(1, -20)); math.Abs(k-21) > 1e-12 {
		t.Errorf("κ = 9: k = %v, want 21", k)
	}
	if k := CGBoundIterations(1, 1e-8); k != 0 {
		t.Errorf("κ = 1: k = %v, want 0", k)
	}
	for _, kappa := range []float64{1.01, 1.5, 3, 100, 1e6} {
		k := CGBoundIterations(kappa, 1e-8)
		if back := CGBoundKappa(k, 1e-8); math.Abs(back-kappa) > 1e-9*kappa {
			t.Errorf("κ = %g: k = %g, back %g", kappa, k, back)
		}
	}
}

func TestRunCGWithoutSupernodes(t *testing.T) {
	// The CG comparison adds m = 20 and greedy m = 20 without supernodes (λ = 1) when the
	// factors have λ > 1 (0 is the library default, 1.5), and not when they already have
	// λ = 1; the rows are checked by name, convergence and a κ estimate ≥ 1.
	for _, lambda := range []float64{0, 1} {
		t.Run(fmt.Sprintf("lambda=%g", lambda), func(t *testing.T) {
			no := false
			c := Config{N: 300, PointSets: []string{"uniform"}, Kernels: []string{"matern32"}, Rhos: []float64{2}, Neighbors: []int{20}, Greedy: []int{20}, JointGreedy: []int{},
				Lambda: lambda, SweepCase: "uniform/matern32", Lambdas: []float64{}, NuggetSweep: []float64{}, WorkerCounts: []int{}, Nystrom: &no, ScalingN: []int{}, ExactSolveN: []int{}}
			rep, err := Run(context.Background(), c, nil)
			if err != nil {
				t.Fatal(err)
			}
			got := map[string]CGRow{}
			for _, x := range rep.CG {
				got[x.Preconditioner] = x
			}
			for _, name := range []string{"m=20" + unaggregatedSuffix, "greedy-m=20" + unaggregatedSuffix} {
				x, ok := got[name]
				if ok != (lambda != 1) {
					t.Fatalf("row %s present %v, want %v (rows %v, notes %v)", name, ok, lambda != 1, slices.Collect(maps.Keys(got)), rep.Notes)
				}
				if ok && (!x.Converged || !(x.Kappa >= 1)) {
					t.Errorf("%s: %+v", name, x)
				}
			}
		})
	}
}

func TestRunWritesReport(t *testing.T) {
	// End to end on a tiny sweep: every file is written, the tables read back with
	// encoding/csv and encoding/json, and the Markdown starts with the machine.
	no := false
	c := Config{N: 150, PointSets: []string{"uniform", "clustered"}, Kernels: []string{"matern12", "gaussian"}, Rhos: []float64{2, 3}, Neighbors: []int{5}, Greedy: []int{5}, JointGreedy: []int{8},
		SweepCase: "uniform/matern12", Lambdas: []float64{1, 2}, NuggetSweep: []float64{0, 1e-2}, NuggetN: 120, WorkerCounts: []int{1, 2}, WorkersN: 700,
		Nystrom: &no, CGCases: []string{"uniform/matern12"}, ScalingN: []int{300, 600}, ExactSolveN: []int{200}, ExactResidualLimit: 600}
	if !testing.Short() {
		yes := true
		c.Nystrom = &yes
	}
	rep, err := Run(context.Background(), c, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := len(rep.Factors), 2*2*5; got != want {
		t.Fatalf("%d factor rows, want %d (notes %v)", got, want, rep.Notes)
	}
	dir := t.TempDir()
	if err := rep.WriteFiles(dir); err != nil {
		t.Fatal(err)
	}
	md, err := os.ReadFile(filepath.Join(dir, "report.md"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(string(md), "# kchol accuracy and timing report\n\nMachine: ") {
		t.Errorf("report starts %q", string(md[:80]))
	}
	// One greedy-against-nearest row per point set and kernel (both at m = 5).
	if i := strings.Index(string(md), "## Greedy selection against nearest neighbours at equal m"); i < 0 {
		t.Error("report has no greedy comparison")
	} else if rows := strings.Count(strings.SplitN(string(md[i:]), "\n\n", 3)[1], "\n| "); rows != 2*2 {
		// Data rows follow the header and the |---| line, each after a newline.
		t.Errorf("greedy comparison has %d rows, want %d", rows, 2*2)
	}
	file, err := os.Open(filepath.Join(dir, "factors.csv"))
	if err != nil {
		t.Fatal(err)
	}
	records, err := csv.NewReader(file).ReadAll()
	file.Close()
	if err != nil || len(records) != len(rep.Factors)+1 {
		t.Fatalf("factors.csv: %d records, err %v", len(records), err)
	}
	data, err := os.ReadFile(filepath.Join(dir, "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	var back Report
	if err := json.Unmarshal(data, &back); err != nil {
		t.Fatal(err)
	}
	if len(back.Factors) != len(rep.Factors) || back.Factors[0].KL != rep.Factors[0].KL {
		t.Errorf("results.json does not round-trip the factor rows")
	}
	for _, name := range []string{"kl_vs_nnz_uniform.svg", "kl_vs_rho_clustered.svg", "time_vs_n.svg", "speedup_vs_n.svg"} {
		svg, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil || !strings.Contains(string(svg), "<svg") {
			t.Errorf("%s: not an SVG (err %v)", name, err)
		}
	}
	// CG runs on Θ + σ²I with the default CG nugget 1e-6 (matern12 has none of its own): every
	// row says so, and CG with a factor of that operator converges on this small case.
	if len(rep.CG) == 0 {
		t.Error("no CG rows")
	}
	for _, x := range rep.CG {
		if x.Nugget != 1e-6 || !(x.Cond >= 1) {
			t.Errorf("CG row %s: nugget %g, cond %g; want 1e-6 and ≥ 1", x.Preconditioner, x.Nugget, x.Cond)
		}
		if x.Preconditioner != "none" && x.Preconditioner != "diagonal" && (!x.Converged || x.Error > 1e-4) {
			t.Errorf("CG with %s: converged %v, error against dense %g", x.Preconditioner, x.Converged, x.Error)
		}
	}
	if len(rep.Exact) != 1 || rep.Exact[0].Residual > 1e-10 || rep.Exact[0].ErrorVsDense > rep.Exact[0].Bound {
		t.Errorf("exact solve row %+v", rep.Exact)
	}
	// Settings sweeps: 2 patterns × (2 λ + 2 nuggets + 2 worker counts).
	counts := map[string]int{}
	for _, x := range rep.Settings {
		counts[x.Sweep]++
		if x.HasAccuracy != (x.Sweep != "workers") || (x.HasAccuracy && !(x.KL >= -1e-9)) {
			t.Errorf("settings row %+v", x)
		}
	}
	if counts["lambda"] != 4 || counts["nugget"] != 4 || counts["workers"] != 4 {
		t.Errorf("settings rows by sweep %v, want 4 each", counts)
	}
	// λ = 1 gives one supernode per column; aggregation only adds rows, so KL cannot grow
	// (the same property as TestSupernodesNeverIncreaseKL in package cholesky).
	byPattern := map[string][]SettingsRow{}
	for _, x := range rep.Settings {
		if x.Sweep == "lambda" {
			byPattern[x.Pattern] = append(byPattern[x.Pattern], x)
		}
	}
	for name, rows := range byPattern {
		if rows[0].Supernodes != rows[0].N || rows[1].KL > rows[0].KL*(1+1e-9)+1e-9 {
			t.Errorf("%s: λ = 1 has %d supernodes for N = %d; KL %g at λ = 2 against %g", name, rows[0].Supernodes, rows[0].N, rows[1].KL, rows[0].KL)
		}
	}
}

func TestConfigValidate(t *testing.T) {
	for _, c := range []Config{
		{PointSets: []string{"moon"}},
		{Kernels: []string{"matern72"}},
		{Rhos: []float64{-1}},
		{Neighbors: []int{0}},
		{CGCases: []string{"uniform"}},
		{CGNugget: func() *float64 { v := -1e-6; return &v }()},
		{ScalingN: []int{1}},
		{Nuggets: map[string]float64{"matern12": -1}},
	} {
		if err := c.WithDefaults().Validate(); err == nil {
			t.Errorf("%+v: no error", c)
		}
	}
	if err := (Config{}).WithDefaults().Validate(); err != nil {
		t.Errorf("defaults: %v", err)
	}
}

func TestCPUModel(t *testing.T) {
	path := filepath.Join(t.TempDir(), "cpuinfo")
	if err := os.WriteFile(path, []byte("processor\t: 0\nmodel name\t: Example CPU 9000\nflags\t: x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if got := cpuModel(path); got != "Example CPU 9000" {
		t.Errorf("cpuModel = %q", got)
	}
	if got := cpuModel(filepath.Join(t.TempDir(), "missing")); got != "unknown" {
		t.Errorf("missing file: %q", got)
	}
}
