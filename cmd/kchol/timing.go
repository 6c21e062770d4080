package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime"
	"runtime/pprof"
	"strconv"
	"strings"
	"time"

	"github.com/kchol/kchol/bench"
	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// timingOptions are the flags of kchol timing.
type timingOptions struct {
	n, d, neighbors, workers int
	candidates               int
	greedy, joint            bool
	points, kernel           string
	lengthScale, rho, lambda float64
	seed                     uint64
	potrfTime                time.Duration
	quiet                    bool
	cpuProfile               string
}

func timingCommand() (*flag.FlagSet, func(context.Context, *flag.FlagSet, io.Writer, io.Writer) error) {
	fs := newFlagSet("timing")
	o := &timingOptions{}
	fs.IntVar(&o.n, "n", 100000, "number of `points`")
	fs.IntVar(&o.d, "d", 2, "`dimension` of the points")
	fs.StringVar(&o.points, "points", "uniform", "point `set`: uniform (unit cube) or clustered (40 blobs plus 10 % background)")
	fs.Uint64Var(&o.seed, "seed", 1, "`seed` of the point set")
	fs.StringVar(&o.kernel, "kernel", "matern32", "covariance `family`")
	fs.Float64Var(&o.lengthScale, "lengthscale", 0.01, "length `scale`")
	fs.IntVar(&o.neighbors, "neighbors", cholesky.DefaultNeighbors, "nearest-neighbour pattern with `m` neighbours")
	fs.Float64Var(&o.rho, "rho", 0, "radius pattern with this `ρ` instead")
	fs.BoolVar(&o.greedy, "greedy", false, "choose each column's m rows greedily by conditional variance (as kchol factor -greedy)")
	fs.BoolVar(&o.joint, "joint", false, "with -greedy and -lambda > 1: one shared set of m points per supernode")
	fs.IntVar(&o.candidates, "candidates", 0, "with -greedy: the number `c` of nearest coarser points to choose from; 0 means 4m")
	fs.Float64Var(&o.lambda, "lambda", 1.5, "supernode aggregation `λ` (0 or 1: none)")
	fs.IntVar(&o.workers, "workers", 0, "number of goroutines; 0 means one per CPU")
	fs.DurationVar(&o.potrfTime, "potrf-time", time.Second, "how long to measure gonum's Potrf at the median supernode size")
	fs.BoolVar(&o.quiet, "quiet", false, "print no progress")
	fs.StringVar(&o.cpuProfile, "cpuprofile", "", "write a CPU profile of the run to `file` (for go tool pprof)")
	return fs, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error {
		return runTiming(ctx, fs, o, stdout, stderr)
	}
}

func runTiming(ctx context.Context, fs *flag.FlagSet, o *timingOptions, stdout, stderr io.Writer) error {
	set := flagsSet(fs)
	family, err := kernels.ParseFamily(o.kernel)
	switch {
	case err != nil:
		return usagef("timing: -kernel: unknown kernel %q (want matern12, matern32, matern52 or gaussian)", o.kernel)
	case o.n < 1 || o.d < 1:
		return usagef("timing: -n %d, -d %d: want both ≥ 1", o.n, o.d)
	case set["neighbors"] && set["rho"]:
		return usagef("timing: -neighbors and -rho are mutually exclusive: give one pattern")
	case !(o.lengthScale > 0):
		return usagef("timing: -lengthscale %v, want > 0", o.lengthScale)
	case !(o.lambda == 0 || o.lambda >= 1):
		return usagef("timing: -lambda %v, want 0, 1 or a value > 1", o.lambda)
	}
	if err := checkGreedyFlags("timing", set, o.greedy, o.joint, o.neighbors, o.candidates); err != nil {
		return err
	}
	var points []float64
	switch o.points {
	case "uniform":
		points = bench.Uniform(o.n, o.d, o.seed)
	case "clustered":
		points = bench.Clustered(o.n, o.d, o.seed)
	default:
		return usagef("timing: -points %q: want uniform or clustered", o.points)
	}
	workers := o.workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	s := &cholesky.Settings{Neighbors: o.neighbors, Greedy: o.greedy, JointGreedy: o.joint, Candidates: o.candidates, Lambda: max(1, o.lambda), Workers: workers}
	if set["rho"] {
		s.Rho, s.Neighbors = o.rho, 0
	}
	k := kernels.Stationary{Family: family, Dimension: o.d, LengthScale: o.lengthScale}
	progress := newProgress(stderr, o.quiet)
	s.Progress = progress.report
	if o.cpuProfile != "" {
		out, err := os.Create(o.cpuProfile)
		if err != nil {
			return err
		}
		defer out.Close()
		if err := pprof.StartCPUProfile(out); err != nil {
			return err
		}
	}
	start := time.Now()
	f, err := cholesky.New(ctx, points, o.d, k, s)
	total := time.Since(start)
	if o.cpuProfile != "" {
		pprof.StopCPUProfile()
	}
	progress.finish()
	if err != nil {
		return err
	}
	tm := f.Timings()
	count, members, medianRows := f.SupernodeStats()
	factorRate := f.Flops() / tm.Factor.Seconds() / 1e9
	potrfRate := cholesky.MeasurePotrf(medianRows, o.potrfTime)
	perWorker := factorRate / float64(workers)
	fmt.Fprintf(stdout, "points: %d %s in %d dimensions (seed %d); kernel %v, length scale %g\n", o.n, o.points, o.d, o.seed, family, o.lengthScale)
	fmt.Fprintf(stdout, "pattern: %s, λ = %g; workers %d (GOMAXPROCS %d)\n", describePattern(f), f.Lambda(), workers, runtime.GOMAXPROCS(0))
	fmt.Fprintf(stdout, "nnz: %d (%.1f per column); stored row indices: %d; supernodes: %d, %.2f columns each, median row set %d\n",
		f.NNZ(), float64(f.NNZ())/float64(f.N()), f.StoredRows(), count, members, medianRows)
	fmt.Fprintf(stdout, "seconds: ordering %.3f, pattern %.3f, aggregation %.3f, factor %.3f, total %.3f\n",
		tm.Ordering.Seconds(), tm.Pattern.Seconds(), tm.Aggregation.Seconds(), tm.Factor.Seconds(), total.Seconds())
	fmt.Fprintf(stdout, "factor: %.3g GFLOP in %.3f s = %.3g GFLOP/s (%.3g per worker); gonum Potrf at %d×%d on one goroutine: %.3g GFLOP/s; per-worker ratio %.2f\n",
		f.Flops()/1e9, tm.Factor.Seconds(), factorRate, perWorker, medianRows, medianRows, potrfRate, perWorker/potrfRate)
	fmt.Fprintf(stdout, "memory: estimate %.3g GB; peak resident %s\n", float64(f.MemoryEstimate())/1e9, peakResident())
	return nil
}

// describePattern names the pattern of f.
func describePattern(f *cholesky.Factor) string {
	greedy, candidates := f.Greedy()
	switch {
	case f.Rho() != 0:
		return fmt.Sprintf("radius ρ = %g", f.Rho())
	case f.JointGreedy():
		return fmt.Sprintf("joint greedy m = %d per supernode, %d candidates", f.Neighbors(), candidates)
	case greedy:
		return fmt.Sprintf("greedy m = %d, %d candidates", f.Neighbors(), candidates)
	}
	return fmt.Sprintf("nearest neighbours m = %d", f.Neighbors())
}

// peakResident returns the process's peak resident set size (VmHWM in /proc/self/status), or
// "unknown" where that file does not exist.
func peakResident() string {
	data, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return "unknown"
	}
	for _, line := range strings.Split(string(data), "\n") {
		fields := strings.Fields(line)
		if len(fields) >= 2 && fields[0] == "VmHWM:" {
			if kb, err := strconv.ParseFloat(fields[1], 64); err == nil {
				return fmt.Sprintf("%.3g GB", kb*1024/1e9)
			}
		}
	}
	return "unknown"
}
