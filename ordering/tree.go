package ordering

import (
	"fmt"
	"sync"
)

// Tree is the kd-tree a reverse maximin ordering was computed on, kept so that the pattern
// builders can search the same points without building a tree of their own (see
// Settings.WithTree). Building it took 0.23–0.24 s on 2 workers at N = 10⁶ (2D uniform), a
// tenth of a run of cholesky.New at ρ = 3.
//
// It holds a copy of the points (N·d float64) and about 2.3 N bytes of nodes and boxes; let
// it go once the patterns are built. It is safe for concurrent use.
type Tree struct {
	once   sync.Once
	flat   *flatTree // by input index until relabelled, then nil
	order  []int     // the ordering's Order, until relabelled
	n, d   int
	result *flatTree // the tree by position
	err    string    // why the points given did not match, if they did not
}

// ReverseMaximinTree is ReverseMaximin that also returns the kd-tree it searched. The tree is
// nil when the ordering used no such tree.
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

// positions returns the tree labelled by position, checking that its points are points in
// position order. The first call relabels, in one pass over the slots; the relabelled tree
// shares the coordinates and boxes and has its own indices and largest indices.
func (t *Tree) positions(points []float64, d int) *flatTree {
	t.once.Do(func() {
		if d != t.d || len(points) != t.n*d {
			t.err = fmt.Sprintf("%d points in %d dimensions, the tree's ordering has %d in %d", len(points)/max(d, 1), d, t.n, t.d)
			return
		}
		position := make([]int32, t.n)
		for p, i := range t.order {
			position[i] = int32(p)
		}
		f := t.flat
		index := make([]int32, len(f.index))
		for s, i := range f.index {
			p := position[i]
			for k := range d {
				if f.coords[s*d+k] != points[int(p)*d+k] {
					t.err = fmt.Sprintf("point %d (position %d) differs from the ordering's", i, p)
					return
				}
			}
			index[s] = p
		}
		r := &flatTree{d: d, coords: f.coords, index: index, nodes: make([]flatNode, len(f.nodes)), boxes: f.boxes}
		copy(r.nodes, f.nodes)
		// Children have larger ids than their parent (pre-order build): bottom-up.
		for b := len(r.nodes) - 1; b >= 0; b-- {
			node := &r.nodes[b]
			if node.left < 0 {
				node.maxIndex = index[node.start]
				for _, i := range index[node.start+1 : node.end] {
					node.maxIndex = max(node.maxIndex, i)
				}
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
