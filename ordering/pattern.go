package ordering

import (
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"slices"

	"golang.org/x/sync/errgroup"
)

// Settings configures the ordering and the pattern builders. The zero value means defaults.
type Settings struct {
	// Workers is the number of goroutines the ordering and the pattern builders use; 0 means
	// GOMAXPROCS. The result is bitwise identical for any value.
	Workers int

	// search selects the neighbour search; the zero value is the flat kd-tree.
	search searchKind
	// tree, if not nil, is the ordering's kd-tree for the pattern builders (WithTree).
	tree *Tree
}

func (s Settings) workers() int {
	switch {
	case s.Workers < 0:
		panic(fmt.Sprintf("ordering: Workers = %d < 0", s.Workers))
	case s.Workers == 0:
		return runtime.GOMAXPROCS(0)
	}
	return s.Workers
}

// Pattern is a lower-triangular sparsity pattern in position order, compressed by column.
type Pattern struct {
	// ColStart has length N+1; column j's rows are Rows[ColStart[j]:ColStart[j+1]].
	ColStart []int64
	// Rows holds row positions (int32: N < 2³¹), strictly ascending within a column;
	// the first row of column j is j itself (the diagonal).
	Rows []int32
}

// N returns the number of columns.
func (p *Pattern) N() int { return len(p.ColStart) - 1 }

// NNZ returns the number of entries.
func (p *Pattern) NNZ() int { return int(p.ColStart[len(p.ColStart)-1]) }

// Col returns the rows of column j, ascending, starting with j. The slice aliases p.Rows.
// Panics if j is out of range.
func (p *Pattern) Col(j int) []int32 {
	if j < 0 || j >= p.N() {
		panic(fmt.Sprintf("ordering: column %d out of range [0, %d)", j, p.N()))
	}
	return p.Rows[p.ColStart[j]:p.ColStart[j+1]]
}

// Radius returns S_ρ with the default Settings. See Settings.Radius.
func Radius(points []float64, d int, lengthScale []float64, rho float64) *Pattern {
	return Settings{}.Radius(points, d, lengthScale, rho)
}

// Radius returns S_ρ = {(i,j): i ≥ j, dist(x_i,x_j) ≤ ρ·ℓ_j}. points are in POSITION order
// (already permuted: point p is points[p*d:(p+1)*d]); lengthScale is Ordering.LengthScale.
// A column with ℓ_j = +Inf takes all rows i ≥ j. rho = +Inf gives the full lower triangle.
//
// For a reverse maximin ordering the points at positions ≥ j are pairwise ≥ ℓ_j apart, so a
// column with 0 < ℓ_j < ∞ has at most (2ρ+1)ᵈ entries and the cost is O(N (log N + (2ρ+1)ᵈ))
// time on well-spread data (Schäfer, Katzfuss, Owhadi 2021). Columns are computed in parallel
// by s.Workers goroutines. Panics if the points are malformed (see ReverseMaximin),
// len(lengthScale) != N, an ℓ_j is negative or NaN, or rho is negative or NaN.
func (s Settings) Radius(points []float64, d int, lengthScale []float64, rho float64) *Pattern {
	n := checkPoints(points, d)
	if len(lengthScale) != n {
		panic(fmt.Sprintf("ordering: %d length scales for %d points", len(lengthScale), n))
	}
	for j, l := range lengthScale {
		if !(l >= 0) {
			panic(fmt.Sprintf("ordering: length scale %d is %v", j, l))
		}
	}
	if !(rho >= 0) {
		panic(fmt.Sprintf("ordering: rho = %v, want ≥ 0", rho))
	}
	workers := s.workers()
	var trees *suffixTrees
	if !math.IsInf(rho, 1) {
		trees = s.suffixTrees(points, d, n, workers)
	}
	column := func(dst []int32, j int, w *searchWork) []int32 {
		if trees == nil || math.IsInf(lengthScale[j], 1) {
			for i := j; i < n; i++ {
				dst = append(dst, int32(i))
			}
			return dst
		}
		start := len(dst)
		dst = trees.covering(n-j).radius(dst, points[j*d:(j+1)*d], rho*lengthScale[j], int32(j), w)
		slices.Sort(dst[start:])
		return dst
	}
	// Which columns take every row is looked up in a []bool, not in lengthScale: queryOrder
	// visits columns in tree order, and at N = 10⁶ its random reads of 8-byte length scales
	// took 53 ms against 18 ms this way. Usually only the first pick has ℓ = +Inf.
	var all []bool
	for j, l := range lengthScale {
		if math.IsInf(l, 1) {
			if all == nil {
				all = make([]bool, n)
			}
			all[j] = true
		}
	}
	order := queryOrder(n, trees, func(j int) int {
		if all != nil && all[j] {
			return 0
		}
		return n - j
	}, workers)
	return buildPattern(n, workers, order, column)
}

// NearestNeighbors returns the nearest-neighbour pattern with the default Settings. See
// Settings.NearestNeighbors.
func NearestNeighbors(points []float64, d int, m int) *Pattern {
	return Settings{}.NearestNeighbors(points, d, m)
}

// NearestNeighbors returns the pattern whose column j is j plus its m nearest coarser points
// (positions > j), ties in distance broken by lower position. Columns near the end have fewer.
// points are in position order.
//
// Cost O(N m log N) time on well-spread data, O(N m) memory; columns are computed in parallel by
// s.Workers goroutines. Panics if the points are malformed (see ReverseMaximin) or m < 0.
func (s Settings) NearestNeighbors(points []float64, d int, m int) *Pattern {
	n := checkPoints(points, d)
	if m < 0 {
		panic(fmt.Sprintf("ordering: m = %d < 0", m))
	}
	workers := s.workers()
	trees := s.suffixTrees(points, d, n, workers)
	column := func(dst []int32, j int, w *searchWork) []int32 {
		dst = append(dst, int32(j))
		if j == n-1 || m == 0 {
			return dst
		}
		start := len(dst)
		dst = trees.covering(n-1-j).knnSet(dst, points[j*d:(j+1)*d], m, int32(j+1), w)
		slices.Sort(dst[start:])
		return dst
	}
	order := queryOrder(n, trees, func(j int) int { return n - 1 - j }, workers)
	return buildPattern(n, workers, order, column)
}

const (
	// patternChunk is the number of columns one task computes. Fixed, so the split does not
	// depend on the worker count.
	patternChunk = 1024
	// patternSerialBelow is the column count below which patterns are built on one goroutine.
	patternSerialBelow = 4 * patternChunk
)

// queryOrder returns the columns 0…n−1 in the order to compute them: grouped by the suffix tree
// their query uses and, within a group, in that tree's slot order when it is a flat kd-tree, so
// that consecutive queries touch the same parts of the tree. The order changes only speed,
// never the pattern. count(j) is the number of positions column j searches (0: no search); it
// is called from up to workers goroutines.
func queryOrder(n int, trees *suffixTrees, count func(j int) int, workers int) []int32 {
	var lists [][]int32
	if trees != nil {
		// Each column matches at most one tree, so the trees' lists are built independently.
		lists = make([][]int32, len(trees.trees))
		forEachChunk(len(trees.trees), workers, func(k int) {
			if flat, ok := trees.trees[k].(*flatTree); ok {
				for _, j := range flat.index {
					if c := count(int(j)); c > 0 && bits.Len(uint(c-1)) == k {
						lists[k] = append(lists[k], j)
					}
				}
			}
		})
	}
	order := make([]int32, 0, n)
	done := make([]bool, n)
	for _, list := range lists {
		for _, j := range list {
			done[j] = true
		}
		order = append(order, list...)
	}
	for j := range n {
		if !done[j] {
			order = append(order, int32(j))
		}
	}
	return order
}

// buildPattern computes the n columns in the given order, in chunks of patternChunk, in
// parallel below patternSerialBelow columns, and assembles them in position order. column
// appends column j's rows to dst using the workspace w.
func buildPattern(n, workers int, order []int32, column func(dst []int32, j int, w *searchWork) []int32) *Pattern {
	return assemblePattern(n, workers, order, patternChunk, patternSerialBelow, column)
}

// assemblePattern computes the n columns in the given order in chunks of chunk columns, on
// workers goroutines (one below serialBelow columns), each with its own workspace W, and
// assembles them in position order. The result is the same for any worker count.
func assemblePattern[W any](n, workers int, order []int32, chunk, serialBelow int, column func(dst []int32, j int, w *W) []int32) *Pattern {
	chunks := (n + chunk - 1) / chunk
	rows := make([][]int32, chunks)
	colLen := make([]int32, n)
	colOffset := make([]int64, n) // offset of column j's rows in its chunk's buffer
	// A chunk's columns are gathered in its worker's scratch buffer, which grows to the
	// largest chunk once, and kept as an exact copy: growing a buffer per chunk allocated
	// 2.4× the pattern at N = 10⁶, and fresh memory is slow to touch (DEVELOPERS.md).
	type worker struct {
		w       W
		scratch []int32
	}
	task := func(c int, wk *worker) {
		buf := wk.scratch[:0]
		for _, j := range order[c*chunk : min(n, (c+1)*chunk)] {
			before := len(buf)
			buf = column(buf, int(j), &wk.w)
			colOffset[j], colLen[j] = int64(before), int32(len(buf)-before)
		}
		rows[c] = slices.Clone(buf)
		wk.scratch = buf
	}
	if n < serialBelow || workers == 1 {
		wk := new(worker)
		for c := range chunks {
			task(c, wk)
		}
	} else {
		pool := make(chan *worker, workers)
		for range workers {
			pool <- new(worker)
		}
		var g errgroup.Group
		g.SetLimit(workers)
		for c := range chunks {
			g.Go(func() error {
				wk := <-pool
				task(c, wk)
				pool <- wk
				return nil
			})
		}
		g.Wait()
	}
	p := &Pattern{ColStart: make([]int64, n+1)}
	for j, l := range colLen {
		p.ColStart[j+1] = p.ColStart[j] + int64(l)
	}
	p.Rows = make([]int32, p.ColStart[n])
	place := func(c int) {
		for _, j := range order[c*chunk : min(n, (c+1)*chunk)] {
			copy(p.Rows[p.ColStart[j]:p.ColStart[j+1]], rows[c][colOffset[j]:])
		}
		rows[c] = nil
	}
	if n < serialBelow {
		workers = 1
	}
	forEachChunk(chunks, workers, place) // chunks write disjoint columns of p.Rows
	return p
}

// forEachChunk calls f(c) for c = 0, …, chunks−1, on up to workers goroutines (in order on
// the caller's when workers ≤ 1). The calls must not depend on each other.
func forEachChunk(chunks, workers int, f func(c int)) {
	if workers <= 1 {
		for c := range chunks {
			f(c)
		}
		return
	}
	var g errgroup.Group
	g.SetLimit(workers)
	for c := range chunks {
		g.Go(func() error {
			f(c)
			return nil
		})
	}
	g.Wait()
}
