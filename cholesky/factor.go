package cholesky

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
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
	// Greedy, with the nearest-neighbour pattern, chooses each column's m rows greedily among
	// its Candidates nearest coarser points, each time the one that most reduces the
	// conditional variance of the column's point (ordering.Greedy). It costs more time than
	// the m nearest and gives a lower KL divergence at equal nonzeros. Greedy with Rho > 0 is
	// a programmer error (New panics).
	Greedy bool
	// Candidates is the number c of nearest coarser points the greedy selection chooses
	// from. 0 means 4m.
	Candidates int
	// JointGreedy, with Greedy and λ > 1, chooses one shared set of m points per supernode
	// for all its members at once, by the reduction of log det Cov(y_J | y_S) (that is, of the
	// members' share of the KL divergence), instead of selecting per column and then
	// aggregating (ordering.GreedySupernodes). Ignored without Greedy.
	JointGreedy bool
	// Lambda is the supernode aggregation parameter λ (DESIGN.md §3): columns whose length
	// scales are within a factor λ of a column that contains them share one row set and one
	// dense factorisation. 0 means ordering.DefaultLambda (1.5); any value ≤ 1, such as 1,
	// means no aggregation.
	Lambda float64
	// Workers is the number of goroutines ordering the points, building the pattern and
	// computing columns. 0 means GOMAXPROCS. The factor is the same for any value.
	Workers int
	// MaxMemory, when > 0, is a limit in bytes on the factor's estimated memory (its values,
	// indices and the workers' workspaces), checked after the pattern is built and before the
	// factor is allocated; New returns a *MemoryError when the estimate exceeds it.
	// 0 means no limit.
	MaxMemory int64
	// Progress, when not nil, is called as the phases advance: once with Done = 0 when a
	// phase starts, once with Done = Total when it ends, and for the factor phase about every
	// 1 % of the columns in between. Calls are serialised; it should return quickly.
	Progress func(Progress)
}

// Phase names a phase of New.
type Phase int

// The phases of New, in order.
const (
	PhaseOrdering Phase = iota
	PhasePattern
	PhaseAggregation
	PhaseFactor
)

var phaseNames = [...]string{"ordering", "pattern", "aggregation", "factor"}

// String returns the phase's name in lower case ("ordering").
func (p Phase) String() string {
	if p >= 0 && int(p) < len(phaseNames) {
		return phaseNames[p]
	}
	return fmt.Sprintf("Phase(%d)", int(p))
}

// Progress reports how far a phase of New has come: Done of Total units (columns for the
// factor phase, 0 or 1 for the others).
type Progress struct {
	Phase       Phase
	Done, Total int64
}

// MemoryError is returned by New when the factor's estimated memory exceeds
// Settings.MaxMemory.
type MemoryError struct {
	Estimate, Limit int64
}

func (e *MemoryError) Error() string {
	return fmt.Sprintf("cholesky: the factor needs about %.3g GB, more than the limit of %.3g GB; lower ρ, m or λ, or raise the limit", float64(e.Estimate)/1e9, float64(e.Limit)/1e9)
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
		if out.Greedy {
			panic("cholesky: Greedy selects among nearest neighbours; it cannot be combined with Rho")
		}
		out.Neighbors = 0
	}
	if out.Greedy && out.Candidates == 0 {
		out.Candidates = ordering.DefaultCandidatesPerNeighbor * out.Neighbors
	}
	if out.Greedy && out.Candidates < out.Neighbors {
		panic(fmt.Sprintf("cholesky: %d greedy candidates for m = %d neighbours; want at least m", out.Candidates, out.Neighbors))
	}
	if !out.Greedy {
		out.Candidates, out.JointGreedy = 0, false
	}
	if out.Workers <= 0 {
		out.Workers = runtime.GOMAXPROCS(0)
	}
	if out.Lambda == 0 {
		out.Lambda = ordering.DefaultLambda
	}
	if out.Lambda <= 1 {
		out.JointGreedy = false // single columns: the per-column selection is the same
	}
	return out
}

// Timings records the wall-clock time of each phase of New. Ordering includes putting the
// points in the ordering's positions.
type Timings struct {
	Ordering, Pattern, Aggregation, Factor time.Duration
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

	// rho and neighbors describe the pattern (at most one is non-zero); lambda is the
	// aggregation parameter (≤ 1: none).
	rho       float64
	neighbors int
	lambda    float64
	// greedy reports the greedy selection among candidates nearest coarser points, joint
	// its per-supernode variant.
	greedy, joint bool
	candidates    int

	// Supernode s has the columns members[memberStart[s]:memberStart[s+1]] (ascending) and
	// the row set rows[superRowStart[s]:superRowStart[s+1]] (ascending), stored once.
	memberStart   []int64
	members       []int32
	superRowStart []int64
	rows          []int32

	// Column j of L has colStart[j+1]−colStart[j] values (see col) on the rows
	// rows[rowStart[j]:rowStart[j]+colStart[j+1]-colStart[j]]: the part of its supernode's
	// row set that is ≥ j, so the first row is j itself. The values are held in blocks of
	// valueBlockColumns consecutive columns: block b holds columns [b·C, (b+1)·C) from
	// offset colStart[b·C] on (see newValueBlocks).
	colStart []int64
	rowStart []int64
	values   [][]float64

	// jittered counts the columns whose local block needed a diagonal jitter.
	jittered int
	// memory is the estimate of New's memory use in bytes.
	memory  int64
	timings Timings
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
	report := set.progress()
	start := time.Now()
	report(Progress{PhaseOrdering, 0, 1})
	ord, tree := ordering.Settings{Workers: set.Workers}.ReverseMaximinTree(points, d, nil)
	permuted := permutePoints(points, d, ord.Order, set.Workers)
	report(Progress{PhaseOrdering, 1, 1})
	orderTime := time.Since(start)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	start = time.Now()
	report(Progress{PhasePattern, 0, 1})
	var pat *ordering.Pattern
	// The pattern searches the kd-tree the ordering built (by position) instead of its own.
	builder := ordering.Settings{Workers: set.Workers}.WithTree(tree)
	if set.JointGreedy {
		sn := builder.GreedySupernodes(permuted, d, ord.LengthScale, k, set.Neighbors, set.Candidates, set.Lambda)
		report(Progress{PhasePattern, 1, 1})
		patternTime := time.Since(start)
		f, err := newFromSupernodes(ctx, permuted, d, k, ord, sn, set)
		if err != nil {
			return nil, err
		}
		f.timings.Ordering, f.timings.Pattern = orderTime, patternTime
		return f, nil
	}
	switch {
	case set.Rho > 0:
		pat = builder.Radius(permuted, d, ord.LengthScale, set.Rho)
	case set.Greedy:
		pat = builder.Greedy(permuted, d, k, set.Neighbors, set.Candidates)
	default:
		pat = builder.NearestNeighbors(permuted, d, set.Neighbors)
	}
	report(Progress{PhasePattern, 1, 1})
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
// ordering.NearestNeighbors build it). s.Workers and s.Lambda are used from s (aggregation
// applies to the given pattern). Errors and cost as New.
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
	set := s.withDefaults()
	permuted := permutePoints(points, d, ord.Order, set.Workers)
	set.Rho, set.Neighbors, set.Greedy, set.Candidates = 0, 0, false, 0
	return newFromPattern(ctx, permuted, d, k, ord, pat, set)
}

// permutePoints returns the points in the ordering's positions: position p holds point
// order[p]. Chunks of positions are copied on up to workers goroutines (the reads are random,
// so at 10⁶ points this is a cache-bound pass worth splitting).
func permutePoints(points []float64, d int, order []int, workers int) []float64 {
	permuted := make([]float64, len(points))
	const chunk = 1 << 15
	var g errgroup.Group
	g.SetLimit(max(1, workers))
	for lo := 0; lo < len(order); lo += chunk {
		g.Go(func() error {
			for p := lo; p < min(len(order), lo+chunk); p++ {
				i := order[p]
				copy(permuted[p*d:(p+1)*d], points[i*d:(i+1)*d])
			}
			return nil
		})
	}
	g.Wait()
	return permuted
}

func newFromPattern(ctx context.Context, permuted []float64, d int, k kernels.Kernel, ord ordering.Ordering, pat *ordering.Pattern, set Settings) (*Factor, error) {
	report := set.progress()
	start := time.Now()
	report(Progress{PhaseAggregation, 0, 1})
	sn := ordering.Settings{Workers: set.Workers}.Aggregate(pat, ord.LengthScale, set.Lambda)
	report(Progress{PhaseAggregation, 1, 1})
	aggregation := time.Since(start)
	f, err := newFromSupernodes(ctx, permuted, d, k, ord, sn, set)
	if err != nil {
		return nil, err
	}
	f.timings.Aggregation = aggregation
	return f, nil
}

// newFromSupernodes computes the factor on given supernodes (members and shared row sets).
func newFromSupernodes(ctx context.Context, permuted []float64, d int, k kernels.Kernel, ord ordering.Ordering, sn *ordering.Supernodes, set Settings) (*Factor, error) {
	n := len(permuted) / d
	report := set.progress()
	f := &Factor{
		n: n, d: d, kernel: k,
		points:      permuted,
		order:       ord.Order,
		position:    make([]int, n),
		lengthScale: ord.LengthScale,
		rho:         set.Rho,
		neighbors:   set.Neighbors,
		greedy:      set.Greedy,
		candidates:  set.Candidates,
		joint:       set.JointGreedy,
		lambda:      max(1, set.Lambda),
	}
	for p, i := range f.order {
		f.position[i] = p
	}
	f.setSupernodes(sn)
	if err := f.checkDuplicates(); err != nil {
		return nil, err
	}
	f.memory = f.estimateMemory(set.Workers)
	if set.MaxMemory > 0 && f.memory > set.MaxMemory {
		return nil, &MemoryError{Estimate: f.memory, Limit: set.MaxMemory}
	}
	f.values = newValueBlocks(f.colStart, nil)
	start := time.Now()
	if err := f.compute(ctx, set.Workers, report); err != nil {
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

// setSupernodes stores the supernodes and derives each column's place in them.
func (f *Factor) setSupernodes(sn *ordering.Supernodes) {
	f.memberStart, f.members, f.superRowStart, f.rows = sn.MemberStart, sn.Members, sn.RowStart, sn.Rows
	f.colStart = make([]int64, f.n+1)
	f.rowStart = make([]int64, f.n)
	counts := make([]int64, f.n)
	for s := range sn.Len() {
		rows := sn.RowsOf(s)
		for _, j := range sn.MembersOf(s) {
			at, found := slices.BinarySearch(rows, j)
			if !found {
				panic("cholesky: a supernode's row set lacks one of its members")
			}
			counts[j] = int64(len(rows) - at)
			f.rowStart[j] = sn.RowStart[s] + int64(at)
		}
	}
	for j, c := range counts {
		f.colStart[j+1] = f.colStart[j] + c
	}
}

// progress returns a serialised Progress callback, or one that does nothing. Workers report
// concurrently, so a report can arrive after a later one of the same phase; it drops such a
// report, so that Done never goes back within a phase.
func (s Settings) progress() func(Progress) {
	if s.Progress == nil {
		return func(Progress) {}
	}
	var mu sync.Mutex
	var last Progress
	started := false
	return func(p Progress) {
		mu.Lock()
		defer mu.Unlock()
		if started && p.Phase == last.Phase && p.Done < last.Done {
			return
		}
		started, last = true, p
		s.Progress(p)
	}
}

// maxRowSet returns the size of the largest supernode row set.
func (f *Factor) maxRowSet() int {
	largest := 0
	for s := range len(f.memberStart) - 1 {
		largest = max(largest, int(f.superRowStart[s+1]-f.superRowStart[s]))
	}
	return largest
}

// estimateMemory returns the bytes the factor holds once computed (values, row indices,
// column and supernode offsets, points, ordering) plus the workers' workspaces.
func (f *Factor) estimateMemory(workers int) int64 {
	n, s := int64(f.n), int64(len(f.memberStart)-1)
	u := int64(f.maxRowSet())
	return 8*f.colStart[f.n] + 4*int64(len(f.rows)) + 8*(n+1) + 8*n + 4*n + 16*(s+1) +
		8*n*int64(f.d) + 24*n + int64(workers)*(8*u*u+8*memberGroup*u+4*u)
}

// valueBlockColumns is the number of consecutive columns whose values share one allocation
// (a power of two: colValues masks with it). In our measurements one allocation for all
// values (140 MB at N = 10⁶, ρ = 3) landed on memory the process had never touched, which on
// the development machines took 150–550 ms to fault in; blocks of 2¹³ columns (about 1 MB
// at ρ = 3) mostly reused memory the ordering and the pattern had freed: 11–55 ms for the
// same values, in the same runs.
const valueBlockColumns = 1 << 13

// newValueBlocks returns the value blocks for the column starts colStart. With all == nil
// each block is a new allocation; else the blocks are views into all, which has colStart[n]
// entries.
func newValueBlocks(colStart []int64, all []float64) [][]float64 {
	n := len(colStart) - 1
	blocks := make([][]float64, (n+valueBlockColumns-1)/valueBlockColumns)
	for b := range blocks {
		lo, hi := colStart[b*valueBlockColumns], colStart[min(n, (b+1)*valueBlockColumns)]
		if all == nil {
			blocks[b] = make([]float64, hi-lo)
		} else {
			blocks[b] = all[lo:hi:hi]
		}
	}
	return blocks
}

// colValues returns column j's values.
func (f *Factor) colValues(j int) []float64 {
	base := f.colStart[j&^(valueBlockColumns-1)]
	return f.values[j/valueBlockColumns][f.colStart[j]-base : f.colStart[j+1]-base]
}

// col returns column j's rows (ascending positions, the first being j) and values.
func (f *Factor) col(j int) ([]int32, []float64) {
	vals := f.colValues(j)
	return f.rows[f.rowStart[j] : f.rowStart[j]+int64(len(vals))], vals
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

// serialColumns is the size below which New computes on one goroutine.
const serialColumns = 512

// compute fills the values supernode by supernode on workers goroutines. Each worker owns a
// workspace sized for the largest row set, takes small batches of consecutive supernodes and
// writes only their members' values, so the result is the same bits for any worker count.
func (f *Factor) compute(ctx context.Context, workers int, report func(Progress)) error {
	supernodes := len(f.memberStart) - 1
	maxRows := f.maxRowSet()
	total := int64(f.n)
	step := max(1, total/100)
	var done atomic.Int64
	report(Progress{PhaseFactor, 0, total})
	// Batches of roughly equal work: about 64 columns' worth of supernodes each.
	var batches []int
	for s, cols := 0, int64(0); s < supernodes; s++ {
		if cols == 0 {
			batches = append(batches, s)
		}
		cols += f.memberStart[s+1] - f.memberStart[s]
		if cols >= 64 {
			cols = 0
		}
	}
	batches = append(batches, supernodes)
	tasks := len(batches) - 1
	if f.n < serialColumns {
		workers = 1
	}
	workers = max(1, min(workers, tasks))
	var next, jittered atomic.Int64
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
				for s := batches[t]; s < batches[t+1]; s++ {
					used, err := f.supernode(s, w)
					if err != nil {
						return err
					}
					jittered.Add(int64(used))
				}
				cols := f.memberStart[batches[t+1]] - f.memberStart[batches[t]]
				if now := done.Add(cols); now/step != (now-cols)/step && now < total {
					report(Progress{PhaseFactor, now, total})
				}
			}
		})
	}
	if err := g.Wait(); err != nil {
		return err
	}
	report(Progress{PhaseFactor, total, total})
	f.jittered = int(jittered.Load())
	return nil
}

// workspace is one worker's scratch memory.
type workspace struct {
	block  []float64
	vector []float64
	index  []int32
}

// memberGroup is the number of member columns solved together (memberColumns).
const memberGroup = 4

func newWorkspace(maxRows int) *workspace {
	return &workspace{block: make([]float64, maxRows*maxRows), vector: make([]float64, memberGroup*maxRows), index: make([]int32, maxRows)}
}

// axpyNegative sets y −= a·x; len(x) must equal len(y).
func axpyNegative(y []float64, a float64, x []float64) {
	x = x[:len(y)]
	for i := range y {
		y[i] -= a * x[i]
	}
}

// jitters are the diagonal shifts, relative to the largest diagonal entry of the local block,
// tried in turn when a local block is not numerically positive definite.
var jitters = [...]float64{0, 1e-12, 1e-10, 1e-8}

// supernode computes the columns of supernode s. With U its row set (ascending, u rows) and
// J the reversal, J Θ_{U,U} J = C Cᵀ (ordinary lower Cholesky), so Θ_{U,U} = (JCJ)(JCJ)ᵀ with
// JCJ upper triangular, and member k at index t of U gets L_{U,k} = J C⁻ᵀ e_{u−1−t}, whose
// entries above t vanish: one back substitution with the leading (u−t)×(u−t) block of Cᵀ
// (DESIGN.md §4). It returns the number of members that needed a jitter (all or none).
// Cost O(u³/3 + Σ_k (u−t_k)²). The back substitutions run in groups (memberColumns).
func (f *Factor) supernode(s int, w *workspace) (int, error) {
	rows := f.rows[f.superRowStart[s]:f.superRowStart[s+1]]
	members := f.members[f.memberStart[s]:f.memberStart[s+1]]
	u := len(rows)
	idx := w.index[:u]
	for a, r := range rows {
		idx[u-1-a] = r
	}
	a := w.block[:u*u]
	for attempt, jitter := range jitters {
		kernels.FillLower(f.kernel, a, u, f.points, idx)
		if jitter > 0 {
			var diag float64
			for i := range u {
				diag = max(diag, a[i*u+i])
			}
			for i := range u {
				a[i*u+i] += jitter * diag
			}
		}
		c, ok := lapack64.Potrf(blas64.Symmetric{Uplo: blas.Lower, N: u, Stride: u, Data: a})
		if !ok {
			continue
		}
		if err := f.memberColumns(c.Data, u, members, w); err != nil {
			return 0, err
		}
		if attempt > 0 {
			return len(members), nil
		}
		return 0, nil
	}
	j := members[0]
	return 0, fmt.Errorf("cholesky: the local kernel matrix of point %d (%d rows, length scale %.3g) is not numerically positive definite even with jitter %g; points may nearly coincide: set a nugget", f.order[j], u, f.lengthScale[j], jitters[len(jitters)-1])
}

// memberColumns writes the columns of members from the Cholesky factor c (u×u, lower, row-major,
// reversed row set; see supernode). Member k with m = len(vals) solves C_mᵀ v = e_{m−1}: for
// r = m−1 … 0, v_r = w_r / C_rr and w_{0:r} −= v_r·C_{r,0:r}; then vals[q] = v_{m−1−q}.
//
// Up to memberGroup members run through one loop over r, their vectors interleaved, so each
// row of C is read once per group instead of once per member. A member whose m is below the
// group's largest starts with zeros above its unit entry, so the steps r ≥ m add exact zeros
// to it (v_r = 0/C_rr = 0, then w −= 0·C) and its arithmetic is the same, operation for
// operation, as a solve on its own.
func (f *Factor) memberColumns(c []float64, u int, members []int32, w *workspace) error {
	for len(members) > 0 {
		width := 1
		switch {
		case len(members) >= 4:
			width = 4
		case len(members) >= 2:
			width = 2
		}
		group := members[:width]
		members = members[width:]
		top := 0
		for _, k := range group {
			top = max(top, int(f.colStart[k+1]-f.colStart[k]))
		}
		v := w.vector[:top*width]
		clear(v)
		for i, k := range group {
			m := int(f.colStart[k+1] - f.colStart[k])
			v[(m-1)*width+i] = 1
		}
		switch width {
		case 4:
			backSubstitute4(c, u, top, v)
		case 2:
			backSubstitute2(c, u, top, v)
		default:
			for r := top - 1; r >= 0; r-- {
				row := c[r*u : r*u+r+1]
				vr := v[r] / row[r]
				v[r] = vr
				axpyNegative(v[:r], vr, row[:r])
			}
		}
		for i, k := range group {
			_, vals := f.col(int(k))
			m := len(vals)
			for q := range vals {
				x := v[(m-1-q)*width+i]
				if math.IsNaN(x) || math.IsInf(x, 0) {
					return fmt.Errorf("cholesky: column of point %d is not finite", f.order[k])
				}
				vals[q] = x
			}
		}
	}
	return nil
}

// backSubstitute4 runs the loop of memberColumns for four interleaved vectors
// (v[4j+i] is entry j of vector i).
func backSubstitute4(c []float64, u, top int, v []float64) {
	for r := top - 1; r >= 0; r-- {
		row := c[r*u : r*u+r+1]
		d := row[r]
		x := v[4*r : 4*r+4]
		a0, a1, a2, a3 := x[0]/d, x[1]/d, x[2]/d, x[3]/d
		x[0], x[1], x[2], x[3] = a0, a1, a2, a3
		w := v[:4*r]
		for j, cj := range row[:r] {
			y := w[4*j : 4*j+4 : 4*j+4]
			y[0] -= a0 * cj
			y[1] -= a1 * cj
			y[2] -= a2 * cj
			y[3] -= a3 * cj
		}
	}
}

// backSubstitute2 is backSubstitute4 for two vectors.
func backSubstitute2(c []float64, u, top int, v []float64) {
	for r := top - 1; r >= 0; r-- {
		row := c[r*u : r*u+r+1]
		d := row[r]
		x := v[2*r : 2*r+2]
		a0, a1 := x[0]/d, x[1]/d
		x[0], x[1] = a0, a1
		w := v[:2*r]
		for j, cj := range row[:r] {
			y := w[2*j : 2*j+2 : 2*j+2]
			y[0] -= a0 * cj
			y[1] -= a1 * cj
		}
	}
}
