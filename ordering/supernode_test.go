package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// bruteAggregate follows DESIGN.md §3 literally with sets: walk the columns from the finest;
// an unassigned j opens J = {unassigned i in column j : ℓᵢ ≤ λ·ℓⱼ}; J's rows are the union of
// its members' columns.
func bruteAggregate(p *Pattern, lengthScale []float64, lambda float64) (members, rows [][]int32) {
	assigned := map[int32]bool{}
	for j := range p.N() {
		if assigned[int32(j)] {
			continue
		}
		var group []int32
		for _, i := range p.Col(j) {
			if !assigned[i] && lengthScale[i] <= lambda*lengthScale[j] {
				group = append(group, i)
				assigned[i] = true
			}
		}
		union := map[int32]bool{}
		for _, i := range group {
			for _, r := range p.Col(int(i)) {
				union[r] = true
			}
		}
		var u []int32
		for r := range union {
			u = append(u, r)
		}
		slices.Sort(u)
		slices.Sort(group)
		members, rows = append(members, group), append(rows, u)
	}
	return members, rows
}

func TestAggregateAgainstDefinition(t *testing.T) {
	for _, set := range orderedSets(600, 2) {
		for _, rho := range []float64{2, 3} {
			for _, lambda := range []float64{1, 1.5, 2} {
				t.Run(fmt.Sprintf("%s/rho=%g/lambda=%g", set.name, rho, lambda), func(t *testing.T) {
					pat := Radius(set.points, set.d, set.lengthScale, rho)
					sn := Aggregate(pat, set.lengthScale, lambda)
					var wantMembers, wantRows [][]int32
					if lambda <= 1 {
						for j := range pat.N() {
							wantMembers = append(wantMembers, []int32{int32(j)})
							wantRows = append(wantRows, pat.Col(j))
						}
					} else {
						wantMembers, wantRows = bruteAggregate(pat, set.lengthScale, lambda)
					}
					if sn.Len() != len(wantMembers) {
						t.Fatalf("%d supernodes, want %d", sn.Len(), len(wantMembers))
					}
					for s := range sn.Len() {
						if !slices.Equal(sn.MembersOf(s), wantMembers[s]) || !slices.Equal(sn.RowsOf(s), wantRows[s]) {
							t.Fatalf("supernode %d: members %v rows %v, want %v %v", s, sn.MembersOf(s), sn.RowsOf(s), wantMembers[s], wantRows[s])
						}
					}
					// The induced pattern contains the original one column by column.
					induced := sn.Pattern()
					for j := range pat.N() {
						for _, r := range pat.Col(j) {
							if _, ok := slices.BinarySearch(induced.Col(j), r); !ok {
								t.Fatalf("column %d lost row %d", j, r)
							}
						}
						if induced.Col(j)[0] != int32(j) {
							t.Fatalf("induced column %d does not start on its diagonal", j)
						}
					}
				})
			}
		}
	}
}

func TestAggregateInfiniteLengthScale(t *testing.T) {
	// The coarsest point has ℓ = +Inf; λ·∞ = ∞ must not capture finite columns wrongly, and the
	// column must still form a supernode.
	points := []float64{0, 0, 1, 0, 0, 1, 1, 1, 0.5, 0.5}
	ord := ReverseMaximin(points, 2, nil)
	if !math.IsInf(ord.LengthScale[len(ord.LengthScale)-1], 1) {
		t.Fatal("expected +Inf for the coarsest point")
	}
	pat := Radius(permutePoints(points, 2, ord.Order), 2, ord.LengthScale, 2)
	sn := Aggregate(pat, ord.LengthScale, 1.5)
	seen := make([]bool, len(ord.Order))
	for s := range sn.Len() {
		for _, j := range sn.MembersOf(s) {
			if seen[j] {
				t.Fatalf("column %d in two supernodes", j)
			}
			seen[j] = true
		}
	}
	for j, ok := range seen {
		if !ok {
			t.Fatalf("column %d in no supernode", j)
		}
	}
}

func TestAggregateSameForAnyWorkerCount(t *testing.T) {
	// Row sets are built in parallel; the result must not depend on the worker count.
	set := orderedSets(6000, 2)[0]
	pat := NearestNeighbors(set.points, set.d, 20)
	ref := Settings{Workers: 1}.Aggregate(pat, set.lengthScale, 1.5)
	for _, workers := range []int{2, 7} {
		got := Settings{Workers: workers}.Aggregate(pat, set.lengthScale, 1.5)
		if !slices.Equal(got.MemberStart, ref.MemberStart) || !slices.Equal(got.Members, ref.Members) ||
			!slices.Equal(got.RowStart, ref.RowStart) || !slices.Equal(got.Rows, ref.Rows) {
			t.Fatalf("workers=%d: supernodes differ from one worker's", workers)
		}
	}
	if ref.Len() >= pat.N() {
		t.Fatalf("%d supernodes for %d columns: nothing aggregated", ref.Len(), pat.N())
	}
}

// unionSorted against the plain definition (every row of every list, once, ascending) for
// 0 to 20 lists, so both the head-scanning merge (≤ unionMergeMost lists) and the sort are
// covered; the lists overlap heavily, as members' columns do.
func TestUnionSorted(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	for k := range 21 {
		for range 20 {
			lists := make([][]int32, k)
			seen := map[int32]bool{}
			for i := range lists {
				for r := range int32(60) {
					if rng.IntN(3) == 0 {
						lists[i] = append(lists[i], r)
						seen[r] = true
					}
				}
			}
			var want []int32
			for r := range int32(60) {
				if seen[r] {
					want = append(want, r)
				}
			}
			prefix := []int32{-5, -4}
			got := unionSorted(slices.Clone(prefix), slices.Clone(lists))
			if !slices.Equal(got[:2], prefix) || !slices.Equal(got[2:], want) {
				t.Fatalf("%d lists: got %v, want %v after %v", k, got, want, prefix)
			}
		}
	}
}

// aggregateMembers reads no row length scales when they do not decrease with position; both
// of its paths must give bruteAggregate's members (DESIGN.md §3): the maximin ordering's
// length scales (sorted), the same rounded to one significant digit (sorted, with many ties,
// so the bound stops exactly at equal values), random ones (not sorted: the plain path), and
// the maximin ones with a NaN first.
func TestAggregateMembersBothPaths(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	for _, set := range orderedSets(600, 2) {
		pat := Radius(set.points, set.d, set.lengthScale, 3)
		rounded := make([]float64, len(set.lengthScale))
		random := make([]float64, len(set.lengthScale))
		for i, l := range set.lengthScale {
			if math.IsInf(l, 1) {
				rounded[i] = l
			} else {
				e := math.Pow(10, math.Floor(math.Log10(l)))
				rounded[i] = math.Round(l/e) * e
			}
			random[i] = rng.Float64()
		}
		// NaN compares false, so it must send the pass down the plain path, although
		// slices.IsSorted calls this slice sorted (NaN sorts first there).
		withNaN := append([]float64{math.NaN()}, set.lengthScale[1:]...)
		for _, c := range []struct {
			name        string
			lengthScale []float64
			isSorted    bool // what slices.IsSorted says, to check the case is the one meant
		}{{"maximin", set.lengthScale, true}, {"rounded", rounded, true}, {"random", random, false}, {"nan first", withNaN, true}} {
			if slices.IsSorted(c.lengthScale) != c.isSorted {
				t.Fatalf("%s/%s: slices.IsSorted = %v, want %v", set.name, c.name, !c.isSorted, c.isSorted)
			}
			for _, lambda := range []float64{1.5, 3} {
				want, _ := bruteAggregate(pat, c.lengthScale, lambda)
				start, members := aggregateMembers(pat, c.lengthScale, lambda)
				if len(start)-1 != len(want) {
					t.Fatalf("%s/%s/lambda=%g: %d supernodes, want %d", set.name, c.name, lambda, len(start)-1, len(want))
				}
				for s := range want {
					got := slices.Sorted(slices.Values(members[start[s]:start[s+1]]))
					if !slices.Equal(got, want[s]) {
						t.Fatalf("%s/%s/lambda=%g: supernode %d has %v, want %v", set.name, c.name, lambda, s, got, want[s])
					}
				}
			}
		}
	}
}
