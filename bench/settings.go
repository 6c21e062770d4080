package bench

import (
	"context"
	"fmt"
	"runtime"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// SettingsRow is one row of the sweeps over the supernode parameter λ, the nugget and the
// number of workers, each around the defaults of one point set and kernel.
type SettingsRow struct {
	// Sweep is "lambda", "nugget" or "workers"; Value is λ, the nugget or the worker count.
	Sweep   string  `json:"sweep"`
	Value   float64 `json:"value"`
	Pattern string  `json:"pattern"`
	// PointSet, Kernel and N describe the case.
	PointSet string `json:"point_set"`
	Kernel   string `json:"kernel"`
	N        int    `json:"n"`
	// NNZPerColumn, Supernodes and StoredRowsPerColumn describe the factor's storage.
	NNZPerColumn        float64 `json:"nnz_per_column"`
	Supernodes          int     `json:"supernodes"`
	StoredRowsPerColumn float64 `json:"stored_rows_per_column"`
	// HasAccuracy reports whether a dense reference was used; Accuracy is zero otherwise.
	HasAccuracy bool `json:"has_accuracy"`
	Accuracy
	OrderingSeconds    float64 `json:"ordering_seconds"`
	PatternSeconds     float64 `json:"pattern_seconds"`
	AggregationSeconds float64 `json:"aggregation_seconds"`
	FactorSeconds      float64 `json:"factor_seconds"`
	TotalSeconds       float64 `json:"total_seconds"`
}

// sweepPatterns are the two patterns every settings sweep uses: the radius pattern at ρ = 3
// and the default nearest-neighbour pattern.
var sweepPatterns = []cholesky.Settings{{Rho: 3}, {Neighbors: cholesky.DefaultNeighbors}}

// settingsRow factors the points with s and fills a row, with accuracy when ref is not nil.
func settingsRow(ctx context.Context, points []float64, d int, k kernels.Kernel, s cholesky.Settings, ref *DenseReference, seed uint64) (SettingsRow, error) {
	f, elapsed, _, err := timedFactor(ctx, points, d, k, &s)
	if err != nil {
		return SettingsRow{}, err
	}
	n := f.N()
	tm := f.Timings()
	row := SettingsRow{
		Pattern: patternName(s), N: n,
		NNZPerColumn: float64(f.NNZ()) / float64(n), Supernodes: f.Supernodes(),
		StoredRowsPerColumn: float64(f.StoredRows()) / float64(n),
		OrderingSeconds:     tm.Ordering.Seconds(), PatternSeconds: tm.Pattern.Seconds(),
		AggregationSeconds: tm.Aggregation.Seconds(), FactorSeconds: tm.Factor.Seconds(), TotalSeconds: elapsed.Seconds(),
	}
	if ref != nil {
		row.HasAccuracy, row.Accuracy = true, MeasureAccuracy(f, ref, seed)
	}
	return row, nil
}

// runLambdaSweep factors the case at every λ of c.Lambdas with both sweep patterns and
// compares with the case's dense reference.
func runLambdaSweep(ctx context.Context, c Config, rep *Report, ps, kn string, points []float64, d int, k kernels.Kernel, ref *DenseReference, logf func(string, ...any)) error {
	for _, pat := range sweepPatterns {
		for _, lambda := range c.Lambdas {
			s := pat
			s.Lambda, s.Workers = lambda, c.Workers
			row, err := settingsRow(ctx, points, d, k, s, ref, c.Seed+100)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("λ sweep %s/%s/%s λ=%g: %v", ps, kn, patternName(s), lambda, err))
				continue
			}
			row.Sweep, row.Value, row.PointSet, row.Kernel = "lambda", lambda, ps, kn
			rep.Settings = append(rep.Settings, row)
			logf("%s/%s/%s: λ = %g: nnz/col %.1f, %d supernodes, KL %.3g, %.2f s", ps, kn, row.Pattern, lambda, row.NNZPerColumn, row.Supernodes, row.KL, row.TotalSeconds)
		}
	}
	return nil
}

// runNuggetSweep factors c.NuggetN points of the sweep case with every nugget of
// c.NuggetSweep added to the kernel (the direct route: Θ + σ²I treated as the kernel matrix),
// each against its own dense reference.
func runNuggetSweep(ctx context.Context, c Config, rep *Report, logf func(string, ...any)) error {
	if len(c.NuggetSweep) == 0 {
		return nil
	}
	ps, kn := c.sweepCase()
	points, d, err := PointSet(ps, c.NuggetN, c.Seed)
	if err != nil {
		return err
	}
	for _, nugget := range c.NuggetSweep {
		k := kernelFor(c, kn, d)
		k.Nugget = nugget
		ref, err := NewDenseReference(ctx, points, d, k, c.Workers)
		if err != nil {
			if ctx.Err() != nil {
				return ctx.Err()
			}
			rep.Notes = append(rep.Notes, fmt.Sprintf("nugget sweep %s/%s nugget %g: %v", ps, kn, nugget, err))
			continue
		}
		for _, pat := range sweepPatterns {
			s := pat
			s.Workers = c.Workers
			row, err := settingsRow(ctx, points, d, k, s, ref, c.Seed+100)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("nugget sweep %s/%s/%s nugget %g: %v", ps, kn, patternName(s), nugget, err))
				continue
			}
			row.Sweep, row.Value, row.PointSet, row.Kernel = "nugget", nugget, ps, kn
			rep.Settings = append(rep.Settings, row)
			logf("%s/%s/%s: nugget %g, N = %d: KL %.3g, solve error %.3g", ps, kn, row.Pattern, nugget, c.NuggetN, row.KL, row.SolveError)
		}
	}
	return nil
}

// runWorkerSweep times c.WorkersN points of the sweep case's point set with every worker
// count of c.WorkerCounts (no dense reference: timing only).
func runWorkerSweep(ctx context.Context, c Config, rep *Report, logf func(string, ...any)) error {
	if len(c.WorkerCounts) == 0 {
		return nil
	}
	ps, kn := c.sweepCase()
	points, d, err := PointSet(ps, c.WorkersN, c.Seed)
	if err != nil {
		return err
	}
	k := kernelFor(c, kn, d)
	for _, pat := range sweepPatterns {
		for _, workers := range c.WorkerCounts {
			s := pat
			s.Workers = workers
			row, err := settingsRow(ctx, points, d, k, s, nil, 0)
			if err != nil {
				if ctx.Err() != nil {
					return ctx.Err()
				}
				rep.Notes = append(rep.Notes, fmt.Sprintf("worker sweep %s/%s workers %d: %v", ps, kn, workers, err))
				continue
			}
			row.Sweep, row.Value, row.PointSet, row.Kernel = "workers", float64(workers), ps, kn
			rep.Settings = append(rep.Settings, row)
			logf("%s/%s/%s: %d workers, N = %d: %.2f s (factor %.2f s)", ps, kn, row.Pattern, workers, c.WorkersN, row.TotalSeconds, row.FactorSeconds)
		}
	}
	return nil
}

// sweepCase returns the point set and kernel of the settings sweeps.
func (c Config) sweepCase() (pointSet, kernel string) {
	ps, kn, _ := cutCase(c.SweepCase)
	return ps, kn
}

// defaultWorkerCounts returns 1, 2, 4, … up to GOMAXPROCS, and GOMAXPROCS itself.
func defaultWorkerCounts() []int {
	var out []int
	for w := 1; w < runtime.GOMAXPROCS(0); w *= 2 {
		out = append(out, w)
	}
	return append(out, runtime.GOMAXPROCS(0))
}
