package bench

import (
	"bufio"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
)

// WriteJSON writes the whole report as indented JSON.
func (r *Report) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(jsonSafe(r))
}

// jsonSafe returns a copy of r in which non-finite numbers (which JSON cannot hold) are
// replaced by the largest float64 of their sign; NaN becomes 0 and is listed in the notes.
func jsonSafe(r *Report) *Report {
	c := *r
	fix := func(v *float64) {
		switch {
		case math.IsInf(*v, 1):
			*v = math.MaxFloat64
		case math.IsInf(*v, -1):
			*v = -math.MaxFloat64
		case math.IsNaN(*v):
			*v = 0
		}
	}
	c.Nystrom = slices.Clone(r.Nystrom)
	for i := range c.Nystrom {
		a := &c.Nystrom[i].Nystrom
		for _, v := range []*float64{&a.KL, &a.KLPerPoint, &a.Trace, &a.LogDetError, &a.SolveError, &a.MulError} {
			fix(v)
		}
	}
	c.Factors = slices.Clone(r.Factors)
	for i := range c.Factors {
		a := &c.Factors[i].Accuracy
		for _, v := range []*float64{&a.KL, &a.KLPerPoint, &a.Trace, &a.LogDetError, &a.SolveError, &a.MulError} {
			fix(v)
		}
	}
	return &c
}

// g formats a number with 3 significant digits.
func g(v float64) string { return strconv.FormatFloat(v, 'g', 3, 64) }

// WriteCSV writes one table of the report ("factors", "nystrom", "cg", "scaling", "exact",
// "dense") as CSV with a header row. It panics on an unknown table name.
func (r *Report) WriteCSV(w io.Writer, table string) error {
	cw := csv.NewWriter(w)
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', 17, 64) }
	var rows [][]string
	switch table {
	case "dense":
		rows = append(rows, []string{"point_set", "kernel", "n", "nugget", "fill_seconds", "factor_seconds", "logdet", "cond", "error"})
		for _, d := range r.Dense {
			rows = append(rows, []string{d.PointSet, d.Kernel, strconv.Itoa(d.N), f(d.Nugget), f(d.FillSeconds), f(d.FactorSeconds), f(d.LogDet), f(d.Cond), d.Error})
		}
	case "factors":
		rows = append(rows, []string{"point_set", "kernel", "n", "pattern", "parameter", "nnz_per_column", "jittered", "kl", "kl_per_point", "trace",
			"logdet_rel_error", "solve_rel_error", "mul_rel_error", "ordering_seconds", "pattern_seconds", "factor_seconds", "total_seconds",
			"dense_seconds", "speed_up", "factor_bytes", "allocated_bytes"})
		for _, x := range r.Factors {
			rows = append(rows, []string{x.PointSet, x.Kernel, strconv.Itoa(x.N), x.Pattern, f(x.Parameter), f(x.NNZPerColumn), strconv.Itoa(x.Jittered),
				f(x.KL), f(x.KLPerPoint), f(x.Trace), f(x.LogDetError), f(x.SolveError), f(x.MulError), f(x.OrderingSeconds), f(x.PatternSeconds),
				f(x.FactorSeconds), f(x.TotalSeconds), f(x.DenseSeconds), f(x.SpeedUp), strconv.FormatInt(x.FactorBytes, 10), strconv.FormatInt(x.AllocatedBytes, 10)})
		}
	case "nystrom":
		rows = append(rows, []string{"point_set", "kernel", "against", "factor_kl", "inducing", "rank", "nugget", "kl", "kl_per_point", "logdet_rel_error",
			"solve_rel_error", "mul_rel_error", "factor_has_lower_kl", "error"})
		for _, x := range r.Nystrom {
			a := x.Nystrom
			rows = append(rows, []string{x.PointSet, x.Kernel, x.Against, f(x.FactorKL), x.Inducing, strconv.Itoa(a.Rank), f(a.Nugget), f(a.KL), f(a.KLPerPoint),
				f(a.LogDetError), f(a.SolveError), f(a.MulError), strconv.FormatBool(x.Beats), x.Error})
		}
	case "cg":
		rows = append(rows, []string{"point_set", "kernel", "n", "nugget", "cond", "preconditioner", "iterations", "residual", "converged", "seconds", "setup_seconds", "error_vs_dense",
			"ritz_min", "ritz_max", "kappa_estimate"})
		for _, x := range r.CG {
			rows = append(rows, []string{x.PointSet, x.Kernel, strconv.Itoa(x.N), f(x.Nugget), f(x.Cond), x.Preconditioner, strconv.Itoa(x.Iterations), f(x.Residual),
				strconv.FormatBool(x.Converged), f(x.Seconds), f(x.SetupSeconds), f(x.Error), f(x.RitzMin), f(x.RitzMax), f(x.Kappa)})
		}
	case "scaling":
		rows = append(rows, []string{"n", "pattern", "nnz_per_column", "ordering_seconds", "pattern_seconds", "factor_seconds", "total_seconds",
			"factor_bytes", "allocated_bytes", "dense_seconds", "speed_up", "residual", "product_seconds"})
		for _, x := range r.Scaling {
			rows = append(rows, []string{strconv.Itoa(x.N), x.Pattern, f(x.NNZPerColumn), f(x.OrderingSeconds), f(x.PatternSeconds), f(x.FactorSeconds),
				f(x.TotalSeconds), strconv.FormatInt(x.FactorBytes, 10), strconv.FormatInt(x.AllocatedBytes, 10), f(x.DenseSeconds), f(x.SpeedUp),
				f(x.Residual), f(x.ProductSeconds)})
		}
	case "exact":
		rows = append(rows, []string{"n", "kernel", "tolerance", "iterations", "residual", "seconds", "cond", "error_vs_dense", "bound"})
		for _, x := range r.Exact {
			rows = append(rows, []string{strconv.Itoa(x.N), x.Kernel, f(x.Tolerance), strconv.Itoa(x.Iterations), f(x.Residual), f(x.Seconds),
				f(x.Cond), f(x.ErrorVsDense), f(x.Bound)})
		}
	case "settings":
		rows = append(rows, []string{"sweep", "value", "point_set", "kernel", "n", "pattern", "nnz_per_column", "supernodes", "stored_rows_per_column",
			"has_accuracy", "kl", "kl_per_point", "logdet_rel_error", "solve_rel_error", "mul_rel_error",
			"ordering_seconds", "pattern_seconds", "aggregation_seconds", "factor_seconds", "total_seconds"})
		for _, x := range r.Settings {
			rows = append(rows, []string{x.Sweep, f(x.Value), x.PointSet, x.Kernel, strconv.Itoa(x.N), x.Pattern, f(x.NNZPerColumn), strconv.Itoa(x.Supernodes),
				f(x.StoredRowsPerColumn), strconv.FormatBool(x.HasAccuracy), f(x.KL), f(x.KLPerPoint), f(x.LogDetError), f(x.SolveError), f(x.MulError),
				f(x.OrderingSeconds), f(x.PatternSeconds), f(x.AggregationSeconds), f(x.FactorSeconds), f(x.TotalSeconds)})
		}
	default:
		panic("bench: unknown table " + table)
	}
	if err := cw.WriteAll(rows); err != nil {
		return err
	}
	return cw.Error()
}

// CSVTables are the table names of WriteCSV.
var CSVTables = []string{"dense", "factors", "nystrom", "cg", "scaling", "exact", "settings"}

// FitSlope returns the least-squares slope of log y against log x (the exponent of a power
// law y ∝ xᵖ) over the pairs with x, y > 0, and the number of pairs used.
func FitSlope(x, y []float64) (slope float64, used int) {
	var sx, sy, sxx, sxy float64
	for i := range x {
		if x[i] > 0 && y[i] > 0 {
			lx, ly := math.Log(x[i]), math.Log(y[i])
			sx, sy, sxx, sxy = sx+lx, sy+ly, sxx+lx*lx, sxy+lx*ly
			used++
		}
	}
	if used < 2 {
		return math.NaN(), used
	}
	n := float64(used)
	return (n*sxy - sx*sy) / (n*sxx - sx*sx), used
}

// scalingSeries returns N and the total time of the scaling rows of one pattern.
func (r *Report) scalingSeries(pattern string) (ns, secs []float64) {
	for _, s := range r.Scaling {
		if s.Pattern == pattern {
			ns = append(ns, float64(s.N))
			secs = append(secs, s.TotalSeconds)
		}
	}
	return ns, secs
}

// WriteMarkdown writes the report as Markdown: the machine first, then every table, the
// checks of the acceptance criteria computed from the numbers, and links to the plots
// (file names as WriteFiles writes them).
func (r *Report) WriteMarkdown(w io.Writer) error {
	b := bufio.NewWriter(w)
	p := func(format string, args ...any) { fmt.Fprintf(b, format, args...) }
	m := r.Machine
	p("# kchol accuracy and timing report\n\n")
	p("Machine: %s, %d cores, GOMAXPROCS %d, %s %s/%s, kchol %s.\n\n", m.CPU, m.Cores, m.GOMAXPROCS, m.GoVersion, m.OS, m.Arch, m.Kchol)
	if r.Command != "" {
		p("Generated by `%s` in %.0f s of wall time. Every number below was printed by that run.\n\n", r.Command, r.WallSeconds)
	}
	c := r.Config
	p("Kernels have variance 1 and length scale %g; nuggets %v. Points: %s, N = %d, seed %d. ", c.LengthScale, c.Nuggets, strings.Join(c.PointSets, ", "), c.N, c.Seed)
	p("KL is KL(N(0,Θ) ‖ N(0,Θ̃)) from the dense Θ; errors are relative 2-norm errors against gonum's dense solve (random standard normal right-hand side) and Θ·v; times are wall-clock seconds of the whole `cholesky.New` (ordering + pattern + factor) against gonum's dense `Cholesky.Factorize` alone.\n\n")

	r.markdownChecks(p)

	if len(r.Dense) > 0 {
		p("## Dense references\n\n| points | kernel | N | nugget | fill s | gonum Cholesky s | log det Θ | cond (gonum estimate) | note |\n|---|---|---|---|---|---|---|---|---|\n")
		for _, d := range r.Dense {
			p("| %s | %s | %d | %s | %.2f | %.2f | %s | %s | %s |\n", d.PointSet, d.Kernel, d.N, g(d.Nugget), d.FillSeconds, d.FactorSeconds, g(d.LogDet), g(d.Cond), d.Error)
		}
		p("\n")
	}
	r.markdownKLPerPoint(p)
	r.markdownGreedy(p)
	for _, ps := range c.PointSets {
		for _, kn := range c.Kernels {
			var rows []FactorRow
			for _, x := range r.Factors {
				if x.PointSet == ps && x.Kernel == kn {
					rows = append(rows, x)
				}
			}
			if len(rows) == 0 {
				continue
			}
			p("## %s points, %s, N = %d\n\n", ps, kn, rows[0].N)
			p("| pattern | nnz/col | KL | KL/N | log det err | solve err | Θ̃v err | order s | pattern s | factor s | total s | speed-up | factor MB | alloc MB | jittered |\n")
			p("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n")
			for _, x := range rows {
				p("| %s | %.1f | %s | %s | %s | %s | %s | %.3f | %.3f | %.3f | %.3f | %.0f× | %.1f | %.1f | %d |\n", x.Name(), x.NNZPerColumn, g(x.KL), g(x.KLPerPoint),
					g(x.LogDetError), g(x.SolveError), g(x.MulError), x.OrderingSeconds, x.PatternSeconds, x.FactorSeconds, x.TotalSeconds, x.SpeedUp,
					float64(x.FactorBytes)/1e6, float64(x.AllocatedBytes)/1e6, x.Jittered)
			}
			p("\n")
		}
		p("![KL against nnz per column, %s](kl_vs_nnz_%s.svg)\n![KL against ρ, %s](kl_vs_rho_%s.svg)\n![solve error against nnz per column, %s](solve_vs_nnz_%s.svg)\n\n", ps, ps, ps, ps, ps, ps)
	}
	if len(r.Nystrom) > 0 {
		p("## Nyström baseline at equal memory\n\nRank r = round(12·nnz / 8N): the N×r float64 Nyström factor takes the memory of the sparse factor's 12 bytes per nonzero. ")
		p("Θ ≈ F Fᵀ + σ²I with σ² the best (lowest KL) of %v times the mean diagonal, which favours the baseline. Inducing points: the r coarsest of the maximin ordering, or r uniformly random ones.\n\n", NystromNuggets)
		p("| points | kernel | factor | factor KL | inducing | rank | σ² | Nyström KL | Nyström solve err | factor lower KL |\n|---|---|---|---|---|---|---|---|---|---|\n")
		for _, x := range r.Nystrom {
			kl := g(x.Nystrom.KL)
			if x.Error != "" {
				kl = "failed: " + x.Error
			}
			p("| %s | %s | %s | %s | %s | %d | %s | %s | %s | %v |\n", x.PointSet, x.Kernel, x.Against, g(x.FactorKL), x.Inducing, x.Nystrom.Rank, g(x.Nystrom.Nugget), kl, g(x.Nystrom.SolveError), x.Beats)
		}
		p("\n")
	}
	if len(r.CG) > 0 {
		p("## Conjugate gradients on (Θ + σ²I) x = b\n\nDense Θ + σ²I (gonum SymDense.MulVec) as the product, relative residual %g, at most %d iterations; the factors are of Θ + σ²I, and their construction time is listed separately. "+
			"σ² is the case's nugget plus the CG nugget %g: CG in floating point does not bring the relative residual much below cond·ε, so the tolerance needs a well-conditioned operator.\n\n", c.CGTolerance, c.CGMaxIterations, *c.CGNugget)
		p("The eigenvalue range is the extreme Ritz values of the Lanczos matrix that CG builds (an estimate from inside the spectrum of the preconditioned operator), and κ their ratio; " +
			"rows marked lambda=1 are the same pattern without supernodes, so that every column has exactly m rows besides the diagonal.\n\n")
		p("| points | kernel | N | σ² | cond | preconditioner | iterations | residual | converged | CG s | setup s | error vs dense | eigenvalues | κ estimate |\n|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n")
		for _, x := range r.CG {
			p("| %s | %s | %d | %s | %s | %s | %d | %s | %v | %.2f | %.3f | %s | [%.3g, %.3g] | %.3g |\n", x.PointSet, x.Kernel, x.N, g(x.Nugget), g(x.Cond), x.Preconditioner, x.Iterations, g(x.Residual), x.Converged, x.Seconds, x.SetupSeconds, g(x.Error),
				x.RitzMin, x.RitzMax, x.Kappa)
		}
		p("\n")
	}
	if len(r.Scaling) > 0 {
		p("## Time against N\n\nUniform points in the unit square, Matérn 3/2, length scale %g. Residual: ‖Θ Θ̃⁻¹b − b‖/‖b‖ of the factor-only solve with the exact matrix-free Θ·v (for N ≤ %d; product s is the time of one exact product, O(N²)).\n\n", c.LengthScale, c.ExactResidualLimit)
		p("| N | pattern | nnz/col | order s | pattern s | factor s | total s | factor MB | alloc MB | dense s | speed-up | residual | product s |\n|---|---|---|---|---|---|---|---|---|---|---|---|---|\n")
		for _, x := range r.Scaling {
			dense, speed, res, prod := "–", "–", "–", "–"
			if x.DenseSeconds > 0 {
				dense, speed = fmt.Sprintf("%.2f", x.DenseSeconds), fmt.Sprintf("%.0f×", x.SpeedUp)
			}
			if x.ProductSeconds > 0 {
				res, prod = g(x.Residual), fmt.Sprintf("%.2f", x.ProductSeconds)
			}
			p("| %d | %s | %.1f | %.3f | %.3f | %.3f | %.3f | %.1f | %.1f | %s | %s | %s | %s |\n", x.N, x.Pattern, x.NNZPerColumn, x.OrderingSeconds, x.PatternSeconds,
				x.FactorSeconds, x.TotalSeconds, float64(x.FactorBytes)/1e6, float64(x.AllocatedBytes)/1e6, dense, speed, res, prod)
		}
		for _, pat := range []string{"rho=3", "m=30"} {
			ns, secs := r.scalingSeries(pat)
			if s, used := FitSlope(ns, secs); used >= 2 {
				p("\nFitted slope of log(total s) against log N, %s: %.2f (%d sizes, %d to %d).", pat, s, used, int(ns[0]), int(ns[len(ns)-1]))
			}
		}
		p("\n\n![time against N](time_vs_n.svg)\n![speed-up over dense against N](speedup_vs_n.svg)\n\n")
	}
	if len(r.Exact) > 0 {
		p("## Exact solves: conjugate gradients with the exact Θ and the factor as preconditioner\n\n`Factor.SolveExactTo` (what `kchol solve -tol` runs): uniform points in the unit square, m = 30, standard normal b. Residual measured with the exact matrix-free Θ·v. Bound = cond·tol with gonum's condition estimate.\n\n")
		p("| N | kernel | tol | iterations | residual | seconds | s per iteration | cond | error vs dense | cond·tol |\n|---|---|---|---|---|---|---|---|---|---|\n")
		for _, x := range r.Exact {
			cond, e, bound := "–", "–", "–"
			if x.Cond > 0 {
				cond, e, bound = g(x.Cond), g(x.ErrorVsDense), g(x.Bound)
			}
			p("| %d | %s | %s | %d | %s | %.1f | %.2f | %s | %s | %s |\n", x.N, x.Kernel, g(x.Tolerance), x.Iterations, g(x.Residual), x.Seconds, x.Seconds/float64(max(1, x.Iterations)), cond, e, bound)
		}
		p("\n")
	}
	r.markdownSettings(p)
	if len(r.Notes) > 0 {
		p("## Notes from the run\n\n")
		for _, n := range r.Notes {
			p("- %s\n", n)
		}
		p("\n")
	}
	return b.Flush()
}

// markdownKLPerPoint writes KL/N against ρ per kernel, one table per point set.
func (r *Report) markdownKLPerPoint(p func(string, ...any)) {
	c := r.Config
	for _, ps := range c.PointSets {
		var have bool
		for _, x := range r.Factors {
			have = have || x.PointSet == ps
		}
		if !have {
			continue
		}
		p("## KL/N against the pattern, %s points\n\nPick ρ or m for a target per-point KL divergence.\n\n| pattern |", ps)
		for _, kn := range c.Kernels {
			p(" %s |", kn)
		}
		p("\n|---|%s\n", strings.Repeat("---|", len(c.Kernels)))
		var names []string
		for _, x := range r.Factors {
			if x.PointSet == ps && !slices.Contains(names, x.Name()) {
				names = append(names, x.Name())
			}
		}
		for _, name := range names {
			p("| %s |", name)
			for _, kn := range c.Kernels {
				cell := "–"
				for _, x := range r.Factors {
					if x.PointSet == ps && x.Kernel == kn && x.Name() == name {
						cell = g(x.KLPerPoint)
					}
				}
				p(" %s |", cell)
			}
			p("\n")
		}
		p("\n")
	}
}

// markdownChecks states the acceptance checks, computed from the report's numbers.
func (r *Report) markdownChecks(p func(string, ...any)) {
	p("## Checks\n\n")
	yes := map[bool]string{true: "yes", false: "**NO**"}
	var found bool
	for _, x := range r.Factors {
		if x.PointSet == "uniform" && x.Kernel == "matern32" && x.Name() == "rho=3" {
			found = true
			p("- Uniform 2D, Matérn 3/2, N = %d, ρ = 3: kchol's whole pipeline %.3f s, gonum's dense factorisation %.2f s: %.0f× faster. At least 50×: %s.\n", x.N, x.TotalSeconds, x.DenseSeconds, x.SpeedUp, yes[x.SpeedUp >= 50])
		}
	}
	if !found {
		p("- The uniform/matern32 ρ = 3 case was not run.\n")
	}
	var beaten, total int
	var losers []string
	for _, x := range r.Nystrom {
		if x.PointSet != "uniform" || x.Kernel != "matern32" {
			continue
		}
		var param float64
		fmt.Sscanf(x.Against[strings.Index(x.Against, "=")+1:], "%g", &param)
		if strings.HasPrefix(x.Against, "rho=") && param < 2 {
			continue
		}
		total++
		if x.Beats {
			beaten++
		} else {
			losers = append(losers, x.Against+" ("+x.Inducing+")")
		}
	}
	if total > 0 {
		p("- Uniform 2D, Matérn 3/2: kchol has lower KL than the equal-memory Nyström baseline in %d of %d comparisons at ρ ≥ 2 and m ≥ 5: %s", beaten, total, yes[beaten == total])
		if len(losers) > 0 {
			p(" (not at %s)", strings.Join(losers, ", "))
		}
		p(".\n")
	}
	byName := map[string]*CGRow{}
	for i, x := range r.CG {
		if x.PointSet == "uniform" && x.Kernel == "matern32" {
			byName[x.Preconditioner] = &r.CG[i]
		}
	}
	none, rho3 := byName["none"], byName["rho=3"]
	for _, suffix := range []string{"", unaggregatedSuffix} {
		nearest20, greedy20 := byName["m=20"+suffix], byName["greedy-m=20"+suffix]
		if nearest20 == nil || greedy20 == nil {
			continue
		}
		variant := ""
		if suffix != "" {
			variant = " without supernodes (λ = 1)"
		}
		p("- CG, uniform 2D, Matérn 3/2, σ² = %s%s: %d iterations with the greedy m = 20 factor against %d with the nearest-neighbour m = 20 factor (ratio %.2f). At most half: %s. "+
			"Estimated κ of the preconditioned operator %.3g against %.3g; the classical bound 2((√κ−1)/(√κ+1))ᵏ ≤ %g gives k = %.1f and %.1f, and halving the nearest-neighbour count would need κ ≤ %.3g.\n",
			g(greedy20.Nugget), variant, greedy20.Iterations, nearest20.Iterations, float64(greedy20.Iterations)/float64(max(1, nearest20.Iterations)),
			yes[greedy20.Converged && 2*greedy20.Iterations <= nearest20.Iterations],
			greedy20.Kappa, nearest20.Kappa, r.Config.CGTolerance, CGBoundIterations(greedy20.Kappa, r.Config.CGTolerance), CGBoundIterations(nearest20.Kappa, r.Config.CGTolerance),
			CGBoundKappa(CGBoundIterations(nearest20.Kappa, r.Config.CGTolerance)/2, r.Config.CGTolerance))
	}
	if none != nil && rho3 != nil {
		limit := ""
		if !none.Converged {
			limit = " (unpreconditioned CG hit the iteration limit; its true count is higher)"
		}
		p("- CG, uniform 2D, Matérn 3/2, σ² = %s: %d iterations with the ρ = 3 factor against %d without a preconditioner%s. At most a fifth: %s.\n", g(rho3.Nugget), rho3.Iterations, none.Iterations, limit,
			yes[rho3.Converged && 5*rho3.Iterations <= none.Iterations])
	}
	for _, x := range r.Exact {
		p("- Exact solve, N = %d, %s, tolerance %g: residual %s after %d iterations (reached: %s)", x.N, x.Kernel, x.Tolerance, g(x.Residual), x.Iterations, yes[x.Residual <= x.Tolerance])
		if x.Cond > 0 {
			p("; error against gonum's dense solve %s, cond·tol = %s (within: %s)", g(x.ErrorVsDense), g(x.Bound), yes[x.ErrorVsDense <= x.Bound])
		}
		p(".\n")
	}
	var maxN int
	for _, x := range r.Scaling {
		maxN = max(maxN, x.N)
	}
	if len(r.Scaling) > 0 && maxN < 1000000 {
		p("- The time-against-N sweep stops at N = %d, short of 10⁶.\n", maxN)
	}
	p("\n")
}

// WriteFiles writes report.md, results.json, one CSV per table and the SVG plots into dir
// (created if needed). Each file is written to a temporary name and renamed, so an interrupted
// run leaves earlier files intact.
func (r *Report) WriteFiles(dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if err := writeFileAtomic(filepath.Join(dir, "report.md"), r.WriteMarkdown); err != nil {
		return err
	}
	if err := writeFileAtomic(filepath.Join(dir, "results.json"), r.WriteJSON); err != nil {
		return err
	}
	for _, t := range CSVTables {
		if err := writeFileAtomic(filepath.Join(dir, t+".csv"), func(w io.Writer) error { return r.WriteCSV(w, t) }); err != nil {
			return err
		}
	}
	return r.writePlots(dir)
}

// writeFileAtomic writes path through write to a temporary file in the same directory and
// renames it over path on success; on failure the temporary file is removed.
func writeFileAtomic(path string, write func(io.Writer) error) (err error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriter(tmp)
	if err = write(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = tmp.Chmod(0o644); err != nil {
		return err
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}

// markdownGreedy writes KL(nearest neighbours)/KL(greedy) at equal m, where both were run.
func (r *Report) markdownGreedy(p func(string, ...any)) {
	type key struct {
		ps, kn string
		m      float64
	}
	nearest := map[key]FactorRow{}
	for _, x := range r.Factors {
		if x.Pattern == "neighbors" {
			nearest[key{x.PointSet, x.Kernel, x.Parameter}] = x
		}
	}
	var lines []string
	for _, x := range r.Factors {
		if x.Pattern != "greedy" {
			continue
		}
		nn, ok := nearest[key{x.PointSet, x.Kernel, x.Parameter}]
		if !ok {
			continue
		}
		lines = append(lines, fmt.Sprintf("| %s | %s | %g | %.1f | %.1f | %s | %s | %.2f | %.3f | %.3f |\n", x.PointSet, x.Kernel, x.Parameter,
			nn.NNZPerColumn, x.NNZPerColumn, g(nn.KL), g(x.KL), nn.KL/x.KL, nn.TotalSeconds, x.TotalSeconds))
	}
	if len(lines) == 0 {
		return
	}
	p("## Greedy selection against nearest neighbours at equal m\n\n")
	p("| points | kernel | m | nnz/col nearest | nnz/col greedy | KL nearest | KL greedy | KL ratio | total s nearest | total s greedy |\n|---|---|---|---|---|---|---|---|---|---|\n")
	for _, l := range lines {
		p("%s", l)
	}
	p("\n")
}

// markdownSettings writes the sweeps over λ, the nugget and the number of workers.
func (r *Report) markdownSettings(p func(string, ...any)) {
	titles := map[string]string{
		"lambda":  "Supernode parameter λ (1: no aggregation)",
		"nugget":  "Nugget σ², Θ + σ²I factored directly",
		"workers": "Workers (timing only, no dense reference)",
	}
	for _, sweep := range []string{"lambda", "nugget", "workers"} {
		var rows []SettingsRow
		for _, x := range r.Settings {
			if x.Sweep == sweep {
				rows = append(rows, x)
			}
		}
		if len(rows) == 0 {
			continue
		}
		p("## %s: %s points, %s, N = %d\n\n", titles[sweep], rows[0].PointSet, rows[0].Kernel, rows[0].N)
		p("| pattern | %s | nnz/col | supernodes | stored rows/col | KL | KL/N | log det err | solve err | ordering s | pattern s | aggregation s | factor s | total s |\n", sweep)
		p("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n")
		for _, x := range rows {
			kl, perPoint, logDet, solve := "–", "–", "–", "–"
			if x.HasAccuracy {
				kl, perPoint, logDet, solve = g(x.KL), g(x.KLPerPoint), g(x.LogDetError), g(x.SolveError)
			}
			p("| %s | %g | %.1f | %d | %.1f | %s | %s | %s | %s | %.3f | %.3f | %.3f | %.3f | %.3f |\n", x.Pattern, x.Value, x.NNZPerColumn, x.Supernodes,
				x.StoredRowsPerColumn, kl, perPoint, logDet, solve, x.OrderingSeconds, x.PatternSeconds, x.AggregationSeconds, x.FactorSeconds, x.TotalSeconds)
		}
		p("\n")
	}
}
