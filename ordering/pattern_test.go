package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// permutePoints returns the points in position order: position p holds input point order[p].
func permutePoints(points []float64, d int, order []int) []float64 {
	out := make([]float64, 0, len(points))
	for _, i := range order {
		out = append(out, points[i*d:(i+1)*d]...)
	}
	return out
}

// bruteRadiusPattern is the O(N²) definition of S_ρ (DESIGN.md §3; Schäfer, Katzfuss, Owhadi
// 2021): column j holds every i ≥ j with dist(xᵢ, xⱼ) ≤ ρ·ℓⱼ, all i ≥ j when ρ or ℓⱼ is +Inf.
func bruteRadiusPattern(points []float64, d int, lengthScale []float64, rho float64) [][]int32 {
	n := len(points) / d
	cols := make([][]int32, n)
	for j := range n {
		for i := j; i < n; i++ {
			if math.IsInf(rho, 1) || math.IsInf(lengthScale[j], 1) ||
				plainDistance(points[i*d:(i+1)*d], points[j*d:(j+1)*d]) <= rho*lengthScale[j] {
				cols[j] = append(cols[j], int32(i))
			}
		}
	}
	return cols
}

// bruteNearestPattern is the O(N² log N) definition of the nearest-neighbour pattern
// (DESIGN.md §3): j, then the m positions i > j nearest to xⱼ, ties by lower position.
func bruteNearestPattern(points []float64, d, m int) [][]int32 {
	n := len(points) / d
	cols := make([][]int32, n)
	for j := range n {
		near := bruteKNN(points, d, j+1, n, points[j*d:(j+1)*d], m, j+1)
		slices.Sort(near)
		cols[j] = append([]int32{int32(j)}, near...)
	}
	return cols
}

// checkPatternStructure asserts the Pattern contract: N+1 column starts from 0, rows strictly
// ascending, the diagonal first.
func checkPatternStructure(t testing.TB, p *Pattern, n int) {
	t.Helper()
	if p.N() != n || len(p.ColStart) != n+1 || p.ColStart[0] != 0 || p.NNZ() != len(p.Rows) {
		t.Fatalf("malformed pattern: N=%d, %d column starts, NNZ=%d, %d rows", p.N(), len(p.ColStart), p.NNZ(), len(p.Rows))
	}
	for j := range n {
		col := p.Col(j)
		if len(col) == 0 || col[0] != int32(j) {
			t.Fatalf("column %d = %v does not start with its diagonal", j, col)
		}
		for k := 1; k < len(col); k++ {
			if col[k] <= col[k-1] || int(col[k]) >= n {
				t.Fatalf("column %d = %v is not strictly ascending within [0, %d)", j, col, n)
			}
		}
	}
}

func comparePattern(t testing.TB, got *Pattern, want [][]int32) {
	t.Helper()
	checkPatternStructure(t, got, len(want))
	for j, w := range want {
		if g := got.Col(j); !slices.Equal(g, w) {
			t.Fatalf("column %d = %v, want %v (brute force)", j, head(g), head(w))
		}
	}
}

// orderedSets returns the test point sets permuted into reverse maximin position order, with
// and without a boundary, together with their length scales.
type orderedSet struct {
	name        string
	d           int
	points      []float64
	lengthScale []float64
}

func orderedSets(n, d int) []orderedSet {
	var out []orderedSet
	rng := rand.New(rand.NewPCG(1, 1))
	for _, set := range testPointSets(n, d) {
		for _, boundary := range [][]float64{nil, facePoints(rng, 10*d, d)} {
			o := ReverseMaximin(set.points, d, boundary)
			out = append(out, orderedSet{
				name:        fmt.Sprintf("%s/boundary=%v", set.name, boundary != nil),
				d:           d,
				points:      permutePoints(set.points, d, o.Order),
				lengthScale: o.LengthScale,
			})
		}
	}
	return out
}

func TestRadiusAgainstBruteForce(t *testing.T) {
	sizes := []int{0, 1, 2, 3, 100, 1000}
	if testing.Short() {
		sizes = []int{0, 1, 2, 3, 100, 300}
	}
	for _, kind := range searchKinds {
		for _, d := range []int{1, 2, 3} {
			for _, n := range sizes {
				for _, set := range orderedSets(n, d) {
					for _, rho := range []float64{0, 1, 2, 3, math.Inf(1)} {
						for _, workers := range []int{1, 2} {
							name := fmt.Sprintf("search=%v/d=%d/n=%d/set=%s/rho=%g/workers=%d", kind, d, n, set.name, rho, workers)
							t.Run(name, func(t *testing.T) {
								s := Settings{Workers: workers, search: kind}
								got := s.Radius(set.points, d, set.lengthScale, rho)
								comparePattern(t, got, bruteRadiusPattern(set.points, d, set.lengthScale, rho))
							})
						}
					}
				}
			}
		}
	}
}

func TestRadiusColumnBound(t *testing.T) {
	// DESIGN.md §3 (Schäfer, Katzfuss, Owhadi 2021): points at positions ≥ j are pairwise
	// ≥ ℓⱼ apart, so the balls of radius ℓⱼ/2 around those within ρℓⱼ of xⱼ are disjoint and
	// lie in the ball of radius (ρ+½)ℓⱼ: at most (2ρ+1)ᵈ of them (a volume count). Columns with
	// ℓⱼ = 0 (duplicates) are excluded: the argument needs ℓⱼ > 0.
	n := 3000
	if testing.Short() {
		n = 800
	}
	for _, d := range []int{1, 2, 3} {
		for _, set := range orderedSets(n, d) {
			for _, rho := range []float64{1, 2, 3} {
				t.Run(fmt.Sprintf("d=%d/n=%d/set=%s/rho=%g", d, n, set.name, rho), func(t *testing.T) {
					p := Radius(set.points, d, set.lengthScale, rho)
					bound := math.Pow(2*rho+1, float64(d))
					largest := 0
					for j := range n {
						l := set.lengthScale[j]
						if l > 0 && !math.IsInf(l, 1) {
							largest = max(largest, len(p.Col(j)))
							if float64(len(p.Col(j))) > bound {
								t.Errorf("column %d (ℓ = %v) has %d entries > (2ρ+1)^d = %v", j, l, len(p.Col(j)), bound)
							}
						}
					}
					if largest == 0 {
						t.Errorf("no column with finite positive ℓ checked")
					}
				})
			}
		}
	}
}

func TestNearestNeighborsAgainstBruteForce(t *testing.T) {
	sizes := []int{0, 1, 2, 3, 100, 1000}
	if testing.Short() {
		sizes = []int{0, 1, 2, 3, 100, 300}
	}
	for _, kind := range searchKinds {
		for _, d := range []int{1, 2, 3} {
			for _, n := range sizes {
				for _, set := range orderedSets(n, d) {
					if set.name[len(set.name)-4:] == "true" {
						continue // the nearest-neighbour pattern does not use ℓ; one ordering suffices
					}
					for _, m := range []int{0, 1, 5, 30} {
						for _, workers := range []int{1, 2} {
							name := fmt.Sprintf("search=%v/d=%d/n=%d/set=%s/m=%d/workers=%d", kind, d, n, set.name, m, workers)
							t.Run(name, func(t *testing.T) {
								s := Settings{Workers: workers, search: kind}
								got := s.NearestNeighbors(set.points, d, m)
								comparePattern(t, got, bruteNearestPattern(set.points, d, m))
							})
						}
					}
				}
			}
		}
	}
}

func TestPatternWorkerDeterminism(t *testing.T) {
	// Large enough to take the parallel path (patternSerialBelow columns) with many chunks.
	n := 2 * patternSerialBelow
	if testing.Short() {
		n = patternSerialBelow + 3*patternChunk/2
	}
	for _, d := range []int{2, 3} {
		for _, set := range orderedSets(n, d) {
			t.Run(fmt.Sprintf("d=%d/n=%d/set=%s", d, n, set.name), func(t *testing.T) {
				var radius, nearest []*Pattern
				for _, workers := range []int{1, 2, 7} {
					s := Settings{Workers: workers}
					radius = append(radius, s.Radius(set.points, d, set.lengthScale, 2))
					nearest = append(nearest, s.NearestNeighbors(set.points, d, 10))
				}
				for w := 1; w < len(radius); w++ {
					if !slices.Equal(radius[w].ColStart, radius[0].ColStart) || !slices.Equal(radius[w].Rows, radius[0].Rows) {
						t.Errorf("Radius differs between 1 worker and run %d", w)
					}
					if !slices.Equal(nearest[w].ColStart, nearest[0].ColStart) || !slices.Equal(nearest[w].Rows, nearest[0].Rows) {
						t.Errorf("NearestNeighbors differs between 1 worker and run %d", w)
					}
				}
				// And the parallel result is the right one, not merely a repeatable one (brute
				// force on one set per dimension, to keep the test fast).
				if set.name == "uniform/boundary=false" {
					comparePattern(t, radius[2], bruteRadiusPattern(set.points, d, set.lengthScale, 2))
					comparePattern(t, nearest[2], bruteNearestPattern(set.points, d, 10))
				}
			})
		}
	}
}

func TestPatternDuplicates(t *testing.T) {
	// Exact copies get ℓ = 0: their Radius column holds the copies at positions ≥ j (distance
	// 0 ≤ ρ·0), and must not crash.
	rng := rand.New(rand.NewPCG(1, 1))
	base := uniformPoints(rng, 100, 2)
	points := slices.Clone(base)
	for range 30 {
		i := rng.IntN(100)
		points = append(points, base[2*i:2*i+2]...)
	}
	o := ReverseMaximin(points, 2, nil)
	pos := permutePoints(points, 2, o.Order)
	for _, rho := range []float64{0, 2, math.Inf(1)} {
		t.Run(fmt.Sprintf("rho=%g", rho), func(t *testing.T) {
			comparePattern(t, Radius(pos, 2, o.LengthScale, rho), bruteRadiusPattern(pos, 2, o.LengthScale, rho))
		})
	}
	comparePattern(t, NearestNeighbors(pos, 2, 5), bruteNearestPattern(pos, 2, 5))
}

func TestPatternPanics(t *testing.T) {
	points := []float64{0, 1, 2}
	scales := []float64{1, 1, math.Inf(1)}
	for _, c := range []struct {
		name string
		call func()
	}{
		{"Radius/d=0", func() { Radius(points, 0, scales, 1) }},
		{"Radius/short lengthScale", func() { Radius(points, 1, scales[:2], 1) }},
		{"Radius/negative rho", func() { Radius(points, 1, scales, -1) }},
		{"Radius/NaN rho", func() { Radius(points, 1, scales, math.NaN()) }},
		{"Radius/NaN lengthScale", func() { Radius(points, 1, []float64{math.NaN(), 1, 1}, 1) }},
		{"Radius/negative Workers", func() { Settings{Workers: -1}.Radius(points, 1, scales, 1) }},
		{"NearestNeighbors/length not multiple of d", func() { NearestNeighbors(points, 2, 1) }},
		{"NearestNeighbors/negative m", func() { NearestNeighbors(points, 1, -1) }},
		{"Col/out of range", func() { NearestNeighbors(points, 1, 1).Col(3) }},
	} {
		t.Run(c.name, func(t *testing.T) {
			defer func() {
				if r := recover(); r == nil {
					t.Errorf("no panic")
				} else if s, ok := r.(string); !ok || s[:10] != "ordering: " {
					t.Errorf("panic %v lacks the package prefix", r)
				}
			}()
			c.call()
		})
	}
}

// spotCheck compares columns of p with the brute-force definition of one column, O(N) each.
func spotCheck(b *testing.B, p *Pattern, column func(j int) []int32, n int) {
	checkPatternStructure(b, p, n)
	for j := 0; j < n; j += n / 50 {
		if got, want := p.Col(j), column(j); !slices.Equal(got, want) {
			b.Fatalf("column %d = %v, want %v", j, got, want)
		}
	}
}

var benchSizes = []struct {
	name string
	n    int
}{{"1e4", 10000}, {"1e5", 100000}}

func BenchmarkRadius(b *testing.B) {
	const rho = 3
	for _, kind := range searchKinds {
		for _, size := range benchSizes {
			b.Run(fmt.Sprintf("search=%v/n=%s/rho=%d", kind, size.name, rho), func(b *testing.B) {
				raw := uniformPoints(rand.New(rand.NewPCG(1, 1)), size.n, 2)
				o := ReverseMaximin(raw, 2, nil)
				points := permutePoints(raw, 2, o.Order)
				s := Settings{search: kind}
				p := s.Radius(points, 2, o.LengthScale, rho)
				spotCheck(b, p, func(j int) []int32 {
					if math.IsInf(o.LengthScale[j], 1) {
						return bruteRadius(points, 2, j, size.n, points[2*j:2*j+2], math.Inf(1), j)
					}
					return bruteRadius(points, 2, j, size.n, points[2*j:2*j+2], rho*o.LengthScale[j], j)
				}, size.n)
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					s.Radius(points, 2, o.LengthScale, rho)
				}
				b.ReportMetric(float64(p.NNZ())/float64(size.n), "nnz/col")
			})
		}
	}
}

func BenchmarkNearestNeighbors(b *testing.B) {
	const m = 30
	for _, kind := range searchKinds {
		for _, size := range benchSizes {
			b.Run(fmt.Sprintf("search=%v/n=%s/m=%d", kind, size.name, m), func(b *testing.B) {
				raw := uniformPoints(rand.New(rand.NewPCG(1, 1)), size.n, 2)
				o := ReverseMaximin(raw, 2, nil)
				points := permutePoints(raw, 2, o.Order)
				s := Settings{search: kind}
				p := s.NearestNeighbors(points, 2, m)
				spotCheck(b, p, func(j int) []int32 {
					near := bruteKNN(points, 2, j+1, size.n, points[2*j:2*j+2], m, j+1)
					slices.Sort(near)
					return append([]int32{int32(j)}, near...)
				}, size.n)
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					s.NearestNeighbors(points, 2, m)
				}
			})
		}
	}
}
