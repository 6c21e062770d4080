package ordering

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"github.com/kchol/kchol/kernels"
)

// DefaultCandidatesPerNeighbor is the number of nearest coarser candidates per selected point
// that Greedy searches when c = 0: c = DefaultCandidatesPerNeighbor·m (DESIGN.md §3).
const DefaultCandidatesPerNeighbor = 4

// greedyNegligibleVariance is the relative conditional variance Var(yᵢ | chosen) / Θᵢᵢ at or
// below which a candidate counts as already explained by the chosen points and is never picked:
// adding it would make the column's local block numerically singular. The rank-one downdates
// that compute Var(yᵢ | chosen) lose about m·ε·Θᵢᵢ (ε ≈ 1.1e-16), far below this threshold,
// so no candidate with a true relative variance above it is dropped by rounding.
const greedyNegligibleVariance = 1e-12

const (
	// greedyChunk is the number of columns one task selects. Fixed, so the split does not
	// depend on the worker count. A column costs tens of microseconds at m = 20, so a chunk is
	// a few milliseconds of work.
	greedyChunk = 256
	// greedySerialBelow is the column count below which Greedy runs on one goroutine.
	greedySerialBelow = 2 * greedyChunk
)

// Greedy returns the greedy pattern with the default Settings. See Settings.Greedy.
func Greedy(points []float64, d int, k kernels.Kernel, m, c int) *Pattern {
	return Settings{}.Greedy(points, d, k, m, c)
}

// Greedy returns the pattern whose column j is j plus at most m points chosen greedily from
// the c nearest coarser points (positions > j, found as by NearestNeighbors, ties in distance
// by lower position): starting from the empty set, it repeatedly adds the candidate i that
// most reduces the conditional variance of yⱼ, that is the one maximising
//
//	Var(yⱼ | S) − Var(yⱼ | S ∪ {i}) = Cov(yᵢ, yⱼ | S)² / Var(yᵢ | S),
//
// for y ~ N(0, Θ), Θ the kernel matrix of k at the points (nugget on the diagonal, as the
// factor uses it). Ties in that score go to the lower position. A candidate whose conditional
// variance has fallen to 10⁻¹² of its prior variance Θᵢᵢ is already explained by the chosen
// points (a duplicate, say) and is skipped, so a column can get fewer than m points; columns
// near the end have fewer candidates and get fewer points. c = 0 means
// DefaultCandidatesPerNeighbor·m; c = m gives the nearest-neighbour pattern (unless a
// candidate is skipped). points are in position order.
//
// This is the greedy conditional selection of Huan, Guinness, Katzfuss, Owhadi and Schäfer
// (2023, "Sparse Cholesky factorization by greedy conditional selection"), implemented from
// the formula above. The conditional covariances of all candidates and of yⱼ are kept as the
// Schur complement of the chosen points in Θ restricted to the candidates and j: each pick
// adds one column to a partial Cholesky factor of that matrix and downdates every candidate's
// Var(yᵢ | S) and Cov(yᵢ, yⱼ | S) by rank one. A column costs O(m·c·d) kernel-evaluation
// work (one kernel row against the candidates per pick) and O(m²·c) arithmetic, plus the
// candidate search, O(c log N) on well-spread data; memory is O(c·m) per worker plus Θᵢᵢ
// for every point (O(N), computed once), and nothing is allocated per column. Columns are computed in parallel by s.Workers goroutines, each
// with its own workspace; the result is bitwise identical for any worker count.
//
// Greedy lives in package ordering, not cholesky, because its output is a sparsity pattern
// like Radius and NearestNeighbors, to be given to the factor as any other pattern; it uses
// the kernel only as an oracle for conditional variances. Package kernels imports nothing of
// this module, so the dependency adds no cycle.
//
// Panics if the points are malformed (see ReverseMaximin), k is nil or k.Dim() != d, m < 0,
// c < 0, or 0 < c < m.
func (s Settings) Greedy(points []float64, d int, k kernels.Kernel, m, c int) *Pattern {
	n := checkPoints(points, d)
	switch {
	case k == nil:
		panic("ordering: nil kernel")
	case k.Dim() != d:
		panic(fmt.Sprintf("ordering: kernel dimension %d, points dimension %d", k.Dim(), d))
	case m < 0:
		panic(fmt.Sprintf("ordering: m = %d < 0", m))
	case c < 0:
		panic(fmt.Sprintf("ordering: c = %d < 0", c))
	case c > 0 && c < m:
		panic(fmt.Sprintf("ordering: c = %d candidates for m = %d points", c, m))
	}
	if c == 0 {
		c = DefaultCandidatesPerNeighbor * m
	}
	workers := s.workers()
	var trees *suffixTrees
	if m > 0 {
		trees = s.suffixTrees(points, d, n, workers)
	}
	sel := greedySelector{points: points, d: d, n: n, kernel: k, m: m, c: c, trees: trees, prior: priorVariances(points, k, n, m)}
	order := queryOrder(n, trees, func(j int) int {
		if m == 0 {
			return 0
		}
		return n - 1 - j
	}, workers)
	return sel.pattern(order, workers)
}

// greedySelector holds what every column's selection reads.
type greedySelector struct {
	points []float64
	d, n   int
	kernel kernels.Kernel
	m, c   int
	trees  *suffixTrees // nil when m = 0
	// prior[i] = Θᵢᵢ for every position i (nil when m = 0).
	prior []float64
}

// priorVariances returns Θᵢᵢ (nugget included) for the n points, or nil if m = 0. Cost O(N d).
func priorVariances(points []float64, k kernels.Kernel, n, m int) []float64 {
	if m == 0 {
		return nil
	}
	prior := make([]float64, n)
	var one [1]int32
	for i := range n {
		one[0] = int32(i)
		kernels.FillBlock(k, prior[i:i+1], 1, points, one[:], one[:])
	}
	return prior
}

// greedyWork is the scratch space of one selecting goroutine, sized for c candidates and m
// picks on first use and reused for every column.
type greedyWork struct {
	search searchWork
	// cols holds the target j, then the candidates' positions (eligible ones first): the
	// columns of every kernel row the selection evaluates.
	cols []int32
	// factor holds the partial Cholesky factor F of Θ restricted to cols, with the chosen
	// points eliminated first, row-major with stride m: F[a, t] = factor[a·m+t] for row a
	// of cols and pick t.
	factor []float64
	// column is the factor column being computed, one entry per row of cols.
	column []float64
	// prior[a] = Θᵢᵢ and variance[a] = Var(yᵢ | S) for the candidate i = cols[a], a ≥ 1.
	prior, variance []float64
	// cross[a] = Cov(yᵢ, yⱼ | S) for the candidate i = cols[a]; cross[0] = Var(yⱼ | S).
	cross []float64
	// picked lists the chosen positions in the order they were chosen.
	picked []int32
	one    [1]int32
}

func (w *greedyWork) size(c, m int) {
	if cap(w.cols) < c+1 {
		w.cols = make([]int32, 0, c+1)
		w.prior = make([]float64, c+1)
		w.variance = make([]float64, c+1)
		w.cross = make([]float64, c+1)
		w.factor = make([]float64, (c+1)*m)
		w.column = make([]float64, c+1)
		w.picked = make([]int32, 0, m)
	}
	if len(w.factor) < (c+1)*m {
		w.factor = make([]float64, (c+1)*m)
	}
}

// column appends column j's rows (j, then the chosen points ascending) to dst and returns it
// with Var(yⱼ | chosen). w.picked holds the chosen points in the order chosen.
//
// Slot 0 of the workspace arrays is the target j, slots 1…live the candidates still eligible;
// a candidate that is picked or found negligible is swapped behind them, so kernel rows and
// downdates touch only the eligible ones. Ties in score go to the lower position explicitly.
// The slot order still reaches the last bits (the matrix-vector product treats rows in groups),
// so the candidates come in knn's order, by (distance, position), which no tree or worker
// count changes: taken in the order of a tree's heap instead, points with exact copies got
// other patterns from two trees of the same points.
func (g *greedySelector) column(dst []int32, j int, w *greedyWork) ([]int32, float64) {
	k, x, m := g.kernel, g.points, g.m
	w.size(g.c, m)
	w.picked = w.picked[:0]
	dst = append(dst, int32(j))
	cols := append(w.cols[:0], int32(j))
	if m > 0 && j < g.n-1 {
		cols = g.trees.covering(g.n-1-j).knn(cols, x[j*g.d:(j+1)*g.d], g.c, int32(j+1), &w.search)
	}
	w.cols = cols
	live := len(cols) - 1
	stride := len(cols)
	prior, variance, cross := w.prior[:stride], w.variance[:stride], w.cross[:stride]
	factor := w.factor[:stride*m]
	// cross = Θ_{j, cols}: the prior covariances with yⱼ, Θⱼⱼ first.
	w.one[0] = int32(j)
	kernels.FillBlock(k, cross, stride, x, w.one[:], cols)
	for a := 1; a < stride; a++ {
		prior[a] = g.prior[cols[a]]
		variance[a] = prior[a]
	}
	// retire swaps slot a behind the eligible slots, keeping its first t factor entries.
	retire := func(a, t int) {
		b := live
		live--
		if a == b {
			return
		}
		cols[a], cols[b] = cols[b], cols[a]
		prior[a], prior[b] = prior[b], prior[a]
		variance[a], variance[b] = variance[b], variance[a]
		cross[a], cross[b] = cross[b], cross[a]
		ra, rb := factor[a*m:a*m+t], factor[b*m:b*m+t]
		for s := range ra {
			ra[s], rb[s] = rb[s], ra[s]
		}
	}
	for t := range m {
		best, bestScore := -1, math.Inf(-1)
		for a := 1; a <= live; {
			if !(variance[a] > greedyNegligibleVariance*prior[a]) {
				retire(a, t) // conditional variances only fall: it stays explained
				continue     // slot a now holds another eligible candidate
			}
			score := cross[a] * cross[a] / variance[a]
			if score > bestScore || (score == bestScore && cols[a] < cols[best]) {
				best, bestScore = a, score
			}
			a++
		}
		if best < 0 {
			break
		}
		w.picked = append(w.picked, cols[best])
		pivot := variance[best]
		retire(best, t)
		p := live + 1 // the pick's slot after retiring
		// New factor column l = (Θ_{cols, p} − F_{cols, <t} F_{p, <t}ᵀ) / √Var(y_p | S) on slot
		// 0 and the eligible slots, with F the factor so far: one kernel row and one
		// matrix-vector product.
		rows := live + 1
		l := w.column[:rows]
		w.one[0] = cols[p]
		kernels.FillBlock(k, l, rows, x, w.one[:], cols[:rows])
		if t > 0 {
			blas64.Gemv(blas.NoTrans, -1,
				blas64.General{Rows: rows, Cols: t, Stride: m, Data: factor[:(rows-1)*m+t]},
				blas64.Vector{N: t, Inc: 1, Data: factor[p*m : p*m+t]},
				1, blas64.Vector{N: rows, Inc: 1, Data: l})
		}
		scale := 1 / math.Sqrt(pivot)
		lj := l[0] * scale
		factor[t] = lj
		cross[0] -= lj * lj
		for a := 1; a < rows; a++ {
			la := l[a] * scale
			factor[a*m+t] = la
			variance[a] -= la * la
			cross[a] -= la * lj
		}
	}
	start := len(dst)
	dst = append(dst, w.picked...)
	slices.Sort(dst[start:])
	return dst, cross[0]
}

// pattern selects the n columns in the given order, in chunks of greedyChunk, in parallel,
// and assembles them in position order.
func (g *greedySelector) pattern(order []int32, workers int) *Pattern {
	return assemblePattern(g.n, workers, order, greedyChunk, greedySerialBelow, func(dst []int32, j int, w *greedyWork) []int32 {
		dst, _ = g.column(dst, j, w)
		return dst
	})
}
