package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// searchKinds lists every searcher implementation; each test runs on all of them.
var searchKinds = []searchKind{searchFlat, searchKyroy}

// plainDistance is the package's stated definition of distance (see doc.go), written out
// independently: √(Σₖ (aₖ − bₖ)²) summed in coordinate order. The brute-force references use
// it so that exact ties are compared exactly.
func plainDistance(a, b []float64) float64 {
	sum := 0.0
	for k := range a {
		diff := a[k] - b[k]
		sum += float64(diff * diff)
	}
	return math.Sqrt(sum)
}

type pointSet struct {
	name   string
	d      int
	points []float64
}

// uniformPoints returns n points uniform on the unit cube [0,1)ᵈ.
func uniformPoints(rng *rand.Rand, n, d int) []float64 {
	p := make([]float64, n*d)
	for i := range p {
		p[i] = rng.Float64()
	}
	return p
}

// clusteredPoints returns n points from five Gaussian blobs of standard deviation 0.03 with
// centres uniform on [0,1)ᵈ: strongly non-uniform density.
func clusteredPoints(rng *rand.Rand, n, d int) []float64 {
	centres := uniformPoints(rng, 5, d)
	p := make([]float64, n*d)
	for i := range n {
		c := rng.IntN(5)
		for k := range d {
			p[i*d+k] = centres[c*d+k] + 0.03*rng.NormFloat64()
		}
	}
	return p
}

// latticePoints returns the first n points of the integer lattice {0,…,side−1}ᵈ with
// sideᵈ ≥ n, in lexicographic order: many exact distance ties.
func latticePoints(n, d int) []float64 {
	side := 1
	for math.Pow(float64(side), float64(d)) < float64(n) {
		side++
	}
	p := make([]float64, 0, n*d)
	for i := range n {
		r := i
		for range d {
			p = append(p, float64(r%side))
			r /= side
		}
	}
	return p
}

// testPointSets returns uniform, clustered and lattice sets of n points in d dimensions.
func testPointSets(n, d int) []pointSet {
	rng := rand.New(rand.NewPCG(1, 1))
	return []pointSet{
		{"uniform", d, uniformPoints(rng, n, d)},
		{"clustered", d, clusteredPoints(rng, n, d)},
		{"lattice", d, latticePoints(n, d)},
	}
}

// copiesPointSet returns n/2 uniform points in d dimensions followed by n/4 exact copies of
// randomly drawn ones (some copied several times): zero distances everywhere.
func copiesPointSet(rng *rand.Rand, n, d int) pointSet {
	p := uniformPoints(rng, n/2, d)
	for range n / 4 {
		i := rng.IntN(n / 2)
		p = append(p, p[i*d:(i+1)*d]...)
	}
	return pointSet{"copies", d, p}
}

// bruteKNN is the O(n·k) definition of searcher.knn over indices [lo, hi): scan every
// accepted point, keep the k best by (distance, index) in a sorted list.
func bruteKNN(points []float64, d, lo, hi int, x []float64, k int, minIndex int) []int32 {
	var best []neighbour
	if k <= 0 {
		return nil
	}
	for i := max(lo, minIndex); i < hi; i++ {
		c := neighbour{plainDistance(x, points[i*d:(i+1)*d]), int32(i)}
		// Indices increase, so a candidate at an equal distance ranks after those kept.
		if len(best) == k && c.dist >= best[k-1].dist {
			continue
		}
		at := len(best)
		for at > 0 && best[at-1].dist > c.dist {
			at--
		}
		best = slices.Insert(best, at, c)
		if len(best) > k {
			best = best[:k]
		}
	}
	var out []int32
	for _, e := range best {
		out = append(out, e.index)
	}
	return out
}

// bruteRadius is the O(n) definition of searcher.radius over indices [lo, hi), ascending.
func bruteRadius(points []float64, d, lo, hi int, x []float64, r float64, minIndex int) []int32 {
	var out []int32
	for i := max(lo, minIndex); i < hi; i++ {
		if plainDistance(x, points[i*d:(i+1)*d]) <= r {
			out = append(out, int32(i))
		}
	}
	return out
}

func TestSearcherAgainstBruteForce(t *testing.T) {
	n := 600
	if testing.Short() {
		n = 200
	}
	for _, kind := range searchKinds {
		for _, d := range []int{1, 2, 3} {
			for _, set := range testPointSets(n, d) {
				// Index a middle range so that indices outside it must never appear.
				lo, hi := n/10, n
				tree := newSearcher(kind, set.points, d, lo, hi, 1)
				rng := rand.New(rand.NewPCG(1, 1))
				var w searchWork
				for q := range 40 {
					// Queries at indexed points (exact ties on lattices) and at random places.
					var x []float64
					if q%2 == 0 {
						i := lo + rng.IntN(hi-lo)
						x = set.points[i*d : (i+1)*d]
					} else {
						x = set.points[rng.IntN(n)*d:][:d]
						x = append([]float64(nil), x...)
						x[0] += 0.5 * rng.Float64()
					}
					minIndex := []int{0, lo, n / 2, n - 1, n}[q%5]
					for _, k := range []int{1, 5, 30, 80, n + 1} {
						name := fmt.Sprintf("search=%v/d=%d/set=%s/query=%d/minIndex=%d/k=%d", kind, d, set.name, q, minIndex, k)
						got := tree.knn(nil, x, k, int32(minIndex), &w)
						want := bruteKNN(set.points, d, lo, hi, x, k, minIndex)
						// Reference: the O(n) definition, ties by lower index.
						if !slices.Equal(got, want) {
							t.Errorf("%s: knn = %v, want %v", name, got, want)
						}
						// knnSet: the same indices in any order.
						set := tree.knnSet([]int32{-7}, x, k, int32(minIndex), &w)
						if set[0] != -7 {
							t.Fatalf("%s: knnSet overwrote dst", name)
						}
						set = set[1:]
						slices.Sort(set)
						sorted := slices.Sorted(slices.Values(want))
						if !slices.Equal(set, sorted) {
							t.Errorf("%s: knnSet = %v, want the set %v", name, set, sorted)
						}
					}
					// Radii: 0 (duplicates only), lattice spacings 1 and √2 (exact ties), and
					// distances to points of the set (ties at the boundary of the ball).
					radii := []float64{0, 1, math.Sqrt2, 0.05, plainDistance(x, set.points[rng.IntN(n)*d:][:d]), math.Inf(1)}
					for _, r := range radii {
						name := fmt.Sprintf("search=%v/d=%d/set=%s/query=%d/minIndex=%d/r=%g", kind, d, set.name, q, minIndex, r)
						got := tree.radius(nil, x, r, int32(minIndex), &w)
						slices.Sort(got)
						want := bruteRadius(set.points, d, lo, hi, x, r, minIndex)
						if !slices.Equal(got, want) {
							t.Errorf("%s: radius = %v, want %v", name, got, want)
						}
					}
				}
			}
		}
	}
}

// From k = knnGuessFrom, knn and knnSet answer from a radius query when a ball around the
// last query's k-th distance holds k points (nearestWithin enlarges a ball that falls short),
// and from the bounded heap otherwise, as for the first query; both must give the brute-force
// k nearest. Queries run through the tree's slots in order, as the pattern builders issue
// them, on uniform, clustered, lattice (exact ties) and copied (zero distances) points, with
// one workspace throughout. The test also asserts that first guesses both held and fell short,
// mostly held, and that no radius query ran below knnGuessFrom.
func TestKNNByRadiusGuess(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	const n, d = 3000, 2
	sets := append(testPointSets(n, d), copiesPointSet(rng, n, d))
	for _, set := range sets {
		points := set.points
		m := len(points) / d
		tree := newFlatTree(points, d, 0, m, 1)
		for _, k := range []int{knnGuessFrom - 1, knnGuessFrom, 80, 160} {
			var w searchWork
			held, short := 0, 0
			for q, slot := range tree.index {
				if q%7 != 0 {
					continue
				}
				x := points[int(slot)*d : int(slot+1)*d]
				minIndex := int32(rng.IntN(m / 2))
				name := fmt.Sprintf("set=%s/k=%d/query=%d", set.name, k, q)
				if w.kthDistance > 0 && len(tree.radius(nil, x, w.kthDistance*knnGuessSlack, minIndex, &searchWork{})) >= k {
					held++
				} else {
					short++
				}
				want := bruteKNN(points, d, 0, m, x, k, int(minIndex))
				kth := w.kthDistance
				if got := tree.knn(nil, x, k, minIndex, &w); !slices.Equal(got, want) {
					t.Fatalf("%s: knn = %v, want %v", name, got, want)
				}
				w.kthDistance = kth
				got := tree.knnSet(nil, x, k, minIndex, &w)
				slices.Sort(got)
				if sorted := slices.Sorted(slices.Values(want)); !slices.Equal(got, sorted) {
					t.Fatalf("%s: knnSet = %v, want the set %v", name, got, sorted)
				}
			}
			if k < knnGuessFrom {
				if w.found != nil {
					t.Errorf("set=%s/k=%d: a radius query ran below knnGuessFrom = %d", set.name, k, knnGuessFrom)
				}
			} else if short == 0 || held < short {
				t.Errorf("set=%s/k=%d: the first guess held k points for %d queries and fell short for %d: want both, mostly held", set.name, k, held, short)
			}
		}
	}
}

// selectNeighbours and sortNeighbours against the standard library's sort (slices.SortFunc
// with compareNeighbour, the order knn defines): sortNeighbours must give the same order, and
// for every k selectNeighbours must leave the k smallest first, the largest of them at k−1;
// both must keep a permutation. Distances come from few values so that ties are common.
func TestNeighbourSelection(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	for _, n := range []int{1, 2, 3, 5, 12, 13, 40, 168} {
		for trial := range 20 {
			a := make([]neighbour, n)
			for i, v := range rng.Perm(n) {
				a[i] = neighbour{float64(rng.IntN(1 + n/(1+trial%4))), int32(v)}
			}
			if trial == 0 {
				slices.SortFunc(a, compareNeighbour) // sorted input
			} else if trial == 1 {
				slices.SortFunc(a, func(x, y neighbour) int { return compareNeighbour(y, x) }) // reversed
			}
			want := slices.Clone(a)
			slices.SortFunc(want, compareNeighbour)
			got := slices.Clone(a)
			sortNeighbours(got)
			if !slices.Equal(got, want) {
				t.Fatalf("n=%d trial=%d: sortNeighbours gives %v, want %v", n, trial, got, want)
			}
			for k := 1; k <= n; k++ {
				got := slices.Clone(a)
				selectNeighbours(got, k)
				if got[k-1] != want[k-1] {
					t.Fatalf("n=%d trial=%d k=%d: selectNeighbours put %v at k−1, want %v", n, trial, k, got[k-1], want[k-1])
				}
				first := slices.Clone(got[:k])
				slices.SortFunc(first, compareNeighbour)
				if !slices.Equal(first, want[:k]) {
					t.Fatalf("n=%d trial=%d k=%d: selectNeighbours keeps %v, want %v", n, trial, k, first, want[:k])
				}
				slices.SortFunc(got, compareNeighbour)
				if !slices.Equal(got, want) {
					t.Fatalf("n=%d trial=%d k=%d: selectNeighbours lost or duplicated entries", n, trial, k)
				}
			}
		}
	}
}

func TestSearcherEmptyAndDuplicates(t *testing.T) {
	for _, kind := range searchKinds {
		var w searchWork
		empty := newSearcher(kind, nil, 2, 0, 0, 1)
		if got := empty.knn(nil, []float64{0, 0}, 3, 0, &w); len(got) != 0 {
			t.Errorf("search=%v: knn on empty tree = %v", kind, got)
		}
		if got := empty.radius(nil, []float64{0, 0}, 1, 0, &w); len(got) != 0 {
			t.Errorf("search=%v: radius on empty tree = %v", kind, got)
		}
		// 50 copies of one point: the tree must hold them in one leaf without splitting forever.
		same := make([]float64, 100)
		for i := range same {
			same[i] = 0.25
		}
		tree := newSearcher(kind, same, 2, 0, 50, 1)
		got := tree.knn(nil, []float64{0.25, 0.25}, 3, 10, &w)
		if want := []int32{10, 11, 12}; !slices.Equal(got, want) {
			t.Errorf("search=%v: knn among duplicates = %v, want %v (ties by lower index)", kind, got, want)
		}
		got = tree.radius(nil, []float64{0.25, 0.25}, 0, 0, &w)
		if len(got) != 50 {
			t.Errorf("search=%v: radius 0 among 50 duplicates found %d", kind, len(got))
		}
	}
}

func TestFlatTreeQueriesDoNotAllocate(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	points := uniformPoints(rng, 5000, 2)
	tree := newFlatTree(points, 2, 0, 5000, 1)
	var w searchWork
	dst := make([]int32, 0, 5000)
	x := []float64{0.5, 0.5}
	query := func() {
		dst = tree.knn(dst[:0], x, 30, 100, &w)
		dst = tree.radius(dst[:0], x, 0.1, 100, &w)
	}
	query() // grow the workspace once
	// STYLE.md §6: hot loops allocate nothing once each worker's workspace is sized.
	if allocs := testing.AllocsPerRun(100, query); allocs != 0 {
		t.Errorf("flatTree queries allocate %v times per run, want 0", allocs)
	}
}

func TestSuffixTreesCovering(t *testing.T) {
	points := latticePoints(37, 1)
	s := newSuffixTrees(searchFlat, points, 1, 37, 2, nil)
	var w searchWork
	for count := 1; count <= 37; count++ {
		// The covering tree must hold every position ≥ 37−count and fewer than 2·count points
		// (the suffixes have sizes 2ᵏ, clipped to n).
		all := s.covering(count).radius(nil, []float64{0}, math.Inf(1), 0, &w)
		slices.Sort(all)
		if all[len(all)-1] != 36 || len(all) != 37-int(all[0]) || int(all[0]) > 37-count || len(all) >= 2*count && len(all) != 37 {
			t.Errorf("count=%d: covering tree holds positions %d..%d (%d points)", count, all[0], all[len(all)-1], len(all))
		}
	}
}

// A tree built on several goroutines must be the serial tree, node for node: same slots,
// children, boxes and largest indices, and the points in the same slots.
func TestFlatTreeParallelBuildIsSerialBuild(t *testing.T) {
	n := 3 * flatParallelBuildFrom
	rng := rand.New(rand.NewPCG(5, 5))
	for _, d := range []int{1, 2, 3} {
		for _, set := range []pointSet{{"uniform", d, uniformPoints(rng, n, d)}, {"clustered", d, clusteredPoints(rng, n, d)}} {
			want := newFlatTree(set.points, d, 7, n, 1)
			for _, workers := range []int{2, 3, 8} {
				got := newFlatTree(set.points, d, 7, n, workers)
				if !slices.Equal(got.nodes, want.nodes) || !slices.Equal(got.boxes, want.boxes) ||
					!slices.Equal(got.coords, want.coords) || !slices.Equal(got.index, want.index) {
					t.Errorf("d=%d/set=%s/workers=%d: the parallel build differs from the serial one", d, set.name, workers)
				}
			}
		}
	}
}

// checkFlatTree checks the structure of a flat tree of the points with indices want (in slot
// order): each node's children split its slots in two, leaves hold at most flatLeafSize
// points (the test sets have no duplicates), no node is empty, and every box and largest
// index is the tight one of the node's points.
func checkFlatTree(t *testing.T, name string, tree *flatTree, want []int32) {
	t.Helper()
	d := tree.d
	if !slices.Equal(tree.index, want) {
		t.Fatalf("%s: the tree holds indices %v, want %v", name, tree.index, want)
	}
	if len(want) == 0 {
		if len(tree.nodes) != 0 {
			t.Fatalf("%s: an empty tree has %d nodes", name, len(tree.nodes))
		}
		return
	}
	if n := tree.nodes[0]; n.start != 0 || int(n.end) != len(want) {
		t.Fatalf("%s: the root holds slots [%d, %d), want [0, %d)", name, n.start, n.end, len(want))
	}
	for b, node := range tree.nodes {
		if node.end <= node.start {
			t.Fatalf("%s: node %d is empty", name, b)
		}
		if node.left < 0 {
			if node.end-node.start > flatLeafSize {
				t.Fatalf("%s: leaf %d holds %d points", name, b, node.end-node.start)
			}
		} else {
			l, r := tree.nodes[node.left], tree.nodes[node.right]
			if l.start != node.start || l.end != r.start || r.end != node.end {
				t.Fatalf("%s: node %d [%d, %d) has children [%d, %d) and [%d, %d)", name, b, node.start, node.end, l.start, l.end, r.start, r.end)
			}
		}
		box := tree.boxes[2*d*b : 2*d*(b+1)]
		for k := range d {
			low, high := math.Inf(1), math.Inf(-1)
			for s := node.start; s < node.end; s++ {
				low, high = min(low, tree.coords[int(s)*d+k]), max(high, tree.coords[int(s)*d+k])
			}
			if box[k] != low || box[d+k] != high {
				t.Fatalf("%s: node %d coordinate %d box [%v, %v], points span [%v, %v]", name, b, k, box[k], box[d+k], low, high)
			}
		}
		if m := slices.Max(tree.index[node.start:node.end]); node.maxIndex != m {
			t.Fatalf("%s: node %d maxIndex %d, want %d", name, b, node.maxIndex, m)
		}
	}
}

// A subset tree must be a well-formed tree of exactly the points with index ≥ lo, in the
// parent's slot order, and answer every query as the O(n) definitions do (bruteKNN,
// bruteRadius); subsets of subsets too, as newSuffixTrees chains them.
func TestFlatTreeSubset(t *testing.T) {
	n := 600
	if testing.Short() {
		n = 200
	}
	for _, d := range []int{1, 2, 3} {
		for _, set := range testPointSets(n, d) {
			base := n / 10
			parent := newFlatTree(set.points, d, base, n, 1)
			for _, lo := range []int{0, base, n / 3, n / 2, n - 40, n - 1, n, n + 5} {
				tree := parent.subset(int32(lo))
				for step := range 2 {
					from := max(lo, base)
					if step == 1 { // a subset of the subset
						from = max(from, n-(n-from)/3)
						tree = tree.subset(int32(from))
					}
					name := fmt.Sprintf("d=%d/set=%s/lo=%d/step=%d", d, set.name, lo, step)
					var want []int32
					for _, i := range parent.index {
						if int(i) >= from {
							want = append(want, i)
						}
					}
					checkFlatTree(t, name, tree, want)
					rng := rand.New(rand.NewPCG(2, uint64(lo)))
					var w searchWork
					for q := range 10 {
						x := slices.Clone(set.points[rng.IntN(n)*d:][:d])
						if q%2 == 1 {
							x[0] += 0.3 * rng.Float64()
						}
						minIndex := []int{0, from, (from + n) / 2}[q%3]
						for _, k := range []int{1, 7, n} {
							if got, want := tree.knn(nil, x, k, int32(minIndex), &w), bruteKNN(set.points, d, from, n, x, k, minIndex); !slices.Equal(got, want) {
								t.Errorf("%s/query=%d/k=%d: knn = %v, want %v", name, q, k, got, want)
							}
						}
						for _, r := range []float64{0, 1, 0.1, plainDistance(x, set.points[rng.IntN(n)*d:][:d])} {
							got := tree.radius(nil, x, r, int32(minIndex), &w)
							slices.Sort(got)
							if want := bruteRadius(set.points, d, from, n, x, r, minIndex); !slices.Equal(got, want) {
								t.Errorf("%s/query=%d/r=%g: radius = %v, want %v", name, q, r, got, want)
							}
						}
					}
				}
			}
		}
	}
}

// pruneBound(r) must admit every squared distance s whose computed root is ≤ r: the trees
// prune boxes with it and the tournament skips roots with it. math.Sqrt is correctly rounded
// (IEEE 754-2008 §5.4.1 lists squareRoot among its correctly rounded operations; section
// number from memory), so the property is checked exactly on the floats nearest r², where it is
// tightest, for r over the range of magnitudes, including subnormal squares. The plain r·r
// fails it: for some r the float just above fl(r·r) still has root r.
func TestPruneBoundAdmitsEveryRootWithin(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	plainFails := 0
	for range 20000 {
		r := math.Pow(10, -160+310*rng.Float64()) * (1 + rng.Float64())
		s := r * r
		for range 8 {
			s = math.Nextafter(s, 0)
		}
		for range 16 {
			if math.Sqrt(s) <= r {
				if s > pruneBound(r) {
					t.Fatalf("r = %v: √%v = %v ≤ r but %v > pruneBound(r) = %v", r, s, math.Sqrt(s), s, pruneBound(r))
				}
				if s > r*r {
					plainFails++
				}
			}
			s = math.Nextafter(s, math.Inf(1))
		}
	}
	if plainFails == 0 {
		t.Error("r·r admitted every root ≤ r: the check above never reaches the slack it tests")
	}
}

// A radius query starts at the deepest node on the last query's path whose box holds its
// ball (flatTree.radiusStart). Every brute-force answer must lie in that node's slots, and on
// queries in slot order with small balls the start must mostly be below the root (else the
// finger does nothing). Lattice points put exact ties on the box faces.
func TestRadiusStartHoldsEveryAnswer(t *testing.T) {
	const n, d = 4000, 2
	for _, set := range testPointSets(n, d) {
		tree := newFlatTree(set.points, d, 0, n, 1)
		var w searchWork
		below := 0
		for q, slot := range tree.index {
			x := set.points[int(slot)*d : int(slot+1)*d]
			r := []float64{0, 0.01, 0.03, 1, math.Sqrt2}[q%5]
			b := tree.radiusStart(x, r, &w)
			if b != 0 {
				below++
			}
			node := tree.nodes[b]
			inNode := make(map[int32]bool)
			for s := node.start; s < node.end; s++ {
				inNode[tree.index[s]] = true
			}
			for _, i := range bruteRadius(set.points, d, 0, n, x, r, 0) {
				if !inNode[i] {
					t.Fatalf("set=%s/query=%d/r=%g: point %d at distance %v is not below start node %d", set.name, q, r, i, plainDistance(x, set.points[int(i)*d:int(i+1)*d]), b)
				}
			}
		}
		if below < n/2 {
			t.Errorf("set=%s: %d of %d queries started below the root, want most", set.name, below, n)
		}
	}
}
