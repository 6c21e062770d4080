package ordering

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

// Point sets for the greedy tests, in input order; fixed seeds. They mirror the bench sets
// (uniform square, Gaussian blobs with background, uniform sphere) without importing bench,
// which imports this package through cholesky.
type greedyPointSet struct {
	name   string
	d      int
	points []float64
}

func greedyPointSets(n int) []greedyPointSet {
	rng := rand.New(rand.NewPCG(1, 1))
	uniform := make([]float64, 2*n)
	for i := range uniform {
		uniform[i] = rng.Float64()
	}
	// Clustered: 8 blobs of standard deviation 0.005–0.05 plus 10 % uniform background.
	clustered := make([]float64, 2*n)
	var centres [16]float64
	var widths [8]float64
	for b := range widths {
		centres[2*b], centres[2*b+1] = 0.1+0.8*rng.Float64(), 0.1+0.8*rng.Float64()
		widths[b] = 0.005 * math.Pow(10, rng.Float64())
	}
	for i := range n {
		if i < n/10 {
			clustered[2*i], clustered[2*i+1] = rng.Float64(), rng.Float64()
			continue
		}
		b := rng.IntN(len(widths))
		clustered[2*i] = centres[2*b] + widths[b]*rng.NormFloat64()
		clustered[2*i+1] = centres[2*b+1] + widths[b]*rng.NormFloat64()
	}
	// Sphere: normalised standard normal vectors are uniform on S² (rotation invariance of the
	// standard normal distribution, a standard fact).
	sphere := make([]float64, 3*n)
	for i := range n {
		p := sphere[3*i : 3*i+3]
		p[0], p[1], p[2] = rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
		r := math.Sqrt(p[0]*p[0] + p[1]*p[1] + p[2]*p[2])
		p[0], p[1], p[2] = p[0]/r, p[1]/r, p[2]/r
	}
	return []greedyPointSet{{"uniform2d", 2, uniform}, {"clustered2d", 2, clustered}, {"sphere3d", 3, sphere}}
}

// greedyPositionOrder returns the points permuted into reverse maximin positions.
func greedyPositionOrder(points []float64, d int) []float64 {
	ord := ReverseMaximin(points, d, nil)
	out := make([]float64, 0, len(points))
	for _, i := range ord.Order {
		out = append(out, points[i*d:(i+1)*d]...)
	}
	return out
}

// greedyTheta returns Θ[a, b] from k.Eval plus the nugget on a == b: the plain definition,
// independent of the block-filling code Greedy uses.
func greedyTheta(k kernels.Kernel, points []float64, d int, a, b int32) float64 {
	v := k.Eval(points[int(a)*d:int(a+1)*d], points[int(b)*d:int(b+1)*d])
	if a == b {
		v += kernels.NuggetOf(k)
	}
	return v
}

// denseConditionalVariance returns Var(y_target | y_set) = Θ_tt − Θ_tS Θ_SS⁻¹ Θ_St, the
// Gaussian conditioning formula (Rasmussen & Williams 2006, eq. A.6), from gonum's dense
// Cholesky factorisation of Θ_SS. ok is false if Θ_SS is not numerically positive definite.
func denseConditionalVariance(k kernels.Kernel, points []float64, d int, target int32, set []int32) (v float64, ok bool) {
	v = greedyTheta(k, points, d, target, target)
	if len(set) == 0 {
		return v, true
	}
	s := len(set)
	a := mat.NewSymDense(s, nil)
	b := mat.NewVecDense(s, nil)
	for p, i := range set {
		b.SetVec(p, greedyTheta(k, points, d, i, target))
		for q := range p + 1 {
			a.SetSym(p, q, greedyTheta(k, points, d, i, set[q]))
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(a) {
		return 0, false
	}
	var sol mat.VecDense
	if err := chol.SolveVecTo(&sol, b); err != nil {
		return 0, false
	}
	return v - mat.Dot(b, &sol), true
}

// bruteCandidates returns the c positions i > j nearest to point j, ties by lower position,
// sorted ascending: the O(N log N) definition.
func bruteCandidates(points []float64, d, j, c int) []int32 {
	n := len(points) / d
	type near struct {
		dist  float64
		index int32
	}
	var all []near
	xj := points[j*d : (j+1)*d]
	for i := j + 1; i < n; i++ {
		var s float64
		for k := range d {
			t := points[i*d+k] - xj[k]
			s += t * t
		}
		all = append(all, near{math.Sqrt(s), int32(i)})
	}
	slices.SortFunc(all, func(a, b near) int {
		if c := cmp.Compare(a.dist, b.dist); c != 0 {
			return c
		}
		return cmp.Compare(a.index, b.index)
	})
	var out []int32
	for _, a := range all[:min(c, len(all))] {
		out = append(out, a.index)
	}
	slices.Sort(out)
	return out
}

// greedyMaxSetSize is the largest brute-force step the tests take; it keeps the dense
// recomputation (one Cholesky per candidate per step) affordable.
const greedyMaxSetSize = 20

func TestGreedyEqualsBruteForce(t *testing.T) {
	// Reference: the definition of greedy selection with every score recomputed from scratch.
	// At each step, for every candidate i not yet chosen, Var(yᵢ | S) is computed by a dense
	// solve (skip i if it is ≤ 10⁻¹² Θᵢᵢ, the documented rule), then Var(yⱼ | S ∪ {i}) by a
	// fresh dense Cholesky of Θ_{S∪i, S∪i}; the brute-force pick minimises the latter, ties by
	// lower position. The comparison walks Greedy's own picks: at each step Greedy's pick must
	// be the brute-force pick, or tie with it to tieTolerance (then both paths are correct
	// greedy runs and the walk continues on Greedy's). Near ties are counted and logged.
	const tieTolerance = 1e-10 // relative to Var(yⱼ | S): rounding in the two score formulas
	n := 800
	columns := 80
	if testing.Short() {
		n, columns = 400, 30
	}
	type kernelCase struct {
		family kernels.Family
		nugget float64
	}
	kernelCases := []kernelCase{{kernels.Matern12, 0}, {kernels.Matern32, 0}, {kernels.Gaussian, 1e-6}}
	for _, set := range greedyPointSets(n) {
		x := greedyPositionOrder(set.points, set.d)
		for _, kc := range kernelCases {
			for _, mc := range [][2]int{{5, 0}, {10, 0}, {10, 15}} {
				m, c := mc[0], mc[1]
				name := fmt.Sprintf("%s/n=%d/%v/l=0.1/nugget=%g/m=%d/c=%d", set.name, n, kc.family, kc.nugget, m, c)
				t.Run(name, func(t *testing.T) {
					k := kernels.Stationary{Family: kc.family, Dimension: set.d, LengthScale: 0.1, Nugget: kc.nugget}
					cc := c
					if cc == 0 {
						cc = DefaultCandidatesPerNeighbor * m
					}
					trees := newSuffixTrees(searchFlat, x, set.d, n, 1, nil)
					sel := greedySelector{points: x, d: set.d, n: n, kernel: k, m: m, c: cc, trees: trees, prior: priorVariances(x, k, n, m)}
					var w greedyWork
					nearTies := 0
					// Columns spread over all positions, the last few (fewer candidates) included.
					for q := range columns {
						j := q * (n - 1) / (columns - 1)
						rows, _ := sel.column(nil, j, &w)
						picks := slices.Clone(w.picked)
						cand := bruteCandidates(x, set.d, j, cc)
						if got := sortedClone(w.cols[1:]); !slices.Equal(got, cand) {
							t.Fatalf("column %d: candidates %v, brute force %v", j, got, cand)
						}
						var chosen []int32
						for step := 0; step <= len(picks); step++ {
							base, _ := denseConditionalVariance(k, x, set.d, int32(j), chosen)
							best, bestVar := int32(-1), math.Inf(1)
							fastVar := math.NaN()
							for _, i := range cand {
								if slices.Contains(chosen, i) {
									continue
								}
								vi, ok := denseConditionalVariance(k, x, set.d, i, chosen)
								if !ok || !(vi > greedyNegligibleVariance*greedyTheta(k, x, set.d, i, i)) {
									continue
								}
								vj, ok := denseConditionalVariance(k, x, set.d, int32(j), append(chosen, i))
								if !ok {
									t.Fatalf("column %d: dense block not positive definite", j)
								}
								if vj < bestVar {
									best, bestVar = i, vj
								}
								if step < len(picks) && i == picks[step] {
									fastVar = vj
								}
							}
							if step == len(picks) {
								// Greedy stopped: at m picks, or with no eligible candidate left.
								if len(picks) < m && best >= 0 {
									t.Fatalf("column %d: Greedy stopped after %d picks, brute force still has candidate %d", j, len(picks), best)
								}
								break
							}
							if best < 0 {
								t.Fatalf("column %d step %d: Greedy picked %d, brute force finds no eligible candidate", j, step, picks[step])
							}
							if picks[step] != best {
								if math.IsNaN(fastVar) || math.Abs(fastVar-bestVar) > tieTolerance*base {
									t.Fatalf("column %d step %d: Greedy picked %d (Var %.17g), brute force %d (Var %.17g)", j, step, picks[step], fastVar, best, bestVar)
								}
								nearTies++
							}
							chosen = append(chosen, picks[step])
						}
						want := append([]int32{int32(j)}, sortedClone(picks)...)
						if !slices.Equal(rows, want) {
							t.Fatalf("column %d: rows %v, want j and the picks sorted %v", j, rows, want)
						}
						if wantLen := min(m, len(cand)); len(picks) != wantLen {
							t.Errorf("column %d: %d picks, want %d (no candidate should be negligible here)", j, len(picks), wantLen)
						}
					}
					t.Logf("%d columns, %d near ties", columns, nearTies)
				})
			}
		}
	}
}

func sortedClone(s []int32) []int32 {
	out := slices.Clone(s)
	slices.Sort(out)
	return out
}

func TestGreedyConditionalVarianceMatchesDense(t *testing.T) {
	// Reference: Var(yⱼ | S) for Greedy's chosen set S, recomputed from a fresh dense Cholesky
	// of Θ_SS (gonum), against the value Greedy's rank-one downdates end with. The difference is
	// rounding in two different orders of the same elimination; tolerance relative to Θⱼⱼ.
	const tolerance = 1e-10
	n := 1500
	if testing.Short() {
		n = 500
	}
	for _, set := range greedyPointSets(n) {
		x := greedyPositionOrder(set.points, set.d)
		for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32, kernels.Matern52} {
			for _, m := range []int{1, 5, 20, 30} {
				name := fmt.Sprintf("%s/n=%d/%v/l=0.1/m=%d/c=%d", set.name, n, family, m, 4*m)
				t.Run(name, func(t *testing.T) {
					k := kernels.Stationary{Family: family, Dimension: set.d, LengthScale: 0.1}
					trees := newSuffixTrees(searchFlat, x, set.d, n, 1, nil)
					sel := greedySelector{points: x, d: set.d, n: n, kernel: k, m: m, c: 4 * m, trees: trees, prior: priorVariances(x, k, n, m)}
					var w greedyWork
					worst := 0.0
					for j := 0; j < n; j += 7 {
						rows, got := sel.column(nil, j, &w)
						want, ok := denseConditionalVariance(k, x, set.d, int32(j), rows[1:])
						if !ok {
							t.Fatalf("column %d: dense block not positive definite", j)
						}
						theta := greedyTheta(k, x, set.d, int32(j), int32(j))
						if e := math.Abs(got-want) / theta; e > tolerance {
							t.Fatalf("column %d: Var(yⱼ | S) = %.17g, dense %.17g", j, got, want)
						} else {
							worst = max(worst, e)
						}
						if !(got > 0 && got <= theta) {
							t.Fatalf("column %d: Var(yⱼ | S) = %g outside (0, Θⱼⱼ = %g]", j, got, theta)
						}
					}
					t.Logf("largest |error| / Θⱼⱼ = %.2g", worst)
				})
			}
		}
	}
}

func TestGreedyWithAllCandidatesIsNearestNeighbors(t *testing.T) {
	// Property: with c = m every candidate is picked (none is negligible on distinct points
	// with a Matérn kernel), so the pattern is NearestNeighbors', which pattern_test.go checks
	// against brute force.
	for _, set := range greedyPointSets(1200) {
		x := greedyPositionOrder(set.points, set.d)
		for _, m := range []int{1, 4, 10} {
			t.Run(fmt.Sprintf("%s/n=1200/matern32/m=%d/c=%d", set.name, m, m), func(t *testing.T) {
				k := kernels.Stationary{Family: kernels.Matern32, Dimension: set.d, LengthScale: 0.1}
				got := Greedy(x, set.d, k, m, m)
				want := NearestNeighbors(x, set.d, m)
				if !slices.Equal(got.ColStart, want.ColStart) || !slices.Equal(got.Rows, want.Rows) {
					t.Fatal("Greedy with c = m differs from NearestNeighbors")
				}
			})
		}
	}
}

func TestGreedyNestedInM(t *testing.T) {
	// Property of the definition: with the same c candidates, the first m picks of a run to
	// m+δ are the picks of the run to m, so column j for m is a subset of column j for m+δ.
	x := greedyPositionOrder(greedyPointSets(1500)[1].points, 2)
	k := kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.1}
	const c = 40
	prev := Greedy(x, 2, k, 0, c)
	for _, m := range []int{1, 2, 5, 10, 20, 40} {
		t.Run(fmt.Sprintf("clustered2d/n=1500/matern12/m=%d/c=%d", m, c), func(t *testing.T) {
			p := Greedy(x, 2, k, m, c)
			checkGreedyStructure(t, p, 1500, m)
			for j := range 1500 {
				for _, r := range prev.Col(j) {
					if _, found := slices.BinarySearch(p.Col(j), r); !found {
						t.Fatalf("column %d: row %d of the smaller m missing at m = %d", j, r, m)
					}
				}
			}
			prev = p
		})
	}
}

// checkGreedyStructure asserts the Pattern contract and the column sizes: j first, rows
// strictly ascending and > j, min(m, N−1−j) rows besides j (no negligible candidate on
// distinct points).
func checkGreedyStructure(t *testing.T, p *Pattern, n, m int) {
	t.Helper()
	if p.N() != n || p.ColStart[0] != 0 || p.NNZ() != len(p.Rows) {
		t.Fatalf("malformed pattern: N = %d, NNZ = %d, %d rows", p.N(), p.NNZ(), len(p.Rows))
	}
	for j := range n {
		col := p.Col(j)
		if col[0] != int32(j) {
			t.Fatalf("column %d = %v does not start with j", j, col)
		}
		for a := 1; a < len(col); a++ {
			if col[a] <= col[a-1] || int(col[a]) >= n {
				t.Fatalf("column %d = %v not strictly ascending within [j, N)", j, col)
			}
		}
		if want := 1 + min(m, n-1-j); len(col) != want {
			t.Fatalf("column %d has %d rows, want %d", j, len(col), want)
		}
	}
}

func TestGreedySmallSizes(t *testing.T) {
	// Sizes 1, 2, 3 and m ≥ N: every column takes all coarser points (the candidates are all
	// of them and none is negligible), the full lower triangle.
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 1, LengthScale: 1}
	for _, n := range []int{0, 1, 2, 3} {
		for _, m := range []int{0, 1, 2, 5} {
			t.Run(fmt.Sprintf("n=%d/m=%d/c=0", n, m), func(t *testing.T) {
				x := make([]float64, n)
				for i := range x {
					x[i] = float64(i) * 0.3
				}
				p := Greedy(x, 1, k, m, 0)
				checkGreedyStructure(t, p, n, m)
			})
		}
	}
}

func TestGreedyWorkersGiveIdenticalBits(t *testing.T) {
	// Property (DESIGN.md §4, STYLE.md 7): the pattern does not depend on the worker count or
	// on the neighbour searcher (both searchers are exact).
	n := 3000
	if testing.Short() {
		n = 1500
	}
	for _, set := range greedyPointSets(n) {
		x := greedyPositionOrder(set.points, set.d)
		k := kernels.Stationary{Family: kernels.Matern32, Dimension: set.d, LengthScale: 0.05}
		want := Settings{Workers: 1}.Greedy(x, set.d, k, 10, 0)
		for _, s := range []Settings{{Workers: 2}, {Workers: 3}, {Workers: 8}, {Workers: 2, search: searchKyroy}} {
			t.Run(fmt.Sprintf("%s/n=%d/matern32/m=10/c=40/workers=%d/search=%v", set.name, n, s.Workers, s.search), func(t *testing.T) {
				got := s.Greedy(x, set.d, k, 10, 0)
				if !slices.Equal(got.ColStart, want.ColStart) || !slices.Equal(got.Rows, want.Rows) {
					t.Fatal("pattern differs from the one-worker flat-tree pattern")
				}
			})
		}
	}
}

func TestGreedySkipsExplainedCandidates(t *testing.T) {
	// Two coarser points coincide and the kernel has no nugget: once one is chosen, the other
	// has Var(yᵢ | S) = 0 exactly in exact arithmetic (yᵢ is the chosen variable), so it must
	// not be picked, or the column's local block would be singular. Points on a line in
	// position order: the target 0 at 0, then 0.5, 0.5 (the duplicate pair), 1.2, 2.0.
	x := []float64{0, 0.5, 0.5, 1.2, 2.0}
	k := kernels.Stationary{Family: kernels.Matern12, Dimension: 1, LengthScale: 1}
	p := Greedy(x, 1, k, 4, 4)
	// Column 0: 1 and 2 tie for the first pick and the lower position, 1, wins; then 2 is
	// explained (its conditional variance is exactly 0: Θ₂₁ = Θ₁₁) and skipped; 3 and 4 follow.
	if col := p.Col(0); !slices.Equal(col, []int32{0, 1, 3, 4}) {
		t.Fatalf("column 0 = %v, want [0 1 3 4]", col)
	}
	// Column 1: its duplicate 2 is the first pick (prior variance 1, not negligible) and
	// explains y₁ completely; the remaining scores are 0 and 3, 4 are still eligible.
	if col := p.Col(1); !slices.Equal(col, []int32{1, 2, 3, 4}) {
		t.Fatalf("column 1 = %v, want [1 2 3 4]", col)
	}
}

func TestGreedyColumnAllocatesNothing(t *testing.T) {
	// STYLE.md 6: after the workspace is sized, a column allocates nothing.
	x := greedyPositionOrder(greedyPointSets(2000)[0].points, 2)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	trees := newSuffixTrees(searchFlat, x, 2, 2000, 1, nil)
	sel := greedySelector{points: x, d: 2, n: 2000, kernel: k, m: 20, c: 80, trees: trees, prior: priorVariances(x, k, 2000, 20)}
	var w greedyWork
	dst := make([]int32, 0, 64)
	for j := range 2000 {
		dst, _ = sel.column(dst[:0], j, &w)
	}
	j := 0
	allocs := testing.AllocsPerRun(200, func() {
		dst, _ = sel.column(dst[:0], j, &w)
		j = (j + 13) % 2000
	})
	if allocs != 0 {
		t.Fatalf("a column allocates %v times", allocs)
	}
}

func TestGreedyPanics(t *testing.T) {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.1}
	x := []float64{0, 0, 1, 1, 2, 0}
	cases := []struct {
		name string
		run  func()
	}{
		{"m<0", func() { Greedy(x, 2, k, -1, 0) }},
		{"c<0", func() { Greedy(x, 2, k, 2, -1) }},
		{"c<m", func() { Greedy(x, 2, k, 3, 2) }},
		{"nil kernel", func() { Greedy(x, 2, nil, 2, 0) }},
		{"kernel dimension", func() { Greedy(x[:3], 3, k, 2, 0) }},
		{"ragged points", func() { Greedy(x[:5], 2, k, 2, 0) }},
		{"workers<0", func() { Settings{Workers: -1}.Greedy(x, 2, k, 2, 0) }},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				if r := recover(); r == nil {
					t.Fatal("no panic")
				} else if s, ok := r.(string); !ok || len(s) < 9 || s[:9] != "ordering:" {
					t.Fatalf("panic %v lacks the package prefix", r)
				}
			}()
			tc.run()
		})
	}
}
