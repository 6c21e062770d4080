package ordering

import (
	"fmt"
	"math"
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
// The algorithm keeps every unpicked point's distance to the picked set in an index-tracked
// max-heap; after picking p only points within ℓ_p of p can come closer, found by one radius
// query (Schäfer, Sullivan, Owhadi 2021). Cost O(N log² N) time for well-spread data,
// O(N) memory. Sequential: Workers is not used. Inputs are not modified.
//
// Panics if d < 1, len(points)%d != 0, len(boundary)%d != 0, n ≥ 2³¹−1 or a coordinate is
// not finite.
func (s Settings) ReverseMaximin(points []float64, d int, boundary []float64) Ordering {
	n := checkPoints(points, d)
	if len(boundary)%d != 0 {
		panic(fmt.Sprintf("ordering: boundary length %d is not a multiple of d = %d", len(boundary), d))
	}
	checkFinite(boundary, d, "boundary point")
	ord := Ordering{Order: make([]int, n), LengthScale: make([]float64, n)}
	if n == 0 {
		return ord
	}
	point := func(i int32) []float64 { return points[int(i)*d : int(i+1)*d] }
	var w searchWork
	var buf []int32
	h := maximinHeap{entries: make([]maximinEntry, 0, n), pos: make([]int32, n)}
	nextPosition := n - 1
	record := func(i int32, scale float64) {
		ord.Order[nextPosition] = int(i)
		ord.LengthScale[nextPosition] = scale
		nextPosition--
	}

	if nb := len(boundary) / d; nb > 0 {
		bt := newSearcher(s.search, boundary, d, 0, nb)
		for i := range int32(n) {
			buf = bt.knn(buf[:0], point(i), 1, 0, &w)
			h.entries = append(h.entries, maximinEntry{distance(point(i), boundary[int(buf[0])*d:int(buf[0]+1)*d]), i})
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
		h.pos[first] = -1
		for i := range int32(n) {
			if i != first {
				h.entries = append(h.entries, maximinEntry{distance(point(i), point(first)), i})
			}
		}
	}
	h.init()

	tree := newSearcher(s.search, points, d, 0, n)
	for len(h.entries) > 0 {
		p := h.pop()
		record(p.index, p.dist)
		if p.dist == 0 {
			// Every unpicked distance is ≤ p.dist = 0 already: nothing can come closer.
			continue
		}
		buf = tree.radius(buf[:0], point(p.index), p.dist, 0, &w)
		for k, i := range buf {
			h.decrease(i, w.distances[k])
		}
	}
	return ord
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
