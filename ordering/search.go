package ordering

import (
	"math"
	"math/bits"
	"slices"
	"sync"

	"github.com/kyroy/kdtree"
	"github.com/kyroy/kdtree/kdrange"
	"golang.org/x/sync/errgroup"
)

// searcher answers neighbour queries over a fixed set of indexed points. Indices are those of
// the caller's flat point array. Results are exact with respect to distance: membership and
// order are decided by distance alone, ties by lower index; trees only ever prune
// conservatively. A searcher is safe for concurrent queries with distinct workspaces.
type searcher interface {
	// knn appends to dst the indices of the k indexed points with index ≥ minIndex that are
	// nearest to x, ordered by (distance, index) ascending; fewer if fewer are accepted.
	knn(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32
	// knnSet appends the same indices as knn, in unspecified order, for callers that use them
	// as a set; it may save knn's final sort.
	knnSet(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32
	// radius appends to dst, in unspecified order, the indices i ≥ minIndex of all indexed
	// points with distance(x, xᵢ) ≤ r, and leaves their distances in w.distances, in the same
	// order (w.distances[k] belongs to the k-th index appended by this call).
	radius(dst []int32, x []float64, r float64, minIndex int32, w *searchWork) []int32
}

// searchKind selects the implementation behind searcher.
type searchKind int

const (
	// searchFlat is the static kd-tree on flat arrays below: the default.
	//
	// Measured with this package's benchmarks (2D uniform points, time per op; a 2-core
	// machine shared with other jobs, so ±30 %), kyroy/kdtree against this tree (for
	// ReverseMaximin the flat column also uses the tree as priority structure, see
	// maximinTournament):
	//
	//	                        n=1e4 kyroy  n=1e4 flat  n=1e5 kyroy  n=1e5 flat
	//	ReverseMaximin          0.22 s       0.020 s     7.4 s        0.29 s
	//	Radius ρ=3              0.29 s       0.015 s     5.2 s        0.17 s
	//	NearestNeighbors m=30   1.9 s        0.045 s     27.9 s       0.39 s
	//
	// kyroy allocates on every query (6·10⁶ allocations for the n=1e5 ordering) and re-sorts
	// its candidate queue on every insertion, so it cannot meet the targets (N = 10⁶ ordering
	// + pattern well under 10 s); the flat tree is the default. With it, n = 10⁶ took (one run,
	// same machine): ReverseMaximin 5.3–6.1 s, NearestNeighbors m=30 4.5–4.8 s, Radius ρ=3
	// 2.4 s.
	searchFlat searchKind = iota
	// searchKyroy wraps github.com/kyroy/kdtree. Kept selectable and tested.
	searchKyroy
)

func (k searchKind) String() string {
	switch k {
	case searchFlat:
		return "flat"
	case searchKyroy:
		return "kyroy"
	}
	return "unknown"
}

// newSearcher indexes the points with indices [lo, hi) of the flat array points.
// A flat tree is built on up to workers goroutines.
func newSearcher(kind searchKind, points []float64, d, lo, hi, workers int) searcher {
	switch kind {
	case searchFlat:
		return newFlatTree(points, d, lo, hi, workers)
	case searchKyroy:
		return newKyroyTree(points, d, lo, hi)
	}
	panic("ordering: unknown search kind")
}

// searchWork is the scratch space of one querying goroutine. The zero value is ready to use;
// buffers grow once and are reused, so steady-state queries allocate nothing.
type searchWork struct {
	stack      []int32
	stackBound []float64
	heapDist   []float64
	heapIndex  []int32
	candidates []neighbour
	distances  []float64 // distances of the last radius query's results
	found      []int32   // nearestWithin's radius query
	// kthDistance is the k-th distance of the last k-nearest query, 0 if there is none.
	kthDistance float64
	// finger is the path from the root of fingerTree to the node where the last radius query
	// on it started (flatTree.radiusStart).
	finger     []int32
	fingerTree *flatTree
	ball       []float64 // radiusStart's ball extent: lows, then highs
}

type neighbour struct {
	dist  float64
	index int32
}

func compareNeighbour(a, b neighbour) int {
	switch {
	case a.dist < b.dist:
		return -1
	case a.dist > b.dist:
		return 1
	}
	return int(a.index) - int(b.index)
}

// distance returns the Euclidean distance between a and b as √(Σₖ (aₖ − bₖ)²), summed in
// coordinate order. The explicit conversion forbids fused multiply-add, so the value is the
// same on every platform and in every caller. Cost O(d).
func distance(a, b []float64) float64 {
	return math.Sqrt(squaredDistance(a, b))
}

func squaredDistance(a, b []float64) float64 {
	b = b[:len(a)]
	var s float64
	for k := range a {
		t := a[k] - b[k]
		s += float64(t * t)
	}
	return s
}

// pruneBound returns the squared-distance threshold above which a tree may discard a box when
// the admitted distance is r. A box's computed squared lower bound never exceeds the computed
// squared distance of a point inside it (rounding is monotone, see flatTree.lowerBound), so the
// only slack needed is between √s ≤ r and s ≤ r², which differ by a few ulps; the absolute
// term covers underflow.
func pruneBound(r float64) float64 {
	return r*r*(1+1e-9) + 1e-300
}

// flatTree is a static kd-tree stored in flat arrays: points are copied in tree order, nodes
// split at the median of their widest coordinate, and every node keeps its tight bounding box
// and the largest index below it (so queries with minIndex skip whole subtrees).
// Build O(n log n); queries visit O(log n + output) nodes on well-spread data.
type flatTree struct {
	d      int
	coords []float64 // coords[s*d:(s+1)*d] is the point in tree slot s
	index  []int32   // index[s] is the caller's index of the point in tree slot s
	nodes  []flatNode
	boxes  []float64 // node b's box: lows at boxes[2db:2db+d], highs at boxes[2db+d:2db+2d]
}

type flatNode struct {
	start, end  int32 // tree slots [start, end)
	left, right int32 // children, -1 for a leaf
	maxIndex    int32
}

// flatLeafSize is the most points a leaf holds. Measured for ReverseMaximin at n = 10⁶ (2D
// uniform, this shared 2-core machine, one run each): leaf size 8: 6.4 s, 16: 5.9 s, 32: 5.3 s,
// 64: 6.6 s.
const flatLeafSize = 32

var _ searcher = (*flatTree)(nil)

// flatParallelBuildFrom is the number of points from which a flat tree's two halves are built
// on two goroutines (when more than one worker is allowed).
const flatParallelBuildFrom = 1 << 16

// newFlatTree builds the tree of the points with indices [lo, hi) of the flat array points.
// With workers > 1 the subtrees of the top levels are built concurrently, up to about workers
// goroutines; the tree is the same for any worker count.
func newFlatTree(points []float64, d, lo, hi, workers int) *flatTree {
	n := hi - lo
	t := &flatTree{d: d, coords: slices.Clone(points[lo*d : hi*d]), index: make([]int32, n)}
	for s := range t.index {
		t.index[s] = int32(lo + s)
	}
	if n > 0 {
		t.nodes = make([]flatNode, 0, 2*(n/flatLeafSize+1))
		t.boxes = make([]float64, 0, 2*d*cap(t.nodes))
		t.buildSplit(0, n, bits.Len(uint(max(workers, 1)-1)))
	}
	return t
}

// buildSplit is build with the right subtrees of the top levels levels built on their own
// goroutines into separate node arrays, then appended, so the ids are build's pre-order ids.
// The two halves reorder disjoint slot ranges.
func (t *flatTree) buildSplit(start, end, levels int) int32 {
	if levels == 0 || end-start < flatParallelBuildFrom {
		return t.build(start, end)
	}
	id, mid, split := t.addNode(start, end)
	if !split {
		return id
	}
	right := &flatTree{d: t.d, coords: t.coords, index: t.index}
	var wg sync.WaitGroup
	wg.Go(func() { right.buildSplit(mid, end, levels-1) })
	left := t.buildSplit(start, mid, levels-1)
	wg.Wait()
	offset := int32(len(t.nodes))
	for _, node := range right.nodes {
		if node.left >= 0 {
			node.left += offset
			node.right += offset
		}
		t.nodes = append(t.nodes, node)
	}
	t.boxes = append(t.boxes, right.boxes...)
	t.nodes[id].left, t.nodes[id].right = left, offset
	return id
}

// build adds the node for tree slots [start, end) and its subtree, returning its id. It
// reorders coords and index together, so every pass reads memory in sequence.
func (t *flatTree) build(start, end int) int32 {
	id, mid, split := t.addNode(start, end)
	if split {
		left := t.build(start, mid)
		right := t.build(mid, end)
		t.nodes[id].left, t.nodes[id].right = left, right
	}
	return id
}

// addNode appends the node for tree slots [start, end) with its box and largest index, and,
// unless it is a leaf, reorders the slots around the median mid of its widest coordinate.
func (t *flatTree) addNode(start, end int) (id int32, mid int, split bool) {
	d := t.d
	id = t.appendNode(start, end)
	low, high := t.boxes[2*d*int(id):2*d*int(id)+d], t.boxes[2*d*int(id)+d:2*d*int(id+1)]
	if end-start <= flatLeafSize {
		return id, 0, false
	}
	dim, width := 0, high[0]-low[0]
	for k := 1; k < d; k++ {
		if w := high[k] - low[k]; w > width {
			dim, width = k, w
		}
	}
	if width == 0 { // all points equal: a leaf of duplicates
		return id, 0, false
	}
	mid = (start + end) / 2
	selectNth(t.coords[start*d:end*d], t.index[start:end], mid-start, d, dim)
	return id, mid, true
}

// appendNode appends a leaf node for tree slots [start, end) (start < end) with the box and
// largest index of its points, and returns its id.
func (t *flatTree) appendNode(start, end int) int32 {
	d := t.d
	id := int32(len(t.nodes))
	t.nodes = append(t.nodes, flatNode{start: int32(start), end: int32(end), left: -1, right: -1})
	b := len(t.boxes)
	t.boxes = slices.Grow(t.boxes, 2*d)[:b+2*d]
	low, high := t.boxes[b:b+d], t.boxes[b+d:b+2*d]
	copy(low, t.coords[start*d:(start+1)*d])
	copy(high, low)
	for s := start + 1; s < end; s++ {
		for k, v := range t.coords[s*d : (s+1)*d] {
			low[k] = min(low[k], v)
			high[k] = max(high[k], v)
		}
	}
	t.nodes[id].maxIndex = slices.Max(t.index[start:end])
	return id
}

// selectNth reorders the points (coords, d per point, with their index) so that point k has
// the k-th smallest coordinate dim, with no larger coordinate before it and no smaller after
// it. Quickselect with a median-of-three pivot and Hoare's partition, so runs of equal
// coordinates (lattices) cost O(n). Measured building the tree of 10⁶ uniform points in the
// unit square (best of 5): 638 ms with a three-way (Dijkstra) partition, which moves every key,
// 412 ms with this one; a 1000 × 1000 lattice in lexicographic order (one run): 4.2 s and
// 0.35 s.
func selectNth(coords []float64, index []int32, k, d, dim int) {
	key := func(s int) float64 { return coords[s*d+dim] }
	swap := func(a, b int) {
		index[a], index[b] = index[b], index[a]
		pa, pb := coords[a*d:(a+1)*d], coords[b*d:(b+1)*d]
		for c := range pa {
			pa[c], pb[c] = pb[c], pa[c]
		}
	}
	lo, hi := 0, len(index)
	for hi-lo > 1 {
		a, b, c := key(lo), key((lo+hi)/2), key(hi-1)
		pivot := max(min(a, b), min(max(a, b), c))
		// Hoare partition (Wirth's select): both scans stop at keys equal to the pivot, so
		// runs of equal keys split evenly, and only misplaced pairs are swapped. The pivot is
		// one of the keys, so each scan stops inside the range.
		i, j := lo, hi-1
		for i <= j {
			for key(i) < pivot {
				i++
			}
			for key(j) > pivot {
				j--
			}
			if i <= j {
				swap(i, j)
				i++
				j--
			}
		}
		// Now keys at [lo, j] ≤ pivot, keys at [i, hi) ≥ pivot, and keys in between = pivot.
		switch {
		case k <= j:
			hi = j + 1
		case k >= i:
			lo = i
		default:
			return
		}
	}
}

// lowerBound returns the squared distance from x to node b's box, computed so that it never
// exceeds squaredDistance(x, p) for any p in the box: each gap is a rounded difference with the
// same second operand and a first operand nearer to x, squared and summed in the same order.
func (t *flatTree) lowerBound(b int32, x []float64) float64 {
	d := t.d
	box := t.boxes[2*d*int(b) : 2*d*int(b+1)]
	return boxLowerBound(box[:d], box[d:], x)
}

// boxLowerBound is flatTree.lowerBound for the box with corners low and high.
func boxLowerBound(low, high, x []float64) float64 {
	d := len(low)
	high = high[:d]
	var s float64
	for k, v := range x[:d] {
		var g float64
		if v < low[k] {
			g = low[k] - v
		} else if v > high[k] {
			g = v - high[k]
		}
		s += float64(g * g)
	}
	return s
}

func (t *flatTree) knn(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32 {
	if near, ok := t.nearestWithin(x, k, minIndex, w); ok {
		sortNeighbours(near)
		for _, c := range near {
			dst = append(dst, c.index)
		}
		return dst
	}
	hd, hi := t.nearest(x, k, minIndex, w)
	// Heap sort: repeatedly move the largest to the end.
	for e := len(hd) - 1; e > 0; e-- {
		hd[0], hd[e] = hd[e], hd[0]
		hi[0], hi[e] = hi[e], hi[0]
		neighbourDown(hd[:e], hi[:e], 0)
	}
	return append(dst, hi...)
}

// knnSet is knn without its final sort: the k nearest in no particular order. The
// nearest-neighbour pattern sorts each column by position anyway; without knn's sort its phase
// took 1.85-2.43 s against 2.23-3.19 s at 10⁶ points, m = 30 (3 alternating runs). The greedy
// selection keeps knn, whose order reaches its last bits (see greedySelector.column).
func (t *flatTree) knnSet(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32 {
	if near, ok := t.nearestWithin(x, k, minIndex, w); ok {
		for _, c := range near {
			dst = append(dst, c.index)
		}
		return dst
	}
	_, hi := t.nearest(x, k, minIndex, w)
	return append(dst, hi...)
}

// knnGuessFrom is the least k for which knn and knnSet first try a radius query
// (nearestWithin). Measured with radius queries from k = 16 at 10⁵ uniform points
// (BenchmarkGreedy, BenchmarkNearestNeighbors, 4 alternating runs each): the greedy
// selection's k = 80 queries took its pattern from 2.19 s to 1.95 s (medians), the
// nearest-neighbour pattern's k = 30 queries from 0.283 s to 0.294 s, so below this the
// bounded heap answers alone.
const knnGuessFrom = 48

// knnGuessSlack is the factor by which nearestWithin enlarges the last query's k-th distance,
// and knnGuessTries the number of radius queries it makes before it leaves the query to
// nearest.
const (
	knnGuessSlack = 1.25
	knnGuessTries = 3
)

// nearestWithin tries to find the k nearest points with index ≥ minIndex by radius queries:
// first all points within knnGuessSlack times the k-th distance of this goroutine's last
// k-nearest query (w.kthDistance), then, while fewer than k are found, a ball enlarged for
// about 1.2k at the density seen, up to knnGuessTries queries. Consecutive queries come from
// nearby points (queryOrder), so the first ball usually holds k points (at 10⁵ uniform points
// and k = 80 it fell short for 6 % of the greedy selection's queries), and then the k nearest
// by (distance, index) are among them, since the k-th nearest is no farther than the k-th of
// any k of them. It returns the k nearest, in no particular order, in w.candidates, and
// true; or false if there is no k-th distance yet or every ball fell short (then nearest,
// which sets w.kthDistance, must answer). A radius query only appends the points it finds;
// the bounded heap of nearest costs a sift per point and starts with no bound.
func (t *flatTree) nearestWithin(x []float64, k int, minIndex int32, w *searchWork) ([]neighbour, bool) {
	if k < knnGuessFrom || !(w.kthDistance > 0) {
		return nil, false
	}
	r := w.kthDistance * knnGuessSlack
	found := t.radius(w.found[:0], x, r, minIndex, w)
	for try := 1; len(found) < k; try++ {
		if try == knnGuessTries {
			w.found = found
			return nil, false // nearest answers and sets w.kthDistance
		}
		// Enlarge the ball so that it would hold about 1.2k points at the density seen.
		grow := 2.0
		if len(found) > 0 {
			grow = max(knnGuessSlack, math.Pow(1.2*float64(k)/float64(len(found)), 1/float64(t.d)))
		}
		r *= grow
		found = t.radius(found[:0], x, r, minIndex, w)
	}
	w.found = found
	near := w.candidates[:0]
	for a, i := range found {
		near = append(near, neighbour{w.distances[a], i})
	}
	w.candidates = near
	selectNeighbours(near, k)
	w.kthDistance = near[k-1].dist
	return near[:k], true
}

// nearest finds the k nearest points with index ≥ minIndex and returns their distances and
// indices as a bounded max-heap by (distance, index), in w's heap arrays.
func (t *flatTree) nearest(x []float64, k int, minIndex int32, w *searchWork) ([]float64, []int32) {
	if k <= 0 || len(t.nodes) == 0 || t.nodes[0].maxIndex < minIndex {
		return w.heapDist[:0], w.heapIndex[:0]
	}
	d := t.d
	hd, hi := w.heapDist[:0], w.heapIndex[:0]
	bound := math.Inf(1)
	stack, stackBound := append(w.stack[:0], 0), append(w.stackBound[:0], t.lowerBound(0, x))
	for len(stack) > 0 {
		b, lb := stack[len(stack)-1], stackBound[len(stack)-1]
		stack, stackBound = stack[:len(stack)-1], stackBound[:len(stack)-1]
		node := t.nodes[b]
		if lb > bound || node.maxIndex < minIndex {
			continue
		}
		if node.left < 0 {
			for s := node.start; s < node.end; s++ {
				idx := t.index[s]
				if idx < minIndex {
					continue
				}
				sq := squaredDistance(x, t.coords[int(s)*d:])
				if sq > bound {
					continue
				}
				dist := math.Sqrt(sq)
				if len(hd) < k {
					hd, hi = append(hd, dist), append(hi, idx)
					neighbourUp(hd, hi, len(hd)-1)
					if len(hd) == k {
						bound = pruneBound(hd[0])
					}
				} else if dist < hd[0] || (dist == hd[0] && idx < hi[0]) {
					hd[0], hi[0] = dist, idx
					neighbourDown(hd, hi, 0)
					bound = pruneBound(hd[0])
				}
			}
			continue
		}
		ll, lr := t.lowerBound(node.left, x), t.lowerBound(node.right, x)
		near, far, lnear, lfar := node.left, node.right, ll, lr
		if lr < ll {
			near, far, lnear, lfar = node.right, node.left, lr, ll
		}
		if lfar <= bound {
			stack, stackBound = append(stack, far), append(stackBound, lfar)
		}
		if lnear <= bound {
			stack, stackBound = append(stack, near), append(stackBound, lnear)
		}
	}
	w.heapDist, w.heapIndex, w.stack, w.stackBound = hd, hi, stack, stackBound
	w.kthDistance = 0
	if len(hd) == k {
		w.kthDistance = hd[0]
	}
	return hd, hi
}

// selectNeighbours reorders a (len(a) ≥ k ≥ 1) so that a[:k] holds its k smallest entries by
// compareNeighbour, with the largest of them at a[k−1]: quickselect (C. A. R. Hoare, "Algorithm
// 65: Find", Comm. ACM 4(7), 1961) with the median of three as pivot. Cost O(len(a)) expected.
func selectNeighbours(a []neighbour, k int) {
	lo, hi := 0, len(a)-1
	for hi-lo >= 2 {
		p := lo + partitionNeighbours(a[lo:hi+1])
		switch {
		case p == k-1:
			return
		case p < k-1:
			lo = p + 1
		default:
			hi = p - 1
		}
	}
	if hi > lo && neighbourLess(a[hi], a[lo]) {
		a[hi], a[lo] = a[lo], a[hi]
	}
}

// sortNeighbours sorts a by compareNeighbour: quicksort with the median of three as pivot and
// insertion sort below 12 entries. Not slices.SortFunc, whose calls through the comparison
// function cost more than the comparisons.
func sortNeighbours(a []neighbour) {
	for len(a) > 12 {
		p := partitionNeighbours(a)
		// a[:p] < a[p] ≤ a[p+1:]: sort the shorter side by recursion, the longer in the loop.
		if p < len(a)-1-p {
			sortNeighbours(a[:p])
			a = a[p+1:]
		} else {
			sortNeighbours(a[p+1:])
			a = a[:p]
		}
	}
	for i := 1; i < len(a); i++ {
		for j := i; j > 0 && neighbourLess(a[j], a[j-1]); j-- {
			a[j], a[j-1] = a[j-1], a[j]
		}
	}
}

// partitionNeighbours partitions a (len(a) ≥ 3) around the median of its first, middle and
// last entries and returns the pivot's final place p: a[:p] < a[p] ≤ a[p+1:].
func partitionNeighbours(a []neighbour) int {
	lo, hi := 0, len(a)-1
	mid := hi / 2
	if neighbourLess(a[mid], a[lo]) {
		a[mid], a[lo] = a[lo], a[mid]
	}
	if neighbourLess(a[hi], a[lo]) {
		a[hi], a[lo] = a[lo], a[hi]
	}
	if neighbourLess(a[mid], a[hi]) {
		a[mid], a[hi] = a[hi], a[mid]
	}
	pivot := a[hi]
	p := lo
	for i := lo; i < hi; i++ {
		if neighbourLess(a[i], pivot) {
			a[i], a[p] = a[p], a[i]
			p++
		}
	}
	a[p], a[hi] = a[hi], a[p]
	return p
}

// neighbourLess orders by (distance, index), as compareNeighbour.
func neighbourLess(a, b neighbour) bool {
	return a.dist < b.dist || (a.dist == b.dist && a.index < b.index)
}

// neighbourAbove reports whether entry a orders after entry b by (distance, index): the
// bounded max-heap of knn keeps the worst of the k best at its root.
func neighbourAbove(hd []float64, hi []int32, a, b int) bool {
	return hd[a] > hd[b] || (hd[a] == hd[b] && hi[a] > hi[b])
}

func neighbourUp(hd []float64, hi []int32, c int) {
	for c > 0 {
		p := (c - 1) / 2
		if !neighbourAbove(hd, hi, c, p) {
			return
		}
		hd[c], hd[p] = hd[p], hd[c]
		hi[c], hi[p] = hi[p], hi[c]
		c = p
	}
}

func neighbourDown(hd []float64, hi []int32, p int) {
	n := len(hd)
	for {
		c := 2*p + 1
		if c >= n {
			return
		}
		if c+1 < n && neighbourAbove(hd, hi, c+1, c) {
			c++
		}
		if !neighbourAbove(hd, hi, c, p) {
			return
		}
		hd[c], hd[p] = hd[p], hd[c]
		hi[c], hi[p] = hi[p], hi[c]
		p = c
	}
}

func (t *flatTree) radius(dst []int32, x []float64, r float64, minIndex int32, w *searchWork) []int32 {
	if len(t.nodes) == 0 {
		w.distances = w.distances[:0]
		return dst
	}
	d := t.d
	bound := pruneBound(r)
	found := w.distances[:0]
	stack := append(w.stack[:0], t.radiusStart(x, r, w))
	for len(stack) > 0 {
		b := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		node := t.nodes[b]
		if node.maxIndex < minIndex || t.lowerBound(b, x) > bound {
			continue
		}
		if node.left >= 0 {
			stack = append(stack, node.right, node.left)
			continue
		}
		for s := node.start; s < node.end; s++ {
			idx := t.index[s]
			if idx < minIndex {
				continue
			}
			if sq := squaredDistance(x, t.coords[int(s)*d:]); sq <= bound {
				if dist := math.Sqrt(sq); dist <= r {
					dst = append(dst, idx)
					found = append(found, dist)
				}
			}
		}
	}
	w.stack, w.distances = stack, found
	return dst
}

// radiusStart returns the deepest node on or below the path of the last radius query on t
// (w.finger) whose box holds the ball of radius r around x strictly inside: every point of t
// within r of x then lies below it, so the query can start there instead of at the root.
// The finger climbs from the last start until its box holds the ball, then descends into
// whichever child's box does. Consecutive queries come from nearby points (queryOrder), so it
// moves a few levels where a query from the root passes all of them. Measured on the radius
// pattern (ρ = 3, uniform points in the unit square): a query visited 16.7 nodes against 37
// from the root at 10⁶ points (16.6 against 30 at 10⁵), and the pattern took 0.96 s against
// 1.02 s on 2 workers, 2.04 s against 2.16 s on one (medians of 3 alternating runs; 0.095 s
// either way at 10⁵).
//
// Why a point of t outside node b cannot be within r: each split sends points with the split
// coordinate ≤ v to the left and ≥ v to the right (selectNth), so where a point q left b's
// path at an ancestor split on coordinate k, q lies on the far side of b's box face in k
// (q_k ≥ high_k or q_k ≤ low_k), a face farther than r from x. The ball's extent carries slack
// for the rounding of x ± r and of the distance that radius computes.
func (t *flatTree) radiusStart(x []float64, r float64, w *searchWork) int32 {
	if w.fingerTree != t {
		w.fingerTree, w.finger = t, append(w.finger[:0], 0)
	}
	// The ball's extent with slack, once per query.
	d := t.d
	ball := slices.Grow(w.ball[:0], 2*d)[:2*d]
	ballExtent(ball, x[:d], r)
	w.ball = ball
	path := w.finger
	for len(path) > 0 && !t.holdsBall(path[len(path)-1], ball) {
		path = path[:len(path)-1]
	}
	if len(path) == 0 {
		w.finger = append(path, 0)
		return 0
	}
	for {
		node := t.nodes[path[len(path)-1]]
		if node.left < 0 {
			break
		}
		if t.holdsBall(node.left, ball) {
			path = append(path, node.left)
		} else if t.holdsBall(node.right, ball) {
			path = append(path, node.right)
		} else {
			break
		}
	}
	w.finger = path
	return path[len(path)-1]
}

// ballExtent sets ball (lows, then highs) to the extent of the ball of radius r around x,
// with slack: r·10⁻⁹ for the distance's rounding (as pruneBound) and 4·2⁻⁵³·(|xₖ| + r) for the
// rounding of xₖ ± r, so that every point on or beyond a face of a box that holds it (holdsBall)
// is at a computed distance > r from x.
func ballExtent(ball, x []float64, r float64) {
	d := len(x)
	for k, v := range x {
		s := r + r*1e-9 + 4*0x1p-53*(math.Abs(v)+r) + 1e-300
		ball[k], ball[d+k] = v-s, v+s
	}
}

// holdsBall reports whether node b's box holds ball (lows, then highs, as radiusStart computes
// them) strictly inside.
func (t *flatTree) holdsBall(b int32, ball []float64) bool {
	d := t.d
	box := t.boxes[2*d*int(b) : 2*d*int(b+1)]
	for k := range d {
		if !(ball[k] > box[k] && ball[d+k] < box[d+k]) {
			return false
		}
	}
	return true
}

// kyroyTree answers queries with github.com/kyroy/kdtree. That tree measures distance its own
// way and its k-nearest search is not index-aware, so the wrapper uses it only to find
// candidates and decides membership and order with distance, like flatTree.
type kyroyTree struct {
	d      int
	points []float64
	n      int
	tree   *kdtree.KDTree
}

type kyroyPoint struct {
	coords []float64
	index  int32
}

func (p *kyroyPoint) Dimensions() int         { return len(p.coords) }
func (p *kyroyPoint) Dimension(i int) float64 { return p.coords[i] }

var _ searcher = (*kyroyTree)(nil)

func newKyroyTree(points []float64, d, lo, hi int) *kyroyTree {
	list := make([]kdtree.Point, hi-lo)
	for s := range list {
		i := lo + s
		list[s] = &kyroyPoint{coords: points[i*d : (i+1)*d], index: int32(i)}
	}
	return &kyroyTree{d: d, points: points, n: hi - lo, tree: kdtree.New(list)}
}

func (t *kyroyTree) radius(dst []int32, x []float64, r float64, minIndex int32, w *searchWork) []int32 {
	w.distances = w.distances[:0]
	if t.n == 0 {
		return dst
	}
	box := make(kdrange.Range, t.d)
	for k, v := range x[:t.d] {
		// Slack relative to r and to the coordinate's magnitude, so every point at distance ≤ r
		// is inside the box whatever the rounding; extra candidates are filtered below.
		s := r*(1+1e-9) + 1e-15*math.Abs(v) + 1e-300
		box[k] = [2]float64{v - s, v + s}
	}
	for _, p := range t.tree.RangeSearch(box) {
		q := p.(*kyroyPoint)
		if dist := distance(x, q.coords); q.index >= minIndex && dist <= r {
			dst = append(dst, q.index)
			w.distances = append(w.distances, dist)
		}
	}
	return dst
}

func (t *kyroyTree) knnSet(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32 {
	return t.knn(dst, x, k, minIndex, w)
}

func (t *kyroyTree) knn(dst []int32, x []float64, k int, minIndex int32, w *searchWork) []int32 {
	if k <= 0 || t.n == 0 {
		return dst
	}
	query := &kyroyPoint{coords: x[:t.d]}
	cand := w.candidates[:0]
	for ask := 2*k + 1; ; ask *= 2 {
		cand = cand[:0]
		got := t.tree.KNN(query, ask)
		for _, p := range got {
			q := p.(*kyroyPoint)
			if q.index >= minIndex {
				cand = append(cand, neighbour{distance(x, q.coords), q.index})
			}
		}
		if len(cand) >= k || len(got) < ask || ask >= t.n {
			break
		}
	}
	slices.SortFunc(cand, compareNeighbour)
	if len(cand) >= k {
		// k accepted points lie within cand[k-1].dist, so the true k nearest do too: collect
		// every accepted point in that ball and decide exactly.
		var inBall []int32
		inBall = t.radius(inBall, x, cand[k-1].dist, minIndex, w)
		cand = cand[:0]
		for s, i := range inBall {
			cand = append(cand, neighbour{w.distances[s], i})
		}
		slices.SortFunc(cand, compareNeighbour)
		cand = cand[:k]
	}
	for _, c := range cand {
		dst = append(dst, c.index)
	}
	w.candidates = cand
	return dst
}

// suffixTrees indexes the position suffixes [max(0, n−2ᵏ), n) for k = 0, 1, …, ⌈log₂ n⌉, so
// that a query over the positions ≥ j can use a tree holding fewer than twice as many points
// as it needs. Build O(n log n) in total.
type suffixTrees struct {
	trees []searcher
}

// newSuffixTrees builds the suffix trees. With the flat tree only the largest is built; each
// smaller one is derived from the next larger by subset, in O(its parent's size), so all but
// the first cost about one more pass over the points. At N = 10⁶ (ρ = 3) building them all
// took 0.30 s of the radius pattern's 0.9 s; with subsets the pattern took 0.80 s against
// 1.0 s (medians of 4 alternating runs). With a Tree from the ordering (Settings.WithTree),
// the largest is that tree, relabelled by position.
func (s Settings) suffixTrees(points []float64, d, n, workers int) *suffixTrees {
	return newSuffixTrees(s.search, points, d, n, workers, s.tree)
}

func newSuffixTrees(kind searchKind, points []float64, d, n, workers int, reuse *Tree) *suffixTrees {
	if n == 0 {
		return &suffixTrees{}
	}
	s := &suffixTrees{trees: make([]searcher, bits.Len(uint(n-1))+1)}
	if kind == searchFlat {
		top := len(s.trees) - 1
		// The largest suffix, [max(0, n−2ᵗᵒᵖ), n), is every position.
		var t *flatTree
		if reuse != nil {
			t = reuse.positions(points, d, workers)
		} else {
			t = newFlatTree(points, d, 0, n, workers)
		}
		s.trees[top] = t
		for k := top - 1; k >= 0; k-- {
			t = t.subset(int32(max(0, n-1<<k)))
			s.trees[k] = t
		}
		return s
	}
	var g errgroup.Group
	g.SetLimit(workers)
	for k := range s.trees {
		g.Go(func() error {
			s.trees[k] = newSearcher(kind, points, d, max(0, n-1<<k), n, workers)
			return nil
		})
	}
	g.Wait()
	return s
}

// subset returns the tree of t's points with index ≥ lo, keeping t's splits: the points keep
// t's slot order, a node of t with no such point is dropped, one with a single non-empty child
// is replaced by that child, and one with at most flatLeafSize such points becomes a leaf.
// Boxes and largest indices are recomputed from the points kept, so they are as tight as a
// fresh build's. Queries give the same answers on any tree of the same points (see searcher);
// only speed depends on the shape. Cost O(len(t.index)).
func (t *flatTree) subset(lo int32) *flatTree {
	d := t.d
	// before[s] is the number of kept points in slots [0, s).
	before := make([]int32, len(t.index)+1)
	for s, i := range t.index {
		before[s+1] = before[s]
		if i >= lo {
			before[s+1]++
		}
	}
	m := int(before[len(t.index)])
	c := &flatTree{d: d, coords: make([]float64, 0, m*d), index: make([]int32, 0, m)}
	for s, i := range t.index {
		if i >= lo {
			c.index = append(c.index, i)
			c.coords = append(c.coords, t.coords[s*d:(s+1)*d]...)
		}
	}
	if m > 0 {
		c.nodes = make([]flatNode, 0, 2*(m/flatLeafSize+1))
		c.boxes = make([]float64, 0, 2*d*cap(c.nodes))
		c.subsetNode(t, 0, before)
	}
	return c
}

// subsetNode adds to c the node for t's node b (which holds at least one kept point) and its
// subtree, returning its id; before is subset's prefix count.
func (c *flatTree) subsetNode(t *flatTree, b int32, before []int32) int32 {
	kept := func(b int32) int32 { return before[t.nodes[b].end] - before[t.nodes[b].start] }
	for node := t.nodes[b]; node.left >= 0; node = t.nodes[b] {
		if kept(node.left) == 0 {
			b = node.right
		} else if kept(node.right) == 0 {
			b = node.left
		} else {
			break
		}
	}
	node := t.nodes[b]
	start, end := before[node.start], before[node.end]
	if node.left < 0 || end-start <= flatLeafSize {
		return c.appendNode(int(start), int(end))
	}
	// An inner node: its box and largest index come from its children's, after them.
	d := c.d
	id := int32(len(c.nodes))
	c.nodes = append(c.nodes, flatNode{start: start, end: end, left: -1, right: -1})
	at := len(c.boxes)
	c.boxes = slices.Grow(c.boxes, 2*d)[:at+2*d]
	left := c.subsetNode(t, node.left, before)
	right := c.subsetNode(t, node.right, before)
	box := c.boxes[at : at+2*d]
	lb, rb := c.boxes[2*d*int(left):2*d*int(left+1)], c.boxes[2*d*int(right):2*d*int(right+1)]
	for k := range d {
		box[k] = min(lb[k], rb[k])
		box[d+k] = max(lb[d+k], rb[d+k])
	}
	c.nodes[id].left, c.nodes[id].right = left, right
	c.nodes[id].maxIndex = max(c.nodes[left].maxIndex, c.nodes[right].maxIndex)
	return id
}

// covering returns the smallest tree holding the last count ≥ 1 positions.
func (s *suffixTrees) covering(count int) searcher {
	return s.trees[bits.Len(uint(count-1))]
}
