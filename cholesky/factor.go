package cholesky

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync/atomic"
	"time"

	"golang.org/x/sync/errgroup"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"

	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// DefaultNeighbors is the number m of nearest coarser points per column of the default
// (nearest-neighbour) pattern.
const DefaultNeighbors = 30

// Settings configures New. The zero value, or nil, gives the nearest-neighbour pattern with
// m = DefaultNeighbors on GOMAXPROCS workers.
type Settings struct {
	// Rho, when > 0, selects the radius pattern S_ρ with this ρ; +Inf gives the full lower
	// triangle (the exact factor). 0 means the nearest-neighbour pattern.
	Rho float64
	// Neighbors is m for the nearest-neighbour pattern (used when Rho is 0). 0 means
	// DefaultNeighbors.
	Neighbors int
	// Workers is the number of goroutines computing columns. 0 means GOMAXPROCS.
	Workers int
}

func (s *Settings) withDefaults() Settings {
	var out Settings
	if s != nil {
		out = *s
	}
	if out.Rho == 0 && out.Neighbors == 0 {
		out.Neighbors = DefaultNeighbors
	}
	if out.Rho != 0 {
		out.Neighbors = 0
	}
	if out.Workers <= 0 {
		out.Workers = runtime.GOMAXPROCS(0)
	}
	return out
}

// Timings records the wall-clock time of each phase of New.
type Timings struct {
	Ordering, Pattern, Factor time.Duration
}

// Factor is a sparse lower-triangular L in the reverse maximin positions with
// Θ⁻¹ ≈ L Lᵀ (the KL-optimal factor on its pattern). Its methods take and return vectors in
// the user's point order. A Factor is safe for concurrent use by its read-only methods.
type Factor struct {
	n, d   int
	kernel kernels.Kernel

	// points holds the points in position order: point p is points[p*d:(p+1)*d].
	points []float64
	// order[p] is the user index of position p; position[i] is the position of user index i.
	order, position []int
	// lengthScale[p] is the maximin length scale of position p.
	lengthScale []float64

	// rho and neighbors describe the pattern (exactly one is non-zero).
	rho       float64
	neighbors int

	// Column j of L has rows rows[colStart[j]:colStart[j+1]] (ascending positions, the first
	// being j) and values values[colStart[j]:colStart[j+1]].
	colStart []int64
	rows     []int32
	values   []float64

	// jittered counts the columns whose local block needed a diagonal jitter.
	jittered int
	timings  Timings
}

// New orders the points (flat, row-major, d per point, in the user's order) by reverse
// maximin, builds the pattern chosen in s and computes the KL-optimal factor of the kernel
// matrix Θᵢⱼ = k(xᵢ, xⱼ) (+ nugget on the diagonal). The points are copied, never modified.
//
// It returns an error if the points contain NaN or Inf, if two points coincide and the kernel
// has no nugget, if a local block is not numerically positive definite even after jitter, or
// if ctx is cancelled. It panics if d does not match k.Dim() or len(points) is not a multiple
// of d. Cost: O(N log² N) ordering and pattern, O(N m³) factor for m rows per column.
//
// The method is that of F. Schäfer, M. Katzfuss, H. Owhadi, Sparse Cholesky factorization by
// Kullback–Leibler minimization, SIAM J. Sci. Comput. 43(3), 2021, which is the Vecchia
// approximation (A. V. Vecchia, J. R. Stat. Soc. B 50, 1988) in a maximin ordering.
func New(ctx context.Context, points []float64, d int, k kernels.Kernel, s *Settings) (*Factor, error) {
	if d < 1 || len(points)%d != 0 {
		panic("cholesky: len(points) is not a multiple of d ≥ 1")
	}
	if k.Dim() != d {
		panic(fmt.Sprintf("cholesky: kernel dimension %d, points dimension %d", k.Dim(), d))
	}
	set := s.withDefaults()
	n := len(points) / d
	if n == 0 {
		return nil, errors.New("cholesky: no points")
	}
	if n >= math.MaxInt32 {
		return nil, fmt.Errorf("cholesky: %d points, at most %d supported", n, math.MaxInt32-1)
	}
	for i, v := range points {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("cholesky: point %d coordinate %d is %v", i/d, i%d, v)
		}
	}
	start := time.Now()
	ord := ordering.ReverseMaximin(points, d, nil)
	orderTime := time.Since(start)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	permuted := make([]float64, len(points))
	for p, i := range ord.Order {
		copy(permuted[p*d:(p+1)*d], points[i*d:(i+1)*d])
	}
	start = time.Now()
	var pat *ordering.Pattern
	if set.Rho > 0 {
		pat = ordering.Radius(permuted, d, ord.LengthScale, set.Rho)
	} else {
		pat = ordering.NearestNeighbors(permuted, d, set.Neighbors)
	}
	patternTime := time.Since(start)
	f, err := newFromPattern(ctx, permuted, d, k, ord, pat, set)
	if err != nil {
		return nil, err
	}
	f.timings.Ordering, f.timings.Pattern = orderTime, patternTime
	return f, nil
}

// NewFromPattern computes the KL-optimal factor on a given ordering and pattern. points are in
// the user's order; pat is in the positions of ord (as ordering.Radius and
// ordering.NearestNeighbors build it). Only s.Workers is used from s. Errors and cost as New.
func NewFromPattern(ctx context.Context, points []float64, d int, k kernels.Kernel, ord ordering.Ordering, pat *ordering.Pattern, s *Settings) (*Factor, error) {
	if d < 1 || len(points)%d != 0 {
		panic("cholesky: len(points) is not a multiple of d ≥ 1")
	}
	if k.Dim() != d {
		panic(fmt.Sprintf("cholesky: kernel dimension %d, points dimension %d", k.Dim(), d))
	}
	n := len(points) / d
	if len(ord.Order) != n || pat.N() != n {
		panic("cholesky: ordering or pattern size does not match the points")
	}
	permuted := make([]float64, len(points))
	for p, i := range ord.Order {
		copy(permuted[p*d:(p+1)*d], points[i*d:(i+1)*d])
	}
	set := s.withDefaults()
	set.Rho, set.Neighbors = 0, 0
	return newFromPattern(ctx, permuted, d, k, ord, pat, set)
}

func newFromPattern(ctx context.Context, permuted []float64, d int, k kernels.Kernel, ord ordering.Ordering, pat *ordering.Pattern, set Settings) (*Factor, error) {
	n := len(permuted) / d
	f := &Factor{
		n: n, d: d, kernel: k,
		points:      permuted,
		order:       ord.Order,
		position:    make([]int, n),
		lengthScale: ord.LengthScale,
		rho:         set.Rho,
		neighbors:   set.Neighbors,
		colStart:    pat.ColStart,
		rows:        pat.Rows,
		values:      make([]float64, len(pat.Rows)),
	}
	for p, i := range f.order {
		f.position[i] = p
	}
	if err := f.checkDuplicates(); err != nil {
		return nil, err
	}
	start := time.Now()
	if err := f.compute(ctx, set.Workers); err != nil {
		return nil, err
	}
	f.timings.Factor = time.Since(start)
	return f, nil
}

// checkDuplicates returns an error naming two coinciding points when the kernel has no nugget.
func (f *Factor) checkDuplicates() error {
	if kernels.NuggetOf(f.kernel) > 0 {
		return nil
	}
	for p, l := range f.lengthScale {
		if l != 0 {
			continue
		}
		xp := f.point(p)
		for q := p + 1; q < f.n; q++ {
			if equalPoints(xp, f.point(q)) {
				return fmt.Errorf("cholesky: points %d and %d coincide: the kernel matrix is singular; remove duplicates or set a nugget", f.order[p], f.order[q])
			}
		}
		return fmt.Errorf("cholesky: point %d duplicates another point; remove duplicates or set a nugget", f.order[p])
	}
	return nil
}

func equalPoints(a, b []float64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func (f *Factor) point(p int) []float64 { return f.points[p*f.d : (p+1)*f.d] }

// columnsPerTask is the number of consecutive columns one task computes.
const columnsPerTask = 64

// serialColumns is the size below which New computes on one goroutine.
const serialColumns = 512

// compute fills f.values column by column on workers goroutines. Each worker owns a
// workspace sized for the largest column and writes only its columns' values, so the result
// is the same bits for any worker count.
func (f *Factor) compute(ctx context.Context, workers int) error {
	maxRows := 0
	for j := range f.n {
		maxRows = max(maxRows, int(f.colStart[j+1]-f.colStart[j]))
	}
	tasks := (f.n + columnsPerTask - 1) / columnsPerTask
	if f.n < serialColumns {
		workers = 1
	}
	workers = min(workers, tasks)
	var next atomic.Int64
	var jittered atomic.Int64
	g, ctx := errgroup.WithContext(ctx)
	g.SetLimit(workers)
	for range workers {
		g.Go(func() error {
			w := newWorkspace(maxRows)
			for {
				t := int(next.Add(1) - 1)
				if t >= tasks {
					return nil
				}
				if err := ctx.Err(); err != nil {
					return err
				}
				for j := t * columnsPerTask; j < min(f.n, (t+1)*columnsPerTask); j++ {
					used, err := f.column(j, w)
					if err != nil {
						return err
					}
					if used {
						jittered.Add(1)
					}
				}
			}
		})
	}
	if err := g.Wait(); err != nil {
		return err
	}
	f.jittered = int(jittered.Load())
	return nil
}

// workspace is one worker's scratch memory.
type workspace struct {
	block []float64
	index []int32
}

func newWorkspace(maxRows int) *workspace {
	return &workspace{block: make([]float64, maxRows*maxRows), index: make([]int32, maxRows)}
}

// jitters are the diagonal shifts, relative to the largest diagonal entry of the local block,
// tried in turn when a local block is not numerically positive definite.
var jitters = [...]float64{0, 1e-12, 1e-10, 1e-8}

// column computes column j: with s its rows listed so that j comes last, Θ_{s,s} = C Cᵀ and
// L_{s,j} = C⁻ᵀ e_last. It reports whether a jitter was needed.
func (f *Factor) column(j int, w *workspace) (bool, error) {
	rows := f.rows[f.colStart[j]:f.colStart[j+1]]
	m := len(rows)
	idx := w.index[:m]
	for a, r := range rows {
		idx[m-1-a] = r
	}
	a := w.block[:m*m]
	for attempt, jitter := range jitters {
		kernels.FillLower(f.kernel, a, m, f.points, idx)
		if jitter > 0 {
			var diag float64
			for i := range m {
				diag = max(diag, a[i*m+i])
			}
			for i := range m {
				a[i*m+i] += jitter * diag
			}
		}
		t, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Lower, N: m, Stride: m, Data: a})
		if !ok {
			continue
		}
		// Solve Cᵀ v = e_last in place in the workspace's last row of a's upper part: use
		// the column vector stored in values directly (reversed back to ascending rows).
		vals := f.values[f.colStart[j]:f.colStart[j+1]]
		// v in reversed order is written into vals reversed: vals[a] = v[m-1-a].
		v := blas64.Vector{N: m, Inc: -1, Data: vals}
		for i := range vals {
			vals[i] = 0
		}
		vals[0] = 1 // v[m-1] = 1 before the solve
		blas64.Trsv(blas.Trans, t, v)
		for _, x := range vals {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return false, fmt.Errorf("cholesky: column of point %d is not finite", f.order[j])
			}
		}
		return attempt > 0, nil
	}
	return false, fmt.Errorf("cholesky: the local kernel matrix of point %d (%d rows, length scale %.3g) is not numerically positive definite even with jitter %g; points may nearly coincide: set a nugget", f.order[j], m, f.lengthScale[j], jitters[len(jitters)-1])
}
