package main

import (
	"bytes"
	"compress/gzip"
	"context"
	_ "embed"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"time"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// demoSites is the invented Valmere basin survey: a gzip-compressed CSV with the header
// x_km,y_km,pm25 (see demodata/README.md).
//
//go:embed demodata/valmere_sites.csv.gz
var demoSites []byte

const (
	demoSitesName = "demodata/valmere_sites.csv.gz"
	// demoLengthScale (km), demoNugget ((µg/m³)²) and the Matérn 3/2 family are the demo's
	// model; the variance is the sample variance of the readings.
	demoLengthScale = 4.0
	demoNugget      = 0.25
	// demoDenseSites is the default size of the subset compared against dense factors.
	demoDenseSites = 3000
	// demoRho is the radius pattern shown beside the default nearest-neighbour pattern.
	demoRho = 3.0
	// Seeds of the two random subsets (math/rand/v2 PCG).
	demoSitesSeed, demoDenseSeed = 1, 2
)

// demoOptions are the flags of kchol demo.
type demoOptions struct {
	sites, dense, workers int
}

// demoSurvey is the loaded survey: points (x, y in km, row-major) and readings.
type demoSurvey struct {
	points, readings []float64
}

func (s *demoSurvey) n() int { return len(s.readings) }

// loadDemoSurvey decodes the embedded survey.
func loadDemoSurvey() (*demoSurvey, error) {
	gz, err := gzip.NewReader(bytes.NewReader(demoSites))
	if err != nil {
		return nil, fmt.Errorf("%s: %v", demoSitesName, err)
	}
	t, err := readCSV(gz, demoSitesName, []string{"x_km", "y_km", "pm25"})
	if err != nil {
		return nil, err
	}
	s := &demoSurvey{points: make([]float64, 2*t.rows), readings: make([]float64, t.rows)}
	for r := range t.rows {
		row := t.values[r*t.cols : (r+1)*t.cols]
		s.points[2*r], s.points[2*r+1], s.readings[r] = row[0], row[1], row[2]
	}
	return s, nil
}

// subset returns n sites of s chosen uniformly without replacement (a partial Fisher–Yates
// shuffle with the given seed), or s itself when n ≥ s.n().
func (s *demoSurvey) subset(n int, seed uint64) *demoSurvey {
	if n >= s.n() {
		return s
	}
	rng := rand.New(rand.NewPCG(seed, seed))
	idx := make([]int, s.n())
	for i := range idx {
		idx[i] = i
	}
	out := &demoSurvey{points: make([]float64, 2*n), readings: make([]float64, n)}
	for k := range n {
		j := k + rng.IntN(len(idx)-k)
		idx[k], idx[j] = idx[j], idx[k]
		copy(out.points[2*k:2*k+2], s.points[2*idx[k]:2*idx[k]+2])
		out.readings[k] = s.readings[idx[k]]
	}
	return out
}

// demoPattern is one sparsity pattern the demo runs.
type demoPattern struct {
	name     string
	settings cholesky.Settings
}

func demoPatterns(workers int) []demoPattern {
	return []demoPattern{
		{fmt.Sprintf("nearest neighbours, m = %d", cholesky.DefaultNeighbors), cholesky.Settings{Workers: workers}},
		{fmt.Sprintf("radius, ρ = %g", demoRho), cholesky.Settings{Rho: demoRho, Workers: workers}},
	}
}

// runDemo runs kchol demo: it factors the kernel matrix of the embedded (invented) survey with
// two patterns, compares them with dense gonum factors on a subset, and prints the results as
// Markdown tables on stdout, with progress on stderr.
func runDemo(args []string, stdout, stderr io.Writer) error {
	fs := newFlagSet("demo")
	o := &demoOptions{}
	fs.IntVar(&o.sites, "sites", 0, "use a seeded random subset of `N` sites instead of all of them (0: all)")
	fs.IntVar(&o.dense, "dense", demoDenseSites, "compare against dense factors on a seeded random subset of `N` sites (0: skip)")
	fs.IntVar(&o.workers, "workers", 0, "number of goroutines; 0 means one per CPU")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			fmt.Fprint(stdout, "Usage: kchol demo [flags]\n\n"+
				"Factor the kernel matrix of an invented air-quality survey (50,000 sites), compare\n"+
				"the sparse factors with dense ones on a subset, and print accuracy and timings.\n\nFlags:\n")
			fs.SetOutput(stdout)
			fs.PrintDefaults()
			return err
		}
		return usagef("demo: %v", err)
	}
	if fs.NArg() > 0 {
		return usagef("demo: unexpected argument %q", fs.Arg(0))
	}
	switch {
	case o.sites < 0:
		return usagef("demo: -sites %d, want ≥ 0", o.sites)
	case o.dense < 0:
		return usagef("demo: -dense %d, want ≥ 0", o.dense)
	case o.workers < 0:
		return usagef("demo: -workers %d, want ≥ 0", o.workers)
	}
	all, err := loadDemoSurvey()
	if err != nil {
		return err
	}
	if o.sites > all.n() {
		return usagef("demo: -sites %d, but the survey has %d sites", o.sites, all.n())
	}
	survey := all
	if o.sites > 0 {
		survey = all.subset(o.sites, demoSitesSeed)
	}
	return demo(context.Background(), survey, all.n(), o, stdout, stderr)
}

func demo(ctx context.Context, survey *demoSurvey, total int, o *demoOptions, stdout, stderr io.Writer) error {
	n := survey.n()
	mean := floats.Sum(survey.readings) / float64(n)
	y := make([]float64, n)
	var variance float64
	for i, r := range survey.readings {
		y[i] = r - mean
		variance += y[i] * y[i] / float64(n)
	}
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, Variance: variance, LengthScale: demoLengthScale, Nugget: demoNugget}

	fmt.Fprintf(stdout, "# Valmere basin air-quality survey (invented data, for demonstration only)\n\n")
	fmt.Fprintf(stdout, "%d of %d sites in a 120 km × 80 km basin, one PM2.5 reading each (mean %.2f µg/m³).\n", n, total, mean)
	fmt.Fprintf(stdout, "Model: Matérn 3/2, length scale %g km, variance %.3g (the sample variance), nugget %g;\n", demoLengthScale, variance, demoNugget)
	fmt.Fprintf(stdout, "y = readings minus their mean. Θ̃⁻¹ ≈ L Lᵀ is the sparse factor, Θ the exact kernel matrix.\n\n")

	if m := min(o.dense, n); m > 0 {
		if err := demoDense(ctx, survey.subset(m, demoDenseSeed), k, o.workers, stdout, stderr); err != nil {
			return err
		}
	}
	return demoFull(ctx, survey, y, k, o.workers, stdout, stderr)
}

// demoDense compares both patterns with gonum's dense Cholesky factor on sub.
func demoDense(ctx context.Context, sub *demoSurvey, k kernels.Stationary, workers int, stdout, stderr io.Writer) error {
	m := sub.n()
	mean := floats.Sum(sub.readings) / float64(m)
	y := make([]float64, m)
	for i, r := range sub.readings {
		y[i] = r - mean
	}
	fmt.Fprintf(stderr, "kchol demo: dense Cholesky factor of %d sites\n", m)
	theta := mat.NewSymDense(m, nil)
	for i := range m {
		for j := i; j < m; j++ {
			v := k.Eval(sub.points[2*i:2*i+2], sub.points[2*j:2*j+2])
			if i == j {
				v += k.Nugget
			}
			theta.SetSym(i, j, v)
		}
	}
	var chol mat.Cholesky
	start := time.Now()
	ok := chol.Factorize(theta)
	denseTime := time.Since(start)
	if !ok {
		return fmt.Errorf("demo: the dense kernel matrix of %d sites is not positive definite", m)
	}
	denseLogDet := chol.LogDet()
	var denseSolve mat.VecDense
	if err := chol.SolveVecTo(&denseSolve, mat.NewVecDense(m, y)); err != nil {
		return fmt.Errorf("demo: dense solve: %v", err)
	}
	exact := denseSolve.RawVector().Data

	fmt.Fprintf(stdout, "## Accuracy against dense factors (%d-site random subset)\n\n", m)
	fmt.Fprintf(stdout, "| pattern | nnz per column | log det rel. error | Θ̃⁻¹y rel. error | KL divergence | sparse time | dense time | ratio |\n")
	fmt.Fprintf(stdout, "|---|---:|---:|---:|---:|---:|---:|---:|\n")
	for _, p := range demoPatterns(workers) {
		fmt.Fprintf(stderr, "kchol demo: sparse factor of %d sites, %s\n", m, p.name)
		start := time.Now()
		f, err := cholesky.New(ctx, sub.points, 2, k, &p.settings)
		sparseTime := time.Since(start)
		if err != nil {
			return fmt.Errorf("demo: %s: %w", p.name, err)
		}
		logDetError := math.Abs(f.LogDet()-denseLogDet) / math.Abs(denseLogDet)
		approx := f.SolveTo(nil, y)
		solveError := floats.Distance(approx, exact, 2) / floats.Norm(exact, 2)
		kl, _ := f.KLDivergence(theta, denseLogDet)
		fmt.Fprintf(stdout, "| %s | %.1f | %.2e | %.2e | %.3g | %s | %s | %.3f |\n", p.name, float64(f.NNZ())/float64(m),
			logDetError, solveError, kl, demoSeconds(sparseTime), demoSeconds(denseTime), sparseTime.Seconds()/denseTime.Seconds())
	}
	fmt.Fprintf(stdout, "\nDense: log det Θ = %.6g; the dense time is gonum's mat.Cholesky.Factorize alone, the sparse\n", denseLogDet)
	fmt.Fprintf(stdout, "time is all of cholesky.New (ordering, pattern and factor). Relative errors: |Δ log det| / |log det Θ|\n")
	fmt.Fprintf(stdout, "and ‖Θ̃⁻¹y − Θ⁻¹y‖₂ / ‖Θ⁻¹y‖₂; KL divergence KL(N(0, Θ) ‖ N(0, Θ̃)).\n\n")
	return nil
}

// demoFull factors the whole survey with both patterns and prints timings and results.
func demoFull(ctx context.Context, survey *demoSurvey, y []float64, k kernels.Stationary, workers int, stdout, stderr io.Writer) error {
	n := survey.n()
	fmt.Fprintf(stdout, "## All %d sites\n\n", n)
	fmt.Fprintf(stdout, "| pattern | nnz per column | ordering | pattern | factor | solve Θ̃⁻¹y | log det Θ̃ | log-likelihood |\n")
	fmt.Fprintf(stdout, "|---|---:|---:|---:|---:|---:|---:|---:|\n")
	for _, p := range demoPatterns(workers) {
		fmt.Fprintf(stderr, "kchol demo: sparse factor of %d sites, %s\n", n, p.name)
		f, err := cholesky.New(ctx, survey.points, 2, k, &p.settings)
		if err != nil {
			return fmt.Errorf("demo: %s: %w", p.name, err)
		}
		start := time.Now()
		weights := f.SolveTo(nil, y) // kriging weights Θ̃⁻¹ y
		solveTime := time.Since(start)
		logDet := f.LogDet()
		// Gaussian log-likelihood −½ yᵀΘ̃⁻¹y − ½ log det Θ̃ − (N/2) log 2π (Rasmussen &
		// Williams 2006, eq. 2.30).
		logLik := -0.5*floats.Dot(y, weights) - 0.5*logDet - 0.5*float64(n)*math.Log(2*math.Pi)
		tm := f.Timings()
		fmt.Fprintf(stdout, "| %s | %.1f | %s | %s | %s | %s | %.6g | %.6g |\n", p.name, float64(f.NNZ())/float64(n),
			demoSeconds(tm.Ordering), demoSeconds(tm.Pattern), demoSeconds(tm.Factor), demoSeconds(solveTime), logDet, logLik)
		if f.Jittered() > 0 {
			fmt.Fprintf(stdout, "\n(%s: %d columns needed a diagonal jitter.)\n", p.name, f.Jittered())
		}
	}
	fmt.Fprintf(stdout, "\nThese are approximations: check their accuracy on your own data (for example against a\n")
	fmt.Fprintf(stdout, "dense factor on a subset, as above) before relying on them.\n")
	return nil
}

// demoSeconds formats a duration in seconds with three significant digits.
func demoSeconds(d time.Duration) string { return fmt.Sprintf("%.3g s", d.Seconds()) }
