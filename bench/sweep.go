package bench

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"strings"
	"time"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// Config describes a sweep. The zero value of a field means its default, given in its
// comment; a Config can be read from JSON with the same field names as its tags.
type Config struct {
	// N is the number of points of the dense comparisons. 0 means 8000.
	N int `json:"n"`
	// DenseLimit is the largest N with a dense reference. 0 means 8000.
	DenseLimit int `json:"dense_limit"`
	// PointSets are names of PointSet. nil means uniform and clustered.
	PointSets []string `json:"point_sets"`
	// Kernels are family names (matern12, matern32, matern52, gaussian). nil means all four.
	Kernels []string `json:"kernels"`
	// LengthScale of every kernel. 0 means 0.1.
	LengthScale float64 `json:"length_scale"`
	// Nuggets by family name. nil means 1e-6 for the Gaussian kernel, none otherwise.
	Nuggets map[string]float64 `json:"nuggets"`
	// Rhos of the radius pattern. nil means 1, 2, …, 8.
	Rhos []float64 `json:"rhos"`
	// Neighbors m of the nearest-neighbour pattern. nil means 5, 10, 20, 30, 50.
	Neighbors []int `json:"neighbors"`
	// Greedy are the m of the greedy pattern (cholesky.Settings.Greedy, 4m candidates). nil
	// means 10, 20, 30; an empty list none.
	Greedy []int `json:"greedy"`
	// JointGreedy are the m (shared points per supernode) of the joint greedy pattern
	// (cholesky.Settings.JointGreedy, 4m candidates). nil means 20, 40, 60 (its nnz per column
	// at m is far below the per-column patterns', so compare at equal nnz); empty none.
	JointGreedy []int `json:"joint_greedy"`
	// Lambda is the supernode aggregation λ of every factor. 0 means the library default
	// (1.5); 1 means none.
	Lambda float64 `json:"lambda"`
	// SweepCase is the "pointset/kernel" case of the settings sweeps (λ, nugget, workers).
	// "" means uniform/matern32.
	SweepCase string `json:"sweep_case"`
	// Lambdas are the λ of the supernode sweep, on SweepCase at N with its dense reference.
	// nil means 1, 1.25, 1.5, 2; an empty list none.
	Lambdas []float64 `json:"lambdas"`
	// NuggetSweep are the nuggets of the noise sweep (the kernel matrix Θ + σ²I factored
	// directly), on SweepCase at NuggetN points. nil means 0, 1e-4, 1e-2; an empty list none.
	NuggetSweep []float64 `json:"nugget_sweep"`
	// NuggetN is the size of the noise sweep. 0 means 2000.
	NuggetN int `json:"nugget_n"`
	// WorkerCounts are the worker counts of the timing sweep on SweepCase's points at
	// WorkersN. nil means 1, 2, 4, … up to GOMAXPROCS; an empty list none.
	WorkerCounts []int `json:"worker_counts"`
	// WorkersN is the size of the worker sweep. 0 means 100000.
	WorkersN int `json:"workers_n"`
	// Nystrom enables the equal-memory Nyström baseline. nil means true.
	Nystrom *bool `json:"nystrom"`
	// CGCases are "pointset/kernel" cases with conjugate-gradient comparisons. nil means
	// uniform/matern32; an empty list none.
	CGCases []string `json:"cg_cases"`
	// CGTolerance is the CG relative residual. 0 means 1e-8.
	CGTolerance float64 `json:"cg_tolerance"`
	// CGMaxIterations is the CG iteration limit. 0 means 3000.
	CGMaxIterations int `json:"cg_max_iterations"`
	// CGNugget is the nugget σ² added to a CG case's kernel: CG then solves (Θ + σ²I) x = b
	// with factors of Θ + σ²I. CG in floating point does not bring the relative residual much
	// below about cond·ε (common practice; Golub and Van Loan, Matrix Computations, treat it
	// in their chapter on CG, cited from memory), so a tolerance of 1e-8 needs cond well below
	// 1e8, which the nugget-free Matérn 3/2 case at length scale 0.1 (cond ≈ 2e11) does not
	// have: there every preconditioned run stalled between 1e-7 and 1e-3 in 300 iterations.
	// nil means 1e-6; 0 none.
	CGNugget *float64 `json:"cg_nugget"`
	// ScalingN are the sizes of the time-against-N sweep (uniform 2D points, Matérn 3/2, the
	// patterns ρ = 3 and m = 30). nil means 10³, 2·10³, 4·10³, 8·10³, 1.6·10⁴, 10⁵, 10⁶.
	ScalingN []int `json:"scaling_n"`
	// ExactResidualLimit is the largest N of the scaling sweep whose factor-only solve gets
	// its residual ‖Θx̃ − b‖/‖b‖ from the exact matrix-free product (O(N²)). 0 means 20000.
	ExactResidualLimit int `json:"exact_residual_limit"`
	// ExactSolveN are sizes for kchol's exact iterative solve (uniform 2D, Matérn 1/2, length
	// scale 0.05, m = 30, tolerance 1e-10), compared with the dense solve when N ≤ DenseLimit.
	// nil means 8000 and 20000; an empty list none.
	ExactSolveN []int `json:"exact_solve_n"`
	// Seed of the point sets and right-hand sides. 0 means 1.
	Seed uint64 `json:"seed"`
	// Workers of the factor and the exact product. 0 means GOMAXPROCS.
	Workers int `json:"workers"`
}

// WithDefaults returns c with every zero field replaced by its default.
func (c Config) WithDefaults() Config {
	if c.N == 0 {
		c.N = 8000
	}
	if c.DenseLimit == 0 {
		c.DenseLimit = 8000
	}
	if c.PointSets == nil {
		c.PointSets = []string{"uniform", "clustered"}
	}
	if c.Kernels == nil {
		c.Kernels = []string{"matern12", "matern32", "matern52", "gaussian"}
	}
	if c.LengthScale == 0 {
		c.LengthScale = 0.1
	}
	if c.Nuggets == nil {
		c.Nuggets = map[string]float64{"gaussian": 1e-6}
	}
	if c.Rhos == nil {
		c.Rhos = []float64{1, 2, 3, 4, 5, 6, 7, 8}
	}
	if c.Greedy == nil {
		c.Greedy = []int{10, 20, 30}
	}
	if c.JointGreedy == nil {
		c.JointGreedy = []int{20, 40, 60}
	}
	if c.SweepCase == "" {
		c.SweepCase = "uniform/matern32"
	}
	if c.Lambdas == nil {
		c.Lambdas = []float64{1, 1.25, 1.5, 2}
	}
	if c.NuggetSweep == nil {
		c.NuggetSweep = []float64{0, 1e-4, 1e-2}
	}
	if c.NuggetN == 0 {
		c.NuggetN = 2000
	}
	if c.WorkerCounts == nil {
		c.WorkerCounts = defaultWorkerCounts()
	}
	if c.WorkersN == 0 {
		c.WorkersN = 100000
	}
	if c.Neighbors == nil {
		c.Neighbors = []int{5, 10, 20, 30, 50}
	}
	if c.Nystrom == nil {
		t := true
		c.Nystrom = &t
	}
	if c.CGCases == nil {
		c.CGCases = []string{"uniform/matern32"}
	}
	if c.CGTolerance == 0 {
		c.CGTolerance = 1e-8
	}
	if c.CGMaxIterations == 0 {
		c.CGMaxIterations = 3000
	}
	if c.CGNugget == nil {
		v := 1e-6
		c.CGNugget = &v
	}
	if c.ScalingN == nil {
		c.ScalingN = []int{1000, 2000, 4000, 8000, 16000, 100000, 1000000}
	}
	if c.ExactResidualLimit == 0 {
		c.ExactResidualLimit = 20000
	}
	if c.ExactSolveN == nil {
		c.ExactSolveN = []int{8000, 20000}
	}
	if c.Seed == 0 {
		c.Seed = 1
	}
	if c.Workers <= 0 {
		c.Workers = runtime.GOMAXPROCS(0)
	}
	return c
}

// Validate returns an error describing the first invalid field of c (after WithDefaults).
func (c Config) Validate() error {
	switch {
	case c.N < 2:
		return fmt.Errorf("bench: n = %d, want ≥ 2", c.N)
	case !(c.LengthScale > 0) || math.IsInf(c.LengthScale, 0):
		return fmt.Errorf("bench: length scale %v, want > 0", c.LengthScale)
	case !(c.CGTolerance > 0 && c.CGTolerance < 1):
		return fmt.Errorf("bench: CG tolerance %v, want in (0, 1)", c.CGTolerance)
	case c.CGMaxIterations < 1:
		return fmt.Errorf("bench: CG iteration limit %d, want ≥ 1", c.CGMaxIterations)
	case !(*c.CGNugget >= 0) || math.IsInf(*c.CGNugget, 0):
		return fmt.Errorf("bench: CG nugget %v, want ≥ 0", *c.CGNugget)
	}
	for _, p := range c.PointSets {
		if !slices.Contains(PointSetNames, p) {
			return fmt.Errorf("bench: unknown point set %q (want one of %s)", p, strings.Join(PointSetNames, ", "))
		}
	}
	for _, k := range c.Kernels {
		if _, err := kernels.ParseFamily(k); err != nil {
			return err
		}
	}
	for name, v := range c.Nuggets {
		if _, err := kernels.ParseFamily(name); err != nil {
			return err
		}
		if !(v >= 0) || math.IsInf(v, 0) {
			return fmt.Errorf("bench: nugget %v for %s, want ≥ 0", v, name)
		}
	}
	for _, r := range c.Rhos {
		if !(r > 0) {
			return fmt.Errorf("bench: ρ = %v, want > 0", r)
		}
	}
	for _, m := range slices.Concat(c.Neighbors, c.Greedy, c.JointGreedy) {
		if m < 1 {
			return fmt.Errorf("bench: m = %d, want ≥ 1", m)
		}
	}
	for _, l := range append([]float64{c.Lambda}, c.Lambdas...) {
		if l != 0 && !(l >= 1) {
			return fmt.Errorf("bench: λ = %v, want 0 (default), 1 (none) or > 1", l)
		}
	}
	if _, _, ok := cutCase(c.SweepCase); !ok {
		return fmt.Errorf("bench: sweep case %q, want pointset/kernel", c.SweepCase)
	}
	for _, v := range c.NuggetSweep {
		if !(v >= 0) || math.IsInf(v, 0) {
			return fmt.Errorf("bench: sweep nugget %v, want ≥ 0", v)
		}
	}
	for _, w := range c.WorkerCounts {
		if w < 1 {
			return fmt.Errorf("bench: %d workers, want ≥ 1", w)
		}
	}
	if c.NuggetN < 2 || c.WorkersN < 2 {
		return fmt.Errorf("bench: sweep sizes %d and %d, want ≥ 2", c.NuggetN, c.WorkersN)
	}
	for _, cs := range c.CGCases {
		p, k, ok := strings.Cut(cs, "/")
		if !ok || !slices.Contains(PointSetNames, p) {
			return fmt.Errorf("bench: CG case %q, want pointset/kernel", cs)
		}
		if _, err := kernels.ParseFamily(k); err != nil {
			return err
		}
	}
	for _, n := range append(append([]int(nil), c.ScalingN...), c.ExactSolveN...) {
		if n < 2 {
			return fmt.Errorf("bench: size %d, want ≥ 2", n)
		}
	}
	return nil
}

// PointSetNames are the point sets a Config can name, all in 2D except sphere (3D).
var PointSetNames = []string{"uniform", "clustered", "sphere", "anisotropic", "zip"}

// PointSet returns n points of the named set and their dimension: uniform, clustered and
// anisotropic in the unit square (d = 2), sphere on S² (d = 3), zip a random subset of the
// ZIP code area centroids (d = 2, rescaled by 1/4000 km to about the unit square).
func PointSet(name string, n int, seed uint64) ([]float64, int, error) {
	switch name {
	case "uniform":
		return Uniform(n, 2, seed), 2, nil
	case "clustered":
		return Clustered(n, 2, seed), 2, nil
	case "anisotropic":
		return Anisotropic(n, 2, seed), 2, nil
	case "sphere":
		return Sphere(n, seed), 3, nil
	case "zip":
		x, err := ZIPSubset(n, seed)
		if err != nil {
			return nil, 0, err
		}
		for i := range x {
			x[i] /= 4000
		}
		return x, 2, nil
	}
	return nil, 0, fmt.Errorf("bench: unknown point set %q", name)
}

// FactorRow is one factor measured against the dense reference.
type FactorRow struct {
	PointSet string `json:"point_set"`
	Kernel   string `json:"kernel"`
	N        int    `json:"n"`
	// Pattern is "radius", "neighbors", "greedy" or "joint"; Parameter is ρ or m.
	Pattern      string  `json:"pattern"`
	Parameter    float64 `json:"parameter"`
	NNZPerColumn float64 `json:"nnz_per_column"`
	Jittered     int     `json:"jittered"`
	Accuracy
	// Phase times in seconds; Total is the whole New call.
	OrderingSeconds float64 `json:"ordering_seconds"`
	PatternSeconds  float64 `json:"pattern_seconds"`
	FactorSeconds   float64 `json:"factor_seconds"`
	TotalSeconds    float64 `json:"total_seconds"`
	// DenseSeconds is gonum's dense Cholesky.Factorize alone; SpeedUp = DenseSeconds/TotalSeconds.
	DenseSeconds float64 `json:"dense_seconds"`
	SpeedUp      float64 `json:"speed_up"`
	// FactorBytes is the factor's storage; AllocatedBytes the bytes allocated during New
	// (runtime.MemStats.TotalAlloc), an upper bound on its peak heap growth.
	FactorBytes    int64 `json:"factor_bytes"`
	AllocatedBytes int64 `json:"allocated_bytes"`
}

// NystromRow is the equal-memory Nyström baseline of one factor.
type NystromRow struct {
	PointSet string `json:"point_set"`
	Kernel   string `json:"kernel"`
	// Against names the factor whose memory it matches ("rho=3", "m=30").
	Against  string  `json:"against"`
	FactorKL float64 `json:"factor_kl"`
	Inducing string  `json:"inducing"`
	Nystrom  NystromAccuracy
	Beats    bool   `json:"factor_has_lower_kl"`
	Error    string `json:"error,omitempty"`
}

// CGRow is one CG comparison.
type CGRow struct {
	PointSet string `json:"point_set"`
	Kernel   string `json:"kernel"`
	N        int    `json:"n"`
	// Nugget is the kernel's nugget in this comparison (the case's own plus Config.CGNugget).
	Nugget float64 `json:"nugget"`
	// Cond is gonum's condition estimate of the operator Θ + σ²I.
	Cond float64 `json:"cond"`
	CGRun
}

// ScalingRow is one size of the time-against-N sweep.
type ScalingRow struct {
	N               int     `json:"n"`
	Pattern         string  `json:"pattern"`
	NNZPerColumn    float64 `json:"nnz_per_column"`
	OrderingSeconds float64 `json:"ordering_seconds"`
	PatternSeconds  float64 `json:"pattern_seconds"`
	FactorSeconds   float64 `json:"factor_seconds"`
	TotalSeconds    float64 `json:"total_seconds"`
	FactorBytes     int64   `json:"factor_bytes"`
	AllocatedBytes  int64   `json:"allocated_bytes"`
	// DenseSeconds is gonum's dense factorisation time (0 above DenseLimit); SpeedUp its ratio.
	DenseSeconds float64 `json:"dense_seconds"`
	SpeedUp      float64 `json:"speed_up"`
	// Residual is ‖Θ Θ̃⁻¹b − b‖/‖b‖ with the exact product (0 when not computed) and
	// ProductSeconds the time of that one exact product.
	Residual       float64 `json:"residual"`
	ProductSeconds float64 `json:"product_seconds"`
}

// ExactRow is one exact iterative solve (Factor.SolveExactTo).
type ExactRow struct {
	N          int     `json:"n"`
	Kernel     string  `json:"kernel"`
	Tolerance  float64 `json:"tolerance"`
	Iterations int     `json:"iterations"`
	Residual   float64 `json:"residual"`
	Seconds    float64 `json:"seconds"`
	// Cond is gonum's condition-number estimate of Θ, ErrorVsDense the relative error against
	// gonum's dense solve, and Bound = Cond·Tolerance (0 when there is no dense reference).
	Cond         float64 `json:"cond"`
	ErrorVsDense float64 `json:"error_vs_dense"`
	Bound        float64 `json:"bound"`
}

// DenseRow describes one dense reference.
type DenseRow struct {
	PointSet      string  `json:"point_set"`
	Kernel        string  `json:"kernel"`
	N             int     `json:"n"`
	Nugget        float64 `json:"nugget"`
	FillSeconds   float64 `json:"fill_seconds"`
	FactorSeconds float64 `json:"factor_seconds"`
	LogDet        float64 `json:"logdet"`
	Cond          float64 `json:"cond"`
	Error         string  `json:"error,omitempty"`
}

// Report is the result of a sweep.
type Report struct {
	Machine     Machine       `json:"machine"`
	Config      Config        `json:"config"`
	Command     string        `json:"command"`
	Dense       []DenseRow    `json:"dense"`
	Factors     []FactorRow   `json:"factors"`
	Nystrom     []NystromRow  `json:"nystrom"`
	CG          []CGRow       `json:"cg"`
	Scaling     []ScalingRow  `json:"scaling"`
	Exact       []ExactRow    `json:"exact"`
	Settings    []SettingsRow `json:"settings"`
	Notes       []string      `json:"notes"`
	WallSeconds float64       `json:"wall_seconds"`
}

// Run performs the sweep described by c (defaults filled in) and returns its report. Progress
// lines go to progress (nil discards them). It returns an error for an invalid configuration
// or a cancelled context; failures of single configurations (a dense matrix that is not
// positive definite, a factor that fails) are recorded in Report.Notes and the sweep goes on.
func Run(ctx context.Context, c Config, progress io.Writer) (*Report, error) {
	c = c.WithDefaults()
	if err := c.Validate(); err != nil {
		return nil, err
	}
	if progress == nil {
		progress = io.Discard
	}
	start := time.Now()
	rep := &Report{Machine: DetectMachine(), Config: c}
	logf := func(format string, args ...any) {
		fmt.Fprintf(progress, "[%6.0fs] "+format+"\n", append([]any{time.Since(start).Seconds()}, args...)...)
	}
	for _, ps := range c.PointSets {
		for _, kn := range c.Kernels {
			if err := runCase(ctx, c, rep, ps, kn, logf); err != nil {
				return nil, err
			}
		}
	}
	if err := runScaling(ctx, c, rep, logf); err != nil {
		return nil, err
	}
	if err := runExact(ctx, c, rep, logf); err != nil {
		return nil, err
	}
	if err := runNuggetSweep(ctx, c, rep, logf); err != nil {
		return nil, err
	}
	if err := runWorkerSweep(ctx, c, rep, logf); err != nil {
		return nil, err
	}
	rep.WallSeconds = time.Since(start).Seconds()
	return rep, nil
}

func kernelFor(c Config, name string, d int) kernels.Stationary {
	fam, _ := kernels.ParseFamily(name)
	return kernels.Stationary{Family: fam, Dimension: d, LengthScale: c.LengthScale, Nugget: c.Nuggets[name]}
}

// timedFactor runs cholesky.New and measures its allocation.
func timedFactor(ctx context.Context, points []float64, d int, k kernels.Kernel, s *cholesky.Settings) (*cholesky.Factor, time.Duration, int64, error) {
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	start := time.Now()
	f, err := cholesky.New(ctx, points, d, k, s)
	elapsed := time.Since(start)
	runtime.ReadMemStats(&after)
	return f, elapsed, int64(after.TotalAlloc - before.TotalAlloc), err
}

func patternName(s cholesky.Settings) string {
	switch {
	case s.Rho > 0:
		return fmt.Sprintf("rho=%g", s.Rho)
	case s.Greedy && s.JointGreedy:
		return fmt.Sprintf("joint-m=%d", s.Neighbors)
	case s.Greedy:
		return fmt.Sprintf("greedy-m=%d", s.Neighbors)
	}
	return fmt.Sprintf("m=%d", s.Neighbors)
}

func runCase(ctx context.Context, c Config, rep *Report, ps, kn string, logf func(string, ...any)) error {
	points, d, err := PointSet(ps, c.N, c.Seed)
	if err != nil {
		return err
	}
	k := kernelFor(c, kn, d)
	n := c.N
	if n > c.DenseLimit {
		rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s: N = %d is above the dense limit %d; no accuracy table", ps, kn, n, c.DenseLimit))
		return nil
	}
	logf("%s/%s: dense reference, N = %d", ps, kn, n)
	ref, err := NewDenseReference(ctx, points, d, k, c.Workers)
	drow := DenseRow{PointSet: ps, Kernel: kn, N: n, Nugget: k.Nugget}
	if err != nil {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		drow.Error = err.Error()
		rep.Dense = append(rep.Dense, drow)
		rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s: %v; no accuracy table (set a nugget)", ps, kn, err))
		return nil
	}
	drow.FillSeconds, drow.FactorSeconds, drow.LogDet = ref.FillTime.Seconds(), ref.FactorTime.Seconds(), ref.LogDet
	drow.Cond = ref.Cholesky.Cond()
	rep.Dense = append(rep.Dense, drow)
	logf("%s/%s: dense Cholesky %.1f s, cond ≈ %.3g", ps, kn, drow.FactorSeconds, drow.Cond)

	var patterns []cholesky.Settings
	for _, r := range c.Rhos {
		patterns = append(patterns, cholesky.Settings{Rho: r, Lambda: c.Lambda, Workers: c.Workers})
	}
	for _, m := range c.Neighbors {
		patterns = append(patterns, cholesky.Settings{Neighbors: m, Lambda: c.Lambda, Workers: c.Workers})
	}
	for _, m := range c.Greedy {
		patterns = append(patterns, cholesky.Settings{Neighbors: m, Greedy: true, Lambda: c.Lambda, Workers: c.Workers})
	}
	for _, m := range c.JointGreedy {
		patterns = append(patterns, cholesky.Settings{Neighbors: m, Greedy: true, JointGreedy: true, Lambda: c.Lambda, Workers: c.Workers})
	}
	factors := map[string]*cholesky.Factor{}
	settings := map[string]cholesky.Settings{}
	var rows []FactorRow
	for _, s := range patterns {
		settings[patternName(s)] = s
		f, elapsed, alloc, err := timedFactor(ctx, points, d, k, &s)
		if err != nil {
			if ctx.Err() != nil {
				return ctx.Err()
			}
			rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s/%s: %v", ps, kn, patternName(s), err))
			continue
		}
		tm := f.Timings()
		row := FactorRow{
			PointSet: ps, Kernel: kn, N: n, NNZPerColumn: float64(f.NNZ()) / float64(n), Jittered: f.Jittered(),
			Accuracy:        MeasureAccuracy(f, ref, c.Seed+100),
			OrderingSeconds: tm.Ordering.Seconds(), PatternSeconds: tm.Pattern.Seconds(), FactorSeconds: tm.Factor.Seconds(),
			TotalSeconds: elapsed.Seconds(), DenseSeconds: ref.FactorTime.Seconds(),
			FactorBytes: FactorBytes(f), AllocatedBytes: alloc,
		}
		switch {
		case s.Rho > 0:
			row.Pattern, row.Parameter = "radius", s.Rho
		case s.Greedy && s.JointGreedy:
			row.Pattern, row.Parameter = "joint", float64(s.Neighbors)
		case s.Greedy:
			row.Pattern, row.Parameter = "greedy", float64(s.Neighbors)
		default:
			row.Pattern, row.Parameter = "neighbors", float64(s.Neighbors)
		}
		row.SpeedUp = row.DenseSeconds / row.TotalSeconds
		rows = append(rows, row)
		factors[patternName(s)] = f
		logf("%s/%s/%s: nnz/col %.1f, KL %.3g, solve error %.3g, %.2f s", ps, kn, patternName(s), row.NNZPerColumn, row.KL, row.SolveError, row.TotalSeconds)
	}
	rep.Factors = append(rep.Factors, rows...)

	if c.SweepCase == ps+"/"+kn && len(c.Lambdas) > 0 {
		if err := runLambdaSweep(ctx, c, rep, ps, kn, points, d, k, ref, logf); err != nil {
			return err
		}
	}
	if *c.Nystrom && len(rows) > 0 {
		if err := runNystrom(ctx, c, rep, ps, kn, points, d, ref, rows, logf); err != nil {
			return err
		}
	}
	if slices.Contains(c.CGCases, ps+"/"+kn) {
		if err := runCG(ctx, c, rep, ps, kn, points, d, k, ref, settings, factors, logf); err != nil {
			return err
		}
	}
	return nil
}

// cgPreconditioners are the patterns compared as CG preconditioners, where the case has them.
var cgPreconditioners = []string{"rho=2", "rho=3", "m=10", "m=20", "m=30", "greedy-m=10", "greedy-m=20"}

// cgUnaggregated are the patterns also compared without supernodes (λ = 1), named with
// unaggregatedSuffix, unless every factor already has λ = 1.
var cgUnaggregated = []string{"m=20", "greedy-m=20"}

const unaggregatedSuffix = ",lambda=1"

// runCG compares CG with no preconditioner, the diagonal and the case's factors on one case.
// With a CG nugget the operator is Θ + σ²I, with its own dense reference and factors.
func runCG(ctx context.Context, c Config, rep *Report, ps, kn string, points []float64, d int, k kernels.Stationary, ref *DenseReference,
	settings map[string]cholesky.Settings, factors map[string]*cholesky.Factor, logf func(string, ...any)) error {
	if nugget := *c.CGNugget; nugget > 0 {
		k.Nugget += nugget
		logf("%s/%s: CG with nugget %g: dense reference", ps, kn, k.Nugget)
		var err error
		if ref, err = NewDenseReference(ctx, points, d, k, c.Workers); err != nil {
			if ctx.Err() != nil {
				return ctx.Err()
			}
			rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s: CG with nugget %g: %v; no CG table", ps, kn, k.Nugget, err))
			return nil
		}
		factors = map[string]*cholesky.Factor{}
		for _, name := range cgPreconditioners {
			s, ok := settings[name]
			if !ok {
				continue
			}
			f, err := cholesky.New(ctx, points, d, k, &s)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s/%s: CG preconditioner with nugget %g: %v", ps, kn, name, k.Nugget, err))
				continue
			}
			factors[name] = f
		}
	}
	cond := ref.Cholesky.Cond()
	set := &cholesky.IterativeSettings{Tolerance: c.CGTolerance, MaxIterations: c.CGMaxIterations}
	type pc struct {
		name     string
		f        *cholesky.Factor
		diagonal bool
	}
	list := []pc{{"none", nil, false}, {"diagonal", nil, true}}
	for _, name := range cgPreconditioners {
		if f, ok := factors[name]; ok {
			list = append(list, pc{name, f, false})
		}
	}
	// The same patterns without supernodes (λ = 1), where each column holds exactly its m
	// rows: with λ > 1 the members of a supernode share the union of their rows, which gives
	// greedy and nearest-neighbour sets different nonzero counts at equal m.
	if c.Lambda != 1 {
		for _, name := range cgUnaggregated {
			s, ok := settings[name]
			if !ok {
				continue
			}
			s.Lambda = 1
			f, err := cholesky.New(ctx, points, d, k, &s)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("%s/%s/%s: CG preconditioner with λ = 1: %v", ps, kn, name, err))
				continue
			}
			list = append(list, pc{name + unaggregatedSuffix, f, false})
		}
	}
	for _, p := range list {
		run, err := RunCG(ctx, ref, p.f, p.diagonal, p.name, set, c.Seed+200)
		if err != nil {
			return err
		}
		if p.f != nil {
			tm := p.f.Timings()
			run.SetupSeconds = tm.Ordering.Seconds() + tm.Pattern.Seconds() + tm.Aggregation.Seconds() + tm.Factor.Seconds()
		}
		rep.CG = append(rep.CG, CGRow{PointSet: ps, Kernel: kn, N: len(points) / d, Nugget: k.Nugget, Cond: cond, CGRun: run})
		logf("%s/%s: CG with %s: %d iterations, residual %.3g, %.1f s", ps, kn, p.name, run.Iterations, run.Residual, run.Seconds)
	}
	return nil
}

// NystromRank returns the rank r whose Nyström factor F (N×r float64) uses the memory of a
// sparse factor with nnz nonzeros (12 bytes each): r = round(12·nnz / (8N)), at least 1.
func NystromRank(nnz, n int) int {
	return max(1, int(math.Round(12*float64(nnz)/(8*float64(n)))))
}

func runNystrom(ctx context.Context, c Config, rep *Report, ps, kn string, points []float64, d int, ref *DenseReference, rows []FactorRow, logf func(string, ...any)) error {
	n := c.N
	maxRank := 0
	for _, r := range rows {
		maxRank = max(maxRank, NystromRank(int(math.Round(r.NNZPerColumn*float64(n))), n))
	}
	maxRank = min(maxRank, n)
	ord := ordering.ReverseMaximin(points, d, nil)
	coarsest := make([]int, maxRank)
	for i := range coarsest {
		coarsest[i] = ord.Order[n-1-i]
	}
	rng := newRand(c.Seed + 300)
	random := rng.Perm(n)[:maxRank]
	for _, ind := range []struct {
		name string
		idx  []int
	}{{"maximin", coarsest}, {"random", random}} {
		if err := ctx.Err(); err != nil {
			return err
		}
		ny := NewNystrom(ref, ind.idx)
		for _, r := range rows {
			name := r.Name()
			rank := NystromRank(int(math.Round(r.NNZPerColumn*float64(n))), n)
			row := NystromRow{PointSet: ps, Kernel: kn, Against: name, FactorKL: r.KL, Inducing: ind.name}
			acc, err := ny.Measure(rank, c.Seed+100)
			if err != nil {
				row.Error = err.Error()
				row.Nystrom.Rank = rank
			} else {
				row.Nystrom = acc
				row.Beats = r.KL < acc.KL
			}
			rep.Nystrom = append(rep.Nystrom, row)
		}
		logf("%s/%s: Nyström (%s inducing points) up to rank %d", ps, kn, ind.name, maxRank)
	}
	return nil
}

func runScaling(ctx context.Context, c Config, rep *Report, logf func(string, ...any)) error {
	for _, n := range c.ScalingN {
		points := Uniform(n, 2, c.Seed)
		k := kernelFor(c, "matern32", 2)
		var dense float64
		if n <= c.DenseLimit {
			ref, err := NewDenseReference(ctx, points, 2, k, c.Workers)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("scaling N = %d: %v", n, err))
			} else {
				dense = ref.FactorTime.Seconds()
			}
		}
		for _, s := range []cholesky.Settings{{Rho: 3, Workers: c.Workers}, {Neighbors: 30, Workers: c.Workers}} {
			f, elapsed, alloc, err := timedFactor(ctx, points, 2, k, &s)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("scaling N = %d %s: %v", n, patternName(s), err))
				continue
			}
			tm := f.Timings()
			row := ScalingRow{N: n, Pattern: patternName(s), NNZPerColumn: float64(f.NNZ()) / float64(n),
				OrderingSeconds: tm.Ordering.Seconds(), PatternSeconds: tm.Pattern.Seconds(), FactorSeconds: tm.Factor.Seconds(),
				TotalSeconds: elapsed.Seconds(), FactorBytes: FactorBytes(f), AllocatedBytes: alloc, DenseSeconds: dense}
			if dense > 0 {
				row.SpeedUp = dense / row.TotalSeconds
			}
			if n <= c.ExactResidualLimit {
				b := Normal(n, c.Seed+400)
				x := f.SolveTo(nil, b)
				start := time.Now()
				tx, err := f.KernelMatrix().MulVecTo(ctx, nil, x, c.Workers)
				if err != nil {
					return err
				}
				row.ProductSeconds = time.Since(start).Seconds()
				for i := range tx {
					tx[i] -= b[i]
				}
				row.Residual = norm(tx) / norm(b)
			}
			rep.Scaling = append(rep.Scaling, row)
			logf("scaling N = %d %s: %.2f s, nnz/col %.1f", n, row.Pattern, row.TotalSeconds, row.NNZPerColumn)
		}
	}
	return nil
}

func runExact(ctx context.Context, c Config, rep *Report, logf func(string, ...any)) error {
	const tol = 1e-10
	for _, n := range c.ExactSolveN {
		points := Uniform(n, 2, c.Seed)
		k := kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.05}
		f, err := cholesky.New(ctx, points, 2, k, &cholesky.Settings{Neighbors: 30, Workers: c.Workers})
		if err != nil {
			return err
		}
		b := Normal(n, c.Seed+500)
		start := time.Now()
		x, res, err := f.SolveExactTo(ctx, nil, b, &cholesky.IterativeSettings{Tolerance: tol, Workers: c.Workers})
		if err != nil && !errors.Is(err, cholesky.ErrNotConverged) {
			return err
		}
		row := ExactRow{N: n, Kernel: "matern12 l=0.05", Tolerance: tol, Iterations: res.Iterations, Residual: res.Residual, Seconds: time.Since(start).Seconds()}
		if n <= c.DenseLimit {
			ref, err := NewDenseReference(ctx, points, 2, k, c.Workers)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("exact solve N = %d: %v", n, err))
			} else {
				row.Cond = ref.Cholesky.Cond()
				row.ErrorVsDense = RelativeError(x, ref.Solve(b))
				row.Bound = row.Cond * tol
			}
		}
		rep.Exact = append(rep.Exact, row)
		logf("exact solve N = %d: %d iterations, residual %.3g, %.1f s", n, row.Iterations, row.Residual, row.Seconds)
	}
	return nil
}

func norm(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return math.Sqrt(s)
}

// Name returns the pattern as "rho=3", "m=30" or "greedy-m=30".
func (r FactorRow) Name() string {
	switch r.Pattern {
	case "radius":
		return fmt.Sprintf("rho=%g", r.Parameter)
	case "greedy":
		return fmt.Sprintf("greedy-m=%g", r.Parameter)
	case "joint":
		return fmt.Sprintf("joint-m=%g", r.Parameter)
	}
	return fmt.Sprintf("m=%g", r.Parameter)
}

// cutCase splits a "pointset/kernel" case and reports whether both parts are known.
func cutCase(cs string) (pointSet, kernel string, ok bool) {
	p, k, found := strings.Cut(cs, "/")
	if !found || !slices.Contains(PointSetNames, p) {
		return "", "", false
	}
	if _, err := kernels.ParseFamily(k); err != nil {
		return "", "", false
	}
	return p, k, true
}
