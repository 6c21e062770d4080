package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// factorOptions are the flags of kchol factor.
type factorOptions struct {
	points, columns, kernel, lengthScale, output string
	variance, nugget, rho, lambda                float64
	neighbors, workers, candidates               int
	maxMemory                                    string
	quiet, greedy, joint                         bool
}

func factorCommand() (*flag.FlagSet, func(context.Context, *flag.FlagSet, io.Writer, io.Writer) error) {
	fs := newFlagSet("factor")
	o := &factorOptions{}
	fs.StringVar(&o.points, "points", "", "CSV `file` of points, one per row, with a header row (required)")
	fs.StringVar(&o.columns, "columns", "", "comma-separated header `names` of the coordinate columns (default: every column)")
	fs.StringVar(&o.kernel, "kernel", "", "covariance `family`: matern12, matern32, matern52 or gaussian (required)")
	fs.StringVar(&o.lengthScale, "lengthscale", "", "length `scale`: one value, or a comma-separated list of one per coordinate (required)")
	fs.Float64Var(&o.variance, "variance", 1, "`variance` σ² = k(x, x), > 0")
	fs.Float64Var(&o.nugget, "nugget", 0, "`nugget` added to the diagonal of the kernel matrix, ≥ 0")
	fs.IntVar(&o.neighbors, "neighbors", cholesky.DefaultNeighbors, "nearest-neighbour pattern (the default) with `m` nearest coarser points per column")
	fs.Float64Var(&o.rho, "rho", 0, "radius pattern S_ρ with this `ρ` > 0 instead of nearest neighbours (inf: the full, exact factor)")
	fs.BoolVar(&o.greedy, "greedy", false, "choose each column's m rows greedily among the nearest coarser points, by conditional variance (slower to build, more accurate per nonzero)")
	fs.BoolVar(&o.joint, "joint", false, "with -greedy and -lambda > 1: choose one shared set of m points per supernode for all its members")
	fs.IntVar(&o.candidates, "candidates", 0, "with -greedy: the number `c` of nearest coarser points to choose from; 0 means 4m")
	fs.Float64Var(&o.lambda, "lambda", 1.5, "supernode aggregation `λ`: columns within a factor λ in length scale share one row set; 0 or 1 means none")
	fs.IntVar(&o.workers, "workers", 0, "number of goroutines; 0 means one per CPU")
	fs.StringVar(&o.maxMemory, "max-memory", "", "refuse to factor when the estimated memory exceeds this `size` (e.g. 4GiB, 500MB, 2e9 bytes; 0: no limit; default 80% of physical memory)")
	fs.BoolVar(&o.quiet, "quiet", false, "print no progress, only the summary line")
	fs.StringVar(&o.output, "o", "", "factor `file` to write (required)")
	return fs, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error {
		return runFactor(ctx, fs, o, stderr)
	}
}

// flagsSet returns the names of the flags given on the command line.
func flagsSet(fs *flag.FlagSet) map[string]bool {
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	return set
}

// checkGreedyFlags validates -greedy, -joint and -candidates against the pattern flags, for
// the commands that build factors (factor, timing).
func checkGreedyFlags(command string, set map[string]bool, greedy, joint bool, neighbors, candidates int) error {
	switch {
	case set["rho"] && greedy:
		return usagef("%s: -greedy selects among nearest neighbours; it cannot be combined with -rho", command)
	case joint && !greedy:
		return usagef("%s: -joint needs -greedy", command)
	case set["candidates"] && !greedy:
		return usagef("%s: -candidates needs -greedy", command)
	case candidates < 0 || (set["candidates"] && candidates < neighbors):
		return usagef("%s: -candidates %d, want at least -neighbors (%d)", command, candidates, neighbors)
	}
	return nil
}

// checkFactorFlags validates the flags that do not depend on the points.
func checkFactorFlags(o *factorOptions, set map[string]bool) (kernels.Family, []float64, []string, *cholesky.Settings, error) {
	for _, name := range []string{"points", "kernel", "lengthscale", "o"} {
		if !set[name] {
			return 0, nil, nil, nil, usagef("factor: missing -%s", name)
		}
	}
	family, err := kernels.ParseFamily(o.kernel)
	if err != nil {
		return 0, nil, nil, nil, usagef("factor: -kernel: unknown kernel %q (want matern12, matern32, matern52 or gaussian)", o.kernel)
	}
	scales, err := parseLengthScales(o.lengthScale)
	if err != nil {
		return 0, nil, nil, nil, err
	}
	switch {
	case !(o.variance > 0) || math.IsInf(o.variance, 0):
		return 0, nil, nil, nil, usagef("factor: -variance %v, want a finite value > 0", o.variance)
	case !(o.nugget >= 0) || math.IsInf(o.nugget, 0):
		return 0, nil, nil, nil, usagef("factor: -nugget %v, want a finite value ≥ 0", o.nugget)
	case set["neighbors"] && set["rho"]:
		return 0, nil, nil, nil, usagef("factor: -neighbors and -rho are mutually exclusive: give one pattern")
	case set["neighbors"] && o.neighbors < 1:
		return 0, nil, nil, nil, usagef("factor: -neighbors %d, want ≥ 1", o.neighbors)
	case set["rho"] && !(o.rho > 0):
		return 0, nil, nil, nil, usagef("factor: -rho %v, want a value > 0 (or inf)", o.rho)
	case o.workers < 0:
		return 0, nil, nil, nil, usagef("factor: -workers %d, want ≥ 0", o.workers)
	case !(o.lambda == 0 || o.lambda >= 1) || math.IsInf(o.lambda, 0):
		return 0, nil, nil, nil, usagef("factor: -lambda %v, want 0, 1 (no aggregation) or a finite value > 1", o.lambda)
	case o.output == "":
		return 0, nil, nil, nil, usagef("factor: -o is empty")
	}
	if err := checkGreedyFlags("factor", set, o.greedy, o.joint, o.neighbors, o.candidates); err != nil {
		return 0, nil, nil, nil, err
	}
	var columns []string
	if set["columns"] {
		columns, err = parseColumns(o.columns)
		if err != nil {
			return 0, nil, nil, nil, err
		}
	}
	limit, err := parseMemory(o.maxMemory)
	if err != nil {
		return 0, nil, nil, nil, err
	}
	// -lambda 0 means no aggregation; in cholesky.Settings that is any value ≤ 1, and 0
	// means the default.
	s := &cholesky.Settings{Neighbors: o.neighbors, Greedy: o.greedy, JointGreedy: o.joint, Candidates: o.candidates, Lambda: max(1, o.lambda), Workers: o.workers, MaxMemory: limit}
	if set["rho"] {
		s.Rho, s.Neighbors = o.rho, 0
	}
	return family, scales, columns, s, nil
}

// parseLengthScales parses -lengthscale: one value or a comma-separated list.
func parseLengthScales(s string) ([]float64, error) {
	fields := strings.Split(s, ",")
	scales := make([]float64, len(fields))
	for i, f := range fields {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, usagef("factor: -lengthscale: %q is not a number", strings.TrimSpace(f))
		}
		if !(v > 0) || math.IsInf(v, 0) {
			return nil, usagef("factor: -lengthscale: value %d is %v, want a finite value > 0", i+1, v)
		}
		scales[i] = v
	}
	return scales, nil
}

// parseColumns parses -columns: distinct, non-empty, comma-separated names.
func parseColumns(s string) ([]string, error) {
	names := strings.Split(s, ",")
	for i, n := range names {
		names[i] = strings.TrimSpace(n)
		if names[i] == "" {
			return nil, usagef("factor: -columns: name %d is empty", i+1)
		}
		for _, m := range names[:i] {
			if m == names[i] {
				return nil, usagef("factor: -columns: %q is named twice", m)
			}
		}
	}
	return names, nil
}

func runFactor(ctx context.Context, fs *flag.FlagSet, o *factorOptions, stderr io.Writer) error {
	family, scales, columns, settings, err := checkFactorFlags(o, flagsSet(fs))
	if err != nil {
		return err
	}
	start := time.Now()
	file, err := os.Open(o.points)
	if err != nil {
		return err
	}
	points, err := readCSV(file, o.points, columns)
	file.Close()
	if err != nil {
		return err
	}
	readTime := time.Since(start)

	d := points.cols
	k := kernels.Stationary{Family: family, Dimension: d, Variance: o.variance, Nugget: o.nugget}
	switch len(scales) {
	case 1:
		k.LengthScale = scales[0]
	case d:
		k.LengthScales = scales
	default:
		return usagef("factor: -lengthscale has %d values, but %s has %d coordinate columns (%s)", len(scales), o.points, d, strings.Join(points.header, ", "))
	}
	progress := newProgress(stderr, o.quiet)
	settings.Progress = progress.report
	f, err := cholesky.New(ctx, points.values, d, k, settings)
	progress.finish()
	if err != nil {
		return fmt.Errorf("%s: %w", o.points, err)
	}
	start = time.Now()
	if err := f.WriteFile(o.output); err != nil {
		return err
	}
	writeTime := time.Since(start)
	tm := f.Timings()
	count, members, _ := f.SupernodeStats()
	fmt.Fprintf(stderr, "kchol factor: %s, %d supernodes (%.2f columns each); seconds: read %s, ordering %s, pattern %s, aggregation %s, factor %s, write %s%s\n",
		describe(f), count, members, seconds(readTime), seconds(tm.Ordering), seconds(tm.Pattern), seconds(tm.Aggregation), seconds(tm.Factor), seconds(writeTime), jitterNote(f))
	return nil
}

// describe returns the size summary of f: N, d, the pattern and nnz.
func describe(f *cholesky.Factor) string {
	pattern := "given pattern"
	switch {
	case f.Rho() != 0:
		pattern = fmt.Sprintf("radius pattern ρ = %g", f.Rho())
	case f.Neighbors() != 0:
		pattern = fmt.Sprintf("nearest-neighbour pattern m = %d", f.Neighbors())
		if greedy, c := f.Greedy(); greedy {
			pattern = fmt.Sprintf("greedy pattern m = %d of %d candidates", f.Neighbors(), c)
			if f.JointGreedy() {
				pattern = fmt.Sprintf("joint greedy pattern, %d shared points per supernode of %d candidates", f.Neighbors(), c)
			}
		}
	}
	return fmt.Sprintf("N = %d, d = %d, %s, nnz = %d (%.1f per column)", f.N(), f.Dim(), pattern, f.NNZ(), float64(f.NNZ())/float64(f.N()))
}

func seconds(d time.Duration) string { return fmt.Sprintf("%.3g", d.Seconds()) }

func jitterNote(f *cholesky.Factor) string {
	if f.Jittered() > 0 {
		return fmt.Sprintf("; jittered columns: %d", f.Jittered())
	}
	return ""
}
