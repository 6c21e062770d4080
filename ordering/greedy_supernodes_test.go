package ordering

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"testing"

	"github.com/kchol/kchol/kernels"
)

// bruteObjective returns Σ_{k ∈ J} log Var(y_k | y_{(J ∪ S), >k}), each conditional variance
// from scratch by the Gaussian conditioning formula with gonum (denseConditionalVariance).
// ok is false if a block is not numerically positive definite.
func bruteObjective(k kernels.Kernel, points []float64, d int, members, set []int32) (float64, bool) {
	var total float64
	for _, j := range members {
		var cond []int32
		for _, r := range slices.Concat(members, set) {
			if r > j {
				cond = append(cond, r)
			}
		}
		v, ok := denseConditionalVariance(k, points, d, j, cond)
		if !ok || !(v > 0) {
			return 0, false
		}
		total += math.Log(v)
	}
	return total, true
}

func TestGreedySupernodesEqualsBruteForce(t *testing.T) {
	// Every pick against a brute force that recomputes the objective Σ_k log Var(y_k | rows > k)
	// from scratch for every candidate p; a pick may differ only in a near tie (1e-10
	// relative).
	const tieTolerance = 1e-10
	for _, set := range greedyPointSets(700) {
		points := greedyPositionOrder(set.points, set.d)
		ord := ReverseMaximin(points, set.d, nil) // positions of an already ordered set: identity
		if !slices.Equal(ord.Order, slices.Sorted(slices.Values(ord.Order))) {
			t.Fatal("reordering the ordered points is not the identity")
		}
		for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32} {
			for _, mc := range [][2]int{{4, 12}, {8, 24}} {
				m, c := mc[0], mc[1]
				name := fmt.Sprintf("%s/%v/m=%d/c=%d", set.name, family, m, c)
				t.Run(name, func(t *testing.T) {
					k := kernels.Stationary{Family: family, Dimension: set.d, LengthScale: 0.2}
					sn := Settings{Workers: 2}.GreedySupernodes(points, set.d, ord.LengthScale, k, m, c, 1.5)
					n := len(points) / set.d
					if sn.Len() >= n {
						t.Fatalf("%d supernodes for %d columns: nothing aggregated", sn.Len(), n)
					}
					ties, checked := 0, 0
					for s := 0; s < sn.Len(); s += 7 { // every seventh supernode
						members := sn.MembersOf(s)
						// Candidates: the c nearest to the first member among the positions
						// above it that are not members.
						var cand []int32
						for i := members[0] + 1; int(i) < n; i++ {
							if !slices.Contains(members, i) {
								cand = append(cand, i)
							}
						}
						dist := func(i int32) float64 {
							return squaredDistance(points[int(i)*set.d:int(i+1)*set.d], points[int(members[0])*set.d:int(members[0]+1)*set.d])
						}
						slices.SortStableFunc(cand, func(a, b int32) int { return cmp.Or(cmp.Compare(dist(a), dist(b)), cmp.Compare(a, b)) })
						cand = cand[:min(c, len(cand))]
						var chosen []int32
						for range min(m, len(cand)) {
							best, bestValue := int32(-1), math.Inf(1)
							for _, p := range cand {
								if slices.Contains(chosen, p) {
									continue
								}
								v, ok := bruteObjective(k, points, set.d, members, append(slices.Clone(chosen), p))
								if ok && (v < bestValue || (v == bestValue && p < best)) {
									best, bestValue = p, v
								}
							}
							chosen = append(chosen, best)
						}
						want := slices.Sorted(slices.Values(append(slices.Clone(members), chosen...)))
						got := sn.RowsOf(s)
						checked++
						if slices.Equal(got, want) {
							continue
						}
						// Accept a different set only if it is as good to the tie tolerance.
						var gotSet []int32
						for _, r := range got {
							if !slices.Contains(members, r) {
								gotSet = append(gotSet, r)
							}
						}
						gv, ok1 := bruteObjective(k, points, set.d, members, gotSet)
						wv, ok2 := bruteObjective(k, points, set.d, members, chosen)
						if !ok1 || !ok2 || math.Abs(gv-wv) > tieTolerance*math.Max(1, math.Abs(wv)) {
							t.Fatalf("supernode %d (members %v): rows %v, brute force %v (log det %v vs %v)", s, members, got, want, gv, wv)
						}
						ties++
					}
					t.Logf("%d supernodes checked, %d resolved as near ties", checked, ties)
				})
			}
		}
	}
}

func TestGreedySupernodesStructure(t *testing.T) {
	for _, set := range greedyPointSets(3000)[:2] {
		points := greedyPositionOrder(set.points, set.d)
		ord := ReverseMaximin(points, set.d, nil)
		k := kernels.Stationary{Family: kernels.Matern32, Dimension: set.d, LengthScale: 0.1}
		const m = 10
		ref := Settings{Workers: 1}.GreedySupernodes(points, set.d, ord.LengthScale, k, m, 0, 1.5)
		n := len(points) / set.d
		seen := make([]bool, n)
		for s := range ref.Len() {
			members, rows := ref.MembersOf(s), ref.RowsOf(s)
			if !slices.IsSorted(rows) || len(rows) > len(members)+m {
				t.Fatalf("supernode %d: rows %v for %d members", s, rows, len(members))
			}
			for _, j := range members {
				if seen[j] {
					t.Fatalf("column %d in two supernodes", j)
				}
				seen[j] = true
				if _, ok := slices.BinarySearch(rows, j); !ok {
					t.Fatalf("supernode %d lacks its member %d", s, j)
				}
			}
		}
		if slices.Contains(seen, false) {
			t.Fatal("a column is in no supernode")
		}
		// The same bits for any worker count.
		for _, workers := range []int{2, 7} {
			got := Settings{Workers: workers}.GreedySupernodes(points, set.d, ord.LengthScale, k, m, 0, 1.5)
			if !slices.Equal(got.Rows, ref.Rows) || !slices.Equal(got.RowStart, ref.RowStart) || !slices.Equal(got.Members, ref.Members) {
				t.Fatalf("%s: workers=%d differ", set.name, workers)
			}
		}
		// λ ≤ 1: single columns, and the same sets as the per-column Greedy (same score up to
		// a monotone transformation).
		single := Settings{}.GreedySupernodes(points, set.d, ord.LengthScale, k, m, 0, 1)
		perColumn := Greedy(points, set.d, k, m, 0)
		differ := 0
		for j := range n {
			if !slices.Equal(single.RowsOf(j), perColumn.Col(j)) {
				differ++
			}
		}
		if differ > n/100 {
			t.Errorf("%s: %d of %d single-column sets differ from Greedy's", set.name, differ, n)
		}
		t.Logf("%s: %d supernodes, %d of %d single-column sets differ from Greedy's (near ties)", set.name, ref.Len(), differ, n)
	}
}
