package ordering

import (
	"fmt"
	"math"
	"sync/atomic"
)

// Ordering is a reverse maximin ordering.
type Ordering struct {
	// Order[p] is the input index of the point at position p. Position 0 is the finest point
	// (smallest length scale), position N-1 the coarsest (picked first).
	Order []int
	// LengthScale[p] is the length scale ℓ of the point at position p: its distance to all
	// points picked before it (i.e. at higher positions) ∪ boundary. Non-decreasing in p.
	// +Inf for position N-1 when there is no boundary. 0 for an exact duplicate.
	LengthScale []float64
}

// ReverseMaximin orders the n = len(points)/d points (flat row-major) coarse-to-fine and returns
// the reverse (fine-to-coarse) positions, using the default Settings. See
// Settings.ReverseMaximin.
func ReverseMaximin(points []float64, d int, boundary []float64) Ordering {
	return Settings{}.ReverseMaximin(points, d, boundary)
}

// ReverseMaximin orders the n = len(points)/d points (flat row-major) coarse-to-fine and returns
// the reverse (fine-to-coarse) positions. boundary is a flat row-major set of points (nil or
// empty for none): distances are measured to picked points ∪ boundary.
//
// First pick with no boundary: the point closest to the centroid (the coordinate-wise mean,
// summed in input order), ties by lowest input index, with ℓ = +Inf; with a boundary: the point
// farthest from it. Every later pick is the unpicked point farthest from the picked points ∪
// boundary, ties by lowest input index; its length scale ℓ is that distance. The result is
// exact (the same as the O(N²) definition, distances as in the package comment).
//
// The algorithm keeps every unpicked point's distance to the picked set ∪ boundary in a
// priority structure; after picking p only points within ℓ_p of p can come closer
// (Schäfer, Sullivan, Owhadi 2021). With the default flat kd-tree the tree itself is the
// priority structure (maximinTournament); other searchers use an index-tracked max-heap and one
// radius query per pick (maximinHeapSearch). Both give the same result. Cost O(N log² N) time
// for well-spread data, O(N) memory. From 2¹² points on, the tournament is split between
// s.Workers goroutines, one subtree of the kd-tree each (see tournament.parallel), with the
// same result as on one. Inputs are not modified.
//
// Panics if d < 1, len(points)%d != 0, len(boundary)%d != 0, n ≥ 2³¹−1 or a coordinate is
// not finite.
func (s Settings) ReverseMaximin(points []float64, d int, boundary []float64) Ordering {
	ord, _ := s.reverseMaximin(points, d, boundary)
	return ord
}

// reverseMaximin is ReverseMaximin, also returning the flat kd-tree of the points it searched
// (nil with another searcher or no points).
func (s Settings) reverseMaximin(points []float64, d int, boundary []float64) (Ordering, *flatTree) {
	n := checkPoints(points, d)
	if len(boundary)%d != 0 {
		panic(fmt.Sprintf("ordering: boundary length %d is not a multiple of d = %d", len(boundary), d))
	}
	checkFinite(boundary, d, "boundary point")
	ord := Ordering{Order: make([]int, n), LengthScale: make([]float64, n)}
	if n == 0 {
		return ord, nil
	}
	point := func(i int32) []float64 { return points[int(i)*d : int(i+1)*d] }
	nextPosition := n - 1
	record := func(i int32, scale float64) {
		ord.Order[nextPosition] = int(i)
		ord.LengthScale[nextPosition] = scale
		nextPosition--
	}

	// initial[i] is point i's distance to the boundary, or to the first pick; −Inf marks the
	// first pick itself as picked.
	initial := make([]float64, n)
	if nb := len(boundary) / d; nb > 0 {
		var w searchWork
		var nearest []int32
		bt := newSearcher(s.search, boundary, d, 0, nb, s.workers())
		for i := range int32(n) {
			nearest = bt.knn(nearest[:0], point(i), 1, 0, &w)
			initial[i] = distance(point(i), boundary[int(nearest[0])*d:int(nearest[0]+1)*d])
		}
	} else {
		// Centroid as the coordinate-wise mean, summed in input order.
		centroid := make([]float64, d)
		for i := range n {
			for k, v := range point(int32(i)) {
				centroid[k] += v
			}
		}
		for k := range centroid {
			centroid[k] /= float64(n)
		}
		first, best := int32(0), math.Inf(1)
		for i := range int32(n) {
			if dc := distance(point(i), centroid); dc < best {
				first, best = i, dc
			}
		}
		record(first, math.Inf(1))
		for i := range int32(n) {
			initial[i] = distance(point(i), point(first))
		}
		initial[first] = math.Inf(-1)
	}

	if s.search != searchFlat {
		maximinHeapSearch(newSearcher(s.search, points, d, 0, n, s.workers()), points, d, initial, record)
		return ord, nil
	}
	tree := newFlatTree(points, d, 0, n, s.workers())
	maximinTournament(tree, initial, s.workers(), record)
	return ord, tree
}

// maximinHeapSearch picks the remaining points with an index-tracked max-heap of distances and
// one radius query per pick through the searcher interface. initial holds the starting
// distances, −Inf for points already picked.
func maximinHeapSearch(tree searcher, points []float64, d int, initial []float64, record func(int32, float64)) {
	n := len(initial)
	h := maximinHeap{entries: make([]maximinEntry, 0, n), pos: make([]int32, n)}
	for i, dist := range initial {
		if math.IsInf(dist, -1) {
			h.pos[i] = -1
		} else {
			h.entries = append(h.entries, maximinEntry{dist, int32(i)})
		}
	}
	h.init()
	var w searchWork
	var buf []int32
	for len(h.entries) > 0 {
		p := h.pop()
		record(p.index, p.dist)
		if p.dist == 0 {
			// Every unpicked distance is ≤ p.dist = 0 already: nothing can come closer.
			continue
		}
		buf = tree.radius(buf[:0], points[int(p.index)*d:int(p.index+1)*d], p.dist, 0, &w)
		for k, i := range buf {
			h.decrease(i, w.distances[k])
		}
	}
}

// maximinTournament picks the remaining points using the flat kd-tree itself as the priority
// structure: every node keeps the best unpicked point below it by (distance descending, index
// ascending), so the next pick is read at the root, and the update after a pick descends only
// into nodes whose box is nearer to the pick than their best distance (a point can come closer
// only if its new distance beats its old one, which is at most the node's best). Slots are in
// tree order, so the updates touch memory locally. After 1/sweepAfter of the picks, sweeps
// (tournament.finish) pick the rest. initial holds the starting distances by input index,
// −Inf for points already picked.
func maximinTournament(t *flatTree, initial []float64, workers int, record func(int32, float64)) {
	if len(t.nodes) == 0 {
		return
	}
	d := t.d
	m := tournament{
		t:     t,
		dist:  make([]float64, len(t.index)),
		nodes: make([]tournamentNode, len(t.nodes)),
	}
	for s, i := range t.index {
		m.dist[s] = initial[i]
	}
	for b, node := range t.nodes {
		r := &m.nodes[b]
		r.right = node.right
		if node.left >= 0 && node.left != int32(b)+1 {
			panic("ordering: internal error: kd-tree not in pre-order")
		}
		if d <= tournamentInlineDims {
			box := t.boxes[2*d*b : 2*d*(b+1)]
			for k := range d {
				r.box[2*k], r.box[2*k+1] = float32Below(box[k]), float32Above(box[d+k])
			}
		}
	}
	// Children have larger ids than their parent (pre-order build): refresh bottom-up.
	for b := len(m.nodes) - 1; b >= 0; b-- {
		m.refresh(int32(b), t.nodes[b].start, t.nodes[b].end)
	}
	if workers > 1 && len(t.index) >= parallelMaximinFrom {
		if roots := maximinRegions(t, workers); roots != nil {
			m.parallel(roots, record)
			return
		}
	}
	left := m.unpicked()
	for early := len(t.index) / sweepAfter; early > 0; early-- {
		top := m.pickBest()
		if top.slot < 0 {
			break
		}
		record(top.index, top.dist)
		left--
	}
	mergePicks(m.finish(left, nil), record)
}

// pickBest picks the tournament's best point (the root's) and returns it; slot −1 if every
// point is picked. Node bests must be current.
func (m *tournament) pickBest() tournamentBest {
	top := m.best(0)
	if top.slot >= 0 {
		t := m.t
		d := t.d
		m.dist[top.slot] = math.Inf(-1)
		m.update(0, 0, int32(len(t.index)), t.coords[int(top.slot)*d:int(top.slot+1)*d], top.slot, top.dist)
	}
	return top
}

// unpicked counts the points not yet picked.
func (m *tournament) unpicked() int {
	k := 0
	for _, v := range m.dist {
		if !math.IsInf(v, -1) {
			k++
		}
	}
	return k
}

type tournament struct {
	t     *flatTree
	dist  []float64        // by tree slot; −Inf once picked
	nodes []tournamentNode // by node id, as t.nodes
	// stopAt (math.Float64bits) is the distance at or below which the regions of a parallel
	// tournament stop and leave their points to the sweeps; −Inf until the first region has
	// picked its share.
	stopAt atomic.Uint64
}

// tournamentInlineDims is the most dimensions whose node boxes are copied into the tournament's
// node records. Then everything an update reads about a node is one 32-byte record, two to a
// cache line, and a node's left child (the next record, pre-order) often shares its line.
// Measured with ReverseMaximin on 10⁶ uniform points in the unit square, 5 alternating runs:
// median 6.60 s with best, node and box in three arrays, 5.51 s with one 64-byte record (10⁵
// points: 0.31 s and 0.30 s); on another day, 6 alternating runs, 5.19 s with the 64-byte
// record and 4.66 s with this one (2 workers: 2.63 s and 2.30 s). Above it the boxes are
// read from the tree.
const tournamentInlineDims = 2

// tournamentNode is a node's part of the tournament. Its slot range is not stored: the root
// holds all slots and a node [start, end) splits at (start+end)/2 (flatTree.addNode), so the
// update passes ranges down; the left child is the next node.
type tournamentNode struct {
	dist  float64 // the best unpicked point below the node: its distance (−Inf if none)
	slot  int32   // and tree slot, −1 if every point below is picked
	right int32   // the right child, −1 for a leaf
	// box holds low₀, high₀, low₁, high₁ when d ≤ tournamentInlineDims, rounded outwards to
	// float32, so its lower bound never exceeds the tree box's.
	box [2 * tournamentInlineDims]float32
}

// float32Below returns the largest float32 ≤ v, float32Above the smallest ≥ v.
func float32Below(v float64) float32 {
	f := float32(v)
	if float64(f) > v {
		f = math.Nextafter32(f, float32(math.Inf(-1)))
	}
	return f
}

func float32Above(v float64) float32 {
	f := float32(v)
	if float64(f) < v {
		f = math.Nextafter32(f, float32(math.Inf(1)))
	}
	return f
}

// tournamentBest describes a node's best point.
type tournamentBest struct {
	dist  float64
	slot  int32 // −1 if every point below the node is picked
	index int32 // input index
}

// best returns node b's best point.
func (m *tournament) best(b int32) tournamentBest {
	node := &m.nodes[b]
	if node.slot < 0 {
		return tournamentBest{slot: -1}
	}
	return tournamentBest{node.dist, node.slot, m.t.index[node.slot]}
}

// before reports whether a is to be picked before b: larger distance, then lower index; a
// missing entry (slot −1) is never picked before a present one.
func (a tournamentBest) before(b tournamentBest) bool {
	if b.slot < 0 {
		return a.slot >= 0
	}
	if a.slot < 0 {
		return false
	}
	return a.dist > b.dist || (a.dist == b.dist && a.index < b.index)
}

// refresh recomputes the best point of node b, which holds slots [start, end), from its
// children or, for a leaf, its points. Indices are read only to break ties in distance.
func (m *tournament) refresh(b, start, end int32) {
	node := &m.nodes[b]
	index := m.t.index
	dist, slot := math.Inf(-1), int32(-1)
	if node.right < 0 {
		for s := start; s < end; s++ {
			if v := m.dist[s]; beats(v, s, dist, slot, index) {
				dist, slot = v, s
			}
		}
	} else {
		left, right := &m.nodes[b+1], &m.nodes[node.right]
		dist, slot = left.dist, left.slot
		if beats(right.dist, right.slot, dist, slot, index) {
			dist, slot = right.dist, right.slot
		}
	}
	node.dist, node.slot = dist, slot
}

// beats reports whether the point in slot s at distance v is a better best than the one so
// far (distance best, slot slot; −Inf and −1 for none): a larger distance, or an equal one and
// a lower index. A picked point or an empty child (−Inf) never replaces anything, and index[s]
// is read only for a tie with a point, so never with s = −1.
func beats(v float64, s int32, best float64, slot int32, index []int32) bool {
	return v > best || (v == best && slot >= 0 && index[s] < index[slot])
}

// lowerBound is a lower bound on the squared distance from x to the points below node b: for
// d ≤ tournamentInlineDims, flatTree.lowerBound's arithmetic on the record's outward-rounded
// box, which holds the tree box, so it never exceeds the tree's bound.
func (m *tournament) lowerBound(b int32, node *tournamentNode, x []float64) float64 {
	d := m.t.d
	if d > tournamentInlineDims {
		return m.t.lowerBound(b, x)
	}
	var s float64
	for k, v := range x[:d] {
		var g float64
		if low, high := float64(node.box[2*k]), float64(node.box[2*k+1]); v < low {
			g = low - v
		} else if v > high {
			g = v - high
		}
		s += float64(g * g)
	}
	return s
}

// update lowers the distances below node b (slots [start, end)) to account for the new pick
// at x (slot picked) and refreshes the nodes it visits, always including those on the path to
// picked. Only distances to x below within change: a pick at distance ℓ changes no point
// whose distance to it is ℓ or more, since every point picked after it has distance at most
// ℓ. The serial tournament never has an unpicked point beyond ℓ, so there within only prunes
// what the node bests prune already; the parallel one applies another region's pick to points
// that region did not wait for, and some of them come before the pick.
func (m *tournament) update(b, start, end int32, x []float64, picked int32, within float64) {
	node := &m.nodes[b]
	if picked < start || picked >= end {
		if node.slot < 0 || node.dist <= 0 || m.lowerBound(b, node, x) > pruneBound(min(node.dist, within)) {
			return
		}
	}
	if node.right < 0 {
		// Lower the leaf's distances and find its best point in one pass, as refresh would.
		// The square root is taken only where the squared distance can be within min(v,
		// within) (pruneBound): at 10⁶ uniform points a pick scans 64 points on average and
		// lowers 9. Serial ReverseMaximin at 10⁶ took 3.12 s this way against 3.42 s with a
		// root per point (medians of 4 alternating runs).
		t := m.t
		d := t.d
		index := t.index
		best, slot := math.Inf(-1), int32(-1)
		for s := start; s < end; s++ {
			v := m.dist[s]
			if v > 0 {
				if sq := squaredDistance(x, t.coords[int(s)*d:int(s+1)*d]); sq <= pruneBound(min(v, within)) {
					if dist := math.Sqrt(sq); dist < v && dist < within {
						v = dist
						m.dist[s] = v
					}
				}
			}
			if beats(v, s, best, slot, index) {
				best, slot = v, s
			}
		}
		node.dist, node.slot = best, slot
		return
	}
	mid := (start + end) / 2
	m.update(b+1, start, mid, x, picked, within)
	m.update(node.right, mid, end, x, picked, within)
	m.refresh(b, start, end)
}

// maximinHeap is a binary max-heap of unpicked points ordered by (distance descending, index
// ascending). Entries carry their distance so comparisons stay in the heap array; pos tracks
// every point's heap slot (−1 once picked) so that a decreased distance sifts down in O(log N).
type maximinHeap struct {
	entries []maximinEntry
	pos     []int32
}

type maximinEntry struct {
	dist  float64 // distance to the picked points ∪ boundary
	index int32
}

// before reports whether the entry in slot a must be picked before the one in slot b.
func (h *maximinHeap) before(a, b int) bool {
	x, y := &h.entries[a], &h.entries[b]
	return x.dist > y.dist || (x.dist == y.dist && x.index < y.index)
}

func (h *maximinHeap) swap(a, b int) {
	e := h.entries
	e[a], e[b] = e[b], e[a]
	h.pos[e[a].index] = int32(a)
	h.pos[e[b].index] = int32(b)
}

func (h *maximinHeap) init() {
	for s, e := range h.entries {
		h.pos[e.index] = int32(s)
	}
	for s := len(h.entries)/2 - 1; s >= 0; s-- {
		h.down(s)
	}
}

func (h *maximinHeap) down(p int) {
	n := len(h.entries)
	for {
		c := 2*p + 1
		if c >= n {
			return
		}
		if c+1 < n && h.before(c+1, c) {
			c++
		}
		if !h.before(c, p) {
			return
		}
		h.swap(c, p)
		p = c
	}
}

// decrease lowers point i's distance to dist if that is smaller.
func (h *maximinHeap) decrease(i int32, dist float64) {
	s := h.pos[i]
	if s < 0 || dist >= h.entries[s].dist {
		return
	}
	h.entries[s].dist = dist
	h.down(int(s))
}

// pop removes and returns the entry to pick next.
func (h *maximinHeap) pop() maximinEntry {
	top := h.entries[0]
	last := len(h.entries) - 1
	h.swap(0, last)
	h.entries = h.entries[:last]
	h.pos[top.index] = -1
	h.down(0)
	return top
}

// checkPoints validates a flat point array and returns the number of points.
func checkPoints(points []float64, d int) int {
	if d < 1 {
		panic(fmt.Sprintf("ordering: dimension d = %d < 1", d))
	}
	if len(points)%d != 0 {
		panic(fmt.Sprintf("ordering: points length %d is not a multiple of d = %d", len(points), d))
	}
	n := len(points) / d
	if n >= math.MaxInt32 {
		panic(fmt.Sprintf("ordering: %d points, at most 2³¹−2 supported", n))
	}
	checkFinite(points, d, "point")
	return n
}

func checkFinite(points []float64, d int, what string) {
	for c, v := range points {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			panic(fmt.Sprintf("ordering: %s %d has non-finite coordinate %d: %v", what, c/d, c%d, v))
		}
	}
}
