package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"github.com/kchol/kchol/bench"
)

// benchOptions are the flags of kchol bench.
type benchOptions struct {
	config, output                                                                string
	pointSets, kernels, rhos, neighbors, greedy, joint, cgCases, scalingN, exactN string
	sweepCase, lambdas, nuggetSweep, workerCounts                                 string
	n, denseLimit, workers                                                        int
	lengthScale, lambda, cgNugget                                                 float64
	seed                                                                          uint64
	nystrom                                                                       bool
}

func benchCommand() (*flag.FlagSet, func(context.Context, *flag.FlagSet, io.Writer, io.Writer) error) {
	fs, o := newBenchFlags()
	return fs, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error {
		return runBench(ctx, fs, o, stdout, stderr)
	}
}

// newBenchFlags returns the flags of kchol bench and the options they set.
func newBenchFlags() (*flag.FlagSet, *benchOptions) {
	fs := newFlagSet("bench")
	o := &benchOptions{}
	fs.StringVar(&o.config, "config", "", "JSON `file` describing the sweep (field names as in results.json's \"config\"); flags given override it")
	fs.IntVar(&o.n, "n", 8000, "number of points of the dense comparisons")
	fs.IntVar(&o.denseLimit, "dense-limit", 8000, "largest N with a dense reference (gonum; 16 N² bytes of memory)")
	fs.StringVar(&o.pointSets, "points", "uniform,clustered", "comma-separated point `sets`: "+strings.Join(bench.PointSetNames, ", "))
	fs.StringVar(&o.kernels, "kernels", "matern12,matern32,matern52,gaussian", "comma-separated kernel `families`")
	fs.Float64Var(&o.lengthScale, "lengthscale", 0.1, "length `scale` of every kernel")
	fs.StringVar(&o.rhos, "rho", "1,2,3,4,5,6,7,8", "comma-separated `values` of ρ for the radius pattern (empty: none)")
	fs.StringVar(&o.neighbors, "neighbors", "5,10,20,30,50", "comma-separated `values` of m for the nearest-neighbour pattern (empty: none)")
	fs.StringVar(&o.greedy, "greedy", "10,20,30", "comma-separated `values` of m for the greedy pattern, 4m candidates (empty: none)")
	fs.StringVar(&o.sweepCase, "sweep-case", "uniform/matern32", "pointset/kernel `case` of the λ, nugget and worker sweeps")
	fs.StringVar(&o.lambdas, "lambdas", "1,1.25,1.5,2", "comma-separated `values` of λ for the supernode sweep (empty: none)")
	fs.StringVar(&o.nuggetSweep, "nugget-sweep", "0,1e-4,1e-2", "comma-separated `nuggets` of the noise sweep at 2000 points (empty: none)")
	fs.StringVar(&o.workerCounts, "worker-counts", "", "comma-separated worker `counts` of the timing sweep at 10⁵ points (default 1, 2, 4, … up to GOMAXPROCS; \"none\": none)")
	fs.StringVar(&o.joint, "joint", "20,40,60", "comma-separated `values` of m (shared points per supernode) for the joint greedy pattern (empty: none)")
	fs.Float64Var(&o.lambda, "lambda", 0, "supernode aggregation `λ` of every factor (0: the default 1.5; 1: none)")
	fs.BoolVar(&o.nystrom, "nystrom", true, "compare with the equal-memory Nyström baseline")
	fs.StringVar(&o.cgCases, "cg", "uniform/matern32", "comma-separated pointset/kernel `cases` with conjugate-gradient comparisons (empty: none)")
	fs.Float64Var(&o.cgNugget, "cg-nugget", 1e-6, "nugget `σ²` added to the kernel of the conjugate-gradient cases (CG solves (Θ + σ²I) x = b; 0: none)")
	fs.StringVar(&o.scalingN, "scaling-n", "1000,2000,4000,8000,16000,100000,1000000", "comma-separated `sizes` of the time-against-N sweep (empty: none)")
	fs.StringVar(&o.exactN, "exact-n", "8000,20000", "comma-separated `sizes` of the exact iterative solve check (empty: none)")
	fs.Uint64Var(&o.seed, "seed", 1, "`seed` of the point sets and right-hand sides")
	fs.IntVar(&o.workers, "workers", 0, "number of goroutines; 0 means one per CPU")
	fs.StringVar(&o.output, "o", "", "`directory` for report.md, results.json, the CSV tables and the SVG plots (required)")
	return fs, o
}

// benchConfig builds the sweep from the JSON file (if any) and the flags given.
func benchConfig(fs *flag.FlagSet, o *benchOptions) (bench.Config, error) {
	var c bench.Config
	set := flagsSet(fs)
	if o.config != "" {
		data, err := os.ReadFile(o.config)
		if err != nil {
			return c, err
		}
		dec := json.NewDecoder(strings.NewReader(string(data)))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&c); err != nil {
			return c, fmt.Errorf("%s: %v", o.config, err)
		}
	}
	use := func(name string) bool { return set[name] || o.config == "" }
	var err error
	if use("n") {
		c.N = o.n
	}
	if use("dense-limit") {
		c.DenseLimit = o.denseLimit
	}
	if use("points") {
		c.PointSets = splitList(o.pointSets)
	}
	if use("kernels") {
		c.Kernels = splitList(o.kernels)
	}
	if use("lengthscale") {
		c.LengthScale = o.lengthScale
	}
	if use("rho") {
		if c.Rhos, err = parseList(o.rhos, "rho", func(s string) (float64, error) { return strconv.ParseFloat(s, 64) }); err != nil {
			return c, err
		}
	}
	if use("neighbors") {
		if c.Neighbors, err = parseList(o.neighbors, "neighbors", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("greedy") {
		if c.Greedy, err = parseList(o.greedy, "greedy", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("joint") {
		if c.JointGreedy, err = parseList(o.joint, "joint", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("lambda") {
		c.Lambda = o.lambda
	}
	if use("sweep-case") {
		c.SweepCase = o.sweepCase
	}
	if use("lambdas") {
		if c.Lambdas, err = parseList(o.lambdas, "lambdas", func(s string) (float64, error) { return strconv.ParseFloat(s, 64) }); err != nil {
			return c, err
		}
	}
	if use("nugget-sweep") {
		if c.NuggetSweep, err = parseList(o.nuggetSweep, "nugget-sweep", func(s string) (float64, error) { return strconv.ParseFloat(s, 64) }); err != nil {
			return c, err
		}
	}
	if set["worker-counts"] {
		if strings.TrimSpace(o.workerCounts) == "none" {
			c.WorkerCounts = []int{}
		} else if c.WorkerCounts, err = parseList(o.workerCounts, "worker-counts", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("nystrom") {
		c.Nystrom = &o.nystrom
	}
	if use("cg") {
		c.CGCases = splitList(o.cgCases)
	}
	if use("cg-nugget") {
		c.CGNugget = &o.cgNugget
	}
	if use("scaling-n") {
		if c.ScalingN, err = parseList(o.scalingN, "scaling-n", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("exact-n") {
		if c.ExactSolveN, err = parseList(o.exactN, "exact-n", strconv.Atoi); err != nil {
			return c, err
		}
	}
	if use("seed") {
		c.Seed = o.seed
	}
	if use("workers") {
		c.Workers = o.workers
	}
	return c, nil
}

// splitList splits a comma-separated list; an empty string gives an empty, non-nil list.
func splitList(s string) []string {
	out := []string{}
	for _, f := range strings.Split(s, ",") {
		if f = strings.TrimSpace(f); f != "" {
			out = append(out, f)
		}
	}
	return out
}

func parseList[T any](s, flagName string, parse func(string) (T, error)) ([]T, error) {
	out := []T{}
	for _, f := range splitList(s) {
		v, err := parse(f)
		if err != nil {
			return nil, usagef("bench: -%s: %q is not a number", flagName, f)
		}
		out = append(out, v)
	}
	return out, nil
}

func runBench(ctx context.Context, fs *flag.FlagSet, o *benchOptions, stdout, stderr io.Writer) error {
	if o.output == "" {
		return usagef("bench: missing -o")
	}
	if o.workers < 0 {
		return usagef("bench: -workers %d, want ≥ 0", o.workers)
	}
	c, err := benchConfig(fs, o)
	if err != nil {
		return err
	}
	if err := c.WithDefaults().Validate(); err != nil {
		return usagef("%v", err)
	}
	rep, err := bench.Run(ctx, c, stderr)
	if err != nil {
		return err
	}
	rep.Command = "kchol bench " + strings.Join(os.Args[2:], " ")
	if len(os.Args) < 2 || os.Args[1] != "bench" {
		rep.Command = "kchol bench (called in-process)"
	}
	if err := rep.WriteFiles(o.output); err != nil {
		return err
	}
	if err := rep.WriteMarkdown(stdout); err != nil {
		return err
	}
	fmt.Fprintf(stderr, "kchol bench: wrote %s (report.md, results.json, CSV tables, SVG plots) in %.0f s\n", o.output, rep.WallSeconds)
	return nil
}
