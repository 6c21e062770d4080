package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/kchol/kchol/kernels"
)

// With the ordering's tree, every pattern builder must give the pattern of the O(N²)
// definitions (radius, nearest neighbours) or, for the greedy builders, the same pattern as
// with a tree of their own (greedy selection is checked against brute force in
// greedy_test.go). Uniform, clustered and lattice sets (exact ties) and copies (zero
// distances), with and without a boundary, in 1–3 dimensions, on one and two workers.
func TestWithTreeGivesThePatterns(t *testing.T) {
	n := 1000
	if testing.Short() {
		n = 300
	}
	for _, d := range []int{1, 2, 3} {
		rng := rand.New(rand.NewPCG(7, 7))
		sets := testPointSets(n, d)
		sets = append(sets, copiesPointSet(rng, n, d))
		k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.2, Nugget: 1e-6}
		for _, set := range sets {
			for _, boundary := range [][]float64{nil, facePoints(rng, 10*d, d)} {
				for _, workers := range []int{1, 2} {
					name := fmt.Sprintf("d=%d/set=%s/boundary=%v/workers=%d", d, set.name, boundary != nil, workers)
					s := Settings{Workers: workers}
					ord, tree := s.ReverseMaximinTree(set.points, d, boundary)
					if want := s.ReverseMaximin(set.points, d, boundary); !slices.Equal(ord.Order, want.Order) || !slices.Equal(ord.LengthScale, want.LengthScale) {
						t.Fatalf("%s: ReverseMaximinTree's ordering differs from ReverseMaximin's", name)
					}
					if tree == nil {
						t.Fatalf("%s: no tree", name)
					}
					x := permutePoints(set.points, d, ord.Order)
					w := s.WithTree(tree)
					for _, rho := range []float64{1.5, 3} {
						comparePattern(t, w.Radius(x, d, ord.LengthScale, rho), bruteRadiusPattern(x, d, ord.LengthScale, rho))
					}
					for _, m := range []int{1, 10} {
						comparePattern(t, w.NearestNeighbors(x, d, m), bruteNearestPattern(x, d, m))
					}
					if got, want := w.Greedy(x, d, k, 8, 0), s.Greedy(x, d, k, 8, 0); !slices.Equal(got.ColStart, want.ColStart) || !slices.Equal(got.Rows, want.Rows) {
						t.Errorf("%s: greedy pattern with the ordering's tree differs", name)
					}
					got, want := w.GreedySupernodes(x, d, ord.LengthScale, k, 8, 0, 1.5), s.GreedySupernodes(x, d, ord.LengthScale, k, 8, 0, 1.5)
					if !slices.Equal(got.MemberStart, want.MemberStart) || !slices.Equal(got.Members, want.Members) ||
						!slices.Equal(got.RowStart, want.RowStart) || !slices.Equal(got.Rows, want.Rows) {
						t.Errorf("%s: joint greedy supernodes with the ordering's tree differ", name)
					}
				}
			}
		}
	}
}

// The relabelled tree must be a well-formed tree of the positions: every position once, each
// slot's coordinates those of the point at its position, boxes tight and largest indices
// right (checkFlatTree).
func TestTreeRelabelledByPosition(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	for _, d := range []int{1, 2, 3} {
		for _, set := range testPointSets(3000, d) {
			name := fmt.Sprintf("d=%d/set=%s", d, set.name)
			ord, tree := Settings{Workers: 2}.ReverseMaximinTree(set.points, d, facePoints(rng, 5, d))
			x := permutePoints(set.points, d, ord.Order)
			r := tree.positions(x, d, 2)
			if !slices.Equal(slices.Sorted(slices.Values(r.index)), int32Range(len(ord.Order))) {
				t.Fatalf("%s: the relabelled tree does not hold every position once", name)
			}
			for s, p := range r.index {
				if !slices.Equal(r.coords[s*d:(s+1)*d], x[int(p)*d:int(p+1)*d]) {
					t.Fatalf("%s: slot %d holds other coordinates than position %d", name, s, p)
				}
			}
			checkFlatTree(t, name, r, r.index)
			if r2 := tree.positions(x, d, 2); r2 != r {
				t.Fatalf("%s: a second call relabelled again", name)
			}
		}
	}
}

func int32Range(n int) []int32 {
	out := make([]int32, n)
	for i := range out {
		out[i] = int32(i)
	}
	return out
}

// Points that are not the ordering's in position order must be refused, not searched: one
// coordinate nudged by one ulp, the input order instead of the position order, and the wrong
// count or dimension. Each call gets a fresh tree, as the check runs once per tree.
func TestWithTreeRefusesOtherPoints(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	points := uniformPoints(rng, 500, 2)
	cases := []struct {
		name string
		x    func(x []float64) []float64
		d    int
	}{
		{"nudged", func(x []float64) []float64 { x[137] = math.Nextafter(x[137], 2); return x }, 2},
		{"input order", func([]float64) []float64 { return slices.Clone(points) }, 2},
		{"fewer points", func(x []float64) []float64 { return x[:len(x)-2] }, 2},
		{"other dimension", func(x []float64) []float64 { return x }, 1},
	}
	for _, c := range cases {
		ord, tree := orderWithTree(points, 2)
		x := c.x(permutePoints(points, 2, ord.Order))
		func() {
			defer func() {
				r := recover()
				if s, ok := r.(string); !ok || !strings.HasPrefix(s, "ordering: WithTree: ") {
					t.Errorf("%s: recovered %v, want a WithTree panic", c.name, r)
				}
			}()
			Settings{}.WithTree(tree).NearestNeighbors(x, c.d, 5)
		}()
	}
	// Past one chunk of slots, on one and on two workers, the refusal names the same point, one
	// of those changed.
	big := uniformPoints(rng, 3*relabelChunk, 2)
	var messages []string
	for _, workers := range []int{1, 2} {
		s := Settings{Workers: workers}
		ord, tree := s.ReverseMaximinTree(big, 2, nil)
		x := permutePoints(big, 2, ord.Order)
		changed := []int{ord.Order[5], ord.Order[len(ord.Order)-9]}
		x[2*5] += 1e-3
		x[2*(len(ord.Order)-9)+1] -= 1e-3
		func() {
			defer func() {
				r, _ := recover().(string)
				if !strings.Contains(r, fmt.Sprintf("point %d ", changed[0])) && !strings.Contains(r, fmt.Sprintf("point %d ", changed[1])) {
					t.Errorf("workers=%d: recovered %q, want a refusal naming point %d or %d", workers, r, changed[0], changed[1])
				}
				messages = append(messages, r)
			}()
			s.WithTree(tree).Radius(x, 2, ord.LengthScale, 2)
		}()
	}
	if messages[0] != messages[1] {
		t.Errorf("the refusal depends on the worker count: %q and %q", messages[0], messages[1])
	}
	// The same tree keeps refusing after the first refusal.
	ord, tree := orderWithTree(points, 2)
	x := permutePoints(points, 2, ord.Order)
	x[0] += 1
	for range 2 {
		func() {
			defer func() {
				if recover() == nil {
					t.Error("a refused tree was searched on a later call")
				}
			}()
			Settings{}.WithTree(tree).Radius(x, 2, ord.LengthScale, 2)
		}()
	}
}

// orderWithTree is ReverseMaximinTree with the default settings and no boundary.
func orderWithTree(points []float64, d int) (Ordering, *Tree) {
	return Settings{}.ReverseMaximinTree(points, d, nil)
}

// Pattern builders on several goroutines may share one tree (run under -race in CI); the
// patterns must be the brute-force ones.
func TestTreeConcurrentUse(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 10))
	points := clusteredPoints(rng, 2000, 2)
	ord, tree := orderWithTree(points, 2)
	x := permutePoints(points, 2, ord.Order)
	want := bruteNearestPattern(x, 2, 6)
	got := make([]*Pattern, 4)
	var wg sync.WaitGroup
	for g := range got {
		wg.Go(func() { got[g] = Settings{Workers: 1}.WithTree(tree).NearestNeighbors(x, 2, 6) })
	}
	wg.Wait()
	for _, p := range got {
		comparePattern(t, p, want)
	}
}
