package ordering

import (
	"fmt"
	"slices"
	"sync"
)

// Tree is the kd-tree a reverse maximin ordering was computed on, kept so that the pattern
// builders can search the same points without building a tree of their own (see
// Settings.WithTree). Building it took 0.23–0.24 s on 2 workers at N = 10⁶ (2D uniform), a
// tenth of a run of cholesky.New at ρ = 3.
//
// It holds a copy of the points (N·d float64) and about (5 + d/2)·N bytes of indices, nodes
// and boxes; let it go once the patterns are built. It is safe for concurrent use.
type Tree struct {
	once   sync.Once
	flat   *flatTree // by input index until relabelled, then nil
	order  []int     // the ordering's Order, until relabelled
	n, d   int
	result *flatTree // the tree by position
	err    string    // why the points given did not match, if they did not
}

// ReverseMaximinTree is ReverseMaximin that also returns the kd-tree it searched. The tree is
// nil when the ordering used no such tree. It refers to the ordering's Order until its first
// use by a pattern builder, which relabels it by Order; change Order only after that.
func (s Settings) ReverseMaximinTree(points []float64, d int, boundary []float64) (Ordering, *Tree) {
	ord, flat := s.reverseMaximin(points, d, boundary)
	if flat == nil {
		return ord, nil
	}
	return ord, &Tree{flat: flat, order: ord.Order, n: len(ord.Order), d: d}
}

// WithTree returns settings whose pattern builders (Radius, NearestNeighbors, Greedy,
// GreedySupernodes) search t, relabelled from input indices to positions, instead of
// building a tree of their own. The points they are given must be the ordering's points in
// position order, bit for bit (point p is input point Order[p]); they panic otherwise. The
// patterns are the same as without t. A nil t changes nothing.
func (s Settings) WithTree(t *Tree) Settings {
	s.tree = t
	return s
}

// relabelChunk is the number of slots one task of positions relabels.
const relabelChunk = 1 << 15

// positions returns the tree labelled by position, checking that its points are points in
// position order. The first call relabels, in one pass over the slots in chunks on up to
// workers goroutines (the reads of the points are random: at 10⁶ points one goroutine took
// 37–48 ms); the relabelled tree shares the coordinates and boxes and has its own indices and
// largest indices.
func (t *Tree) positions(points []float64, d, workers int) *flatTree {
	t.once.Do(func() {
		if d != t.d || len(points) != t.n*d {
			t.err = fmt.Sprintf("%d points in %d dimensions, the tree's ordering has %d in %d", len(points)/max(d, 1), d, t.n, t.d)
			return
		}
		chunks := (t.n + relabelChunk - 1) / relabelChunk
		position := make([]int32, t.n)
		forEachChunk(chunks, workers, func(c int) {
			for p := c * relabelChunk; p < min(t.n, (c+1)*relabelChunk); p++ {
				position[t.order[p]] = int32(p)
			}
		})
		f := t.flat
		index := make([]int32, len(f.index))
		// bad[c] is 1 + the first slot of chunk c whose coordinates differ, or 0.
		bad := make([]int, chunks)
		forEachChunk(chunks, workers, func(c int) {
			for s := c * relabelChunk; s < min(t.n, (c+1)*relabelChunk); s++ {
				p := position[f.index[s]]
				for k := range d {
					if f.coords[s*d+k] != points[int(p)*d+k] {
						bad[c] = s + 1
						return
					}
				}
				index[s] = p
			}
		})
		for _, b := range bad {
			if b > 0 {
				i := f.index[b-1]
				t.err = fmt.Sprintf("point %d (position %d) differs from the ordering's", i, position[i])
				return
			}
		}
		r := &flatTree{d: d, coords: f.coords, index: index, nodes: make([]flatNode, len(f.nodes)), boxes: f.boxes}
		copy(r.nodes, f.nodes)
		// Children have larger ids than their parent (pre-order build): bottom-up.
		for b := len(r.nodes) - 1; b >= 0; b-- {
			node := &r.nodes[b]
			if node.left < 0 {
				node.maxIndex = slices.Max(index[node.start:node.end])
			} else {
				node.maxIndex = max(r.nodes[node.left].maxIndex, r.nodes[node.right].maxIndex)
			}
		}
		t.result = r
		t.flat, t.order = nil, nil
	})
	if t.err != "" {
		panic("ordering: WithTree: " + t.err)
	}
	return t.result
}
