package ordering

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// bruteReverseMaximin is the O(N²) definition of the reverse maximin ordering (DESIGN.md §2;
// Schäfer, Sullivan, Owhadi 2021), written plainly: keep every unpicked point's distance to
// the picked points ∪ boundary, pick the largest (ties by lowest input index), update all.
// Without a boundary the first pick is the point closest to the centroid (ties by lowest
// index) with ℓ = +Inf.
func bruteReverseMaximin(points []float64, d int, boundary []float64) Ordering {
	n := len(points) / d
	pt := func(i int) []float64 { return points[i*d : (i+1)*d] }
	dist := make([]float64, n)
	picked := make([]bool, n)
	var order []int
	var scales []float64
	pick := func(p int, scale float64) {
		picked[p] = true
		order = append(order, p)
		scales = append(scales, scale)
		for i := range n {
			if !picked[i] {
				dist[i] = min(dist[i], plainDistance(pt(i), pt(p)))
			}
		}
	}
	if len(boundary) > 0 {
		for i := range n {
			dist[i] = math.Inf(1)
			for b := 0; b < len(boundary)/d; b++ {
				dist[i] = min(dist[i], plainDistance(pt(i), boundary[b*d:(b+1)*d]))
			}
		}
	} else if n > 0 {
		centroid := make([]float64, d)
		for i := range n {
			for k := range d {
				centroid[k] += points[i*d+k]
			}
		}
		for k := range d {
			centroid[k] /= float64(n)
		}
		first := 0
		for i := range n {
			if plainDistance(pt(i), centroid) < plainDistance(pt(first), centroid) {
				first = i
			}
		}
		for i := range n {
			dist[i] = math.Inf(1)
		}
		pick(first, math.Inf(1))
	}
	for len(order) < n {
		best := -1
		for i := range n {
			if !picked[i] && (best < 0 || dist[i] > dist[best]) {
				best = i
			}
		}
		pick(best, dist[best])
	}
	slices.Reverse(order)
	slices.Reverse(scales)
	return Ordering{Order: order, LengthScale: scales}
}

// facePoints returns m points on the boundary of the unit cube [0,1]ᵈ: uniform points with one
// coordinate moved to 0 or 1.
func facePoints(rng *rand.Rand, m, d int) []float64 {
	p := uniformPoints(rng, m, d)
	for i := range m {
		p[i*d+rng.IntN(d)] = float64(rng.IntN(2))
	}
	return p
}

// checkOrderingInvariants asserts the properties every reverse maximin ordering has by
// definition: Order is a permutation, LengthScale is non-decreasing, and the coarsest point has
// ℓ = +Inf exactly when there is no boundary.
func checkOrderingInvariants(t testing.TB, name string, o Ordering, n int, hasBoundary bool) {
	t.Helper()
	if len(o.Order) != n || len(o.LengthScale) != n {
		t.Fatalf("%s: lengths %d, %d, want %d", name, len(o.Order), len(o.LengthScale), n)
	}
	seen := make([]bool, n)
	for _, i := range o.Order {
		if i < 0 || i >= n || seen[i] {
			t.Fatalf("%s: Order is not a permutation: %v", name, o.Order)
		}
		seen[i] = true
	}
	for p := 1; p < n; p++ {
		if o.LengthScale[p] < o.LengthScale[p-1] {
			t.Fatalf("%s: LengthScale decreases at position %d: %v < %v", name, p, o.LengthScale[p], o.LengthScale[p-1])
		}
	}
	if n > 0 && math.IsInf(o.LengthScale[n-1], 1) == hasBoundary {
		t.Errorf("%s: coarsest length scale %v with boundary=%v", name, o.LengthScale[n-1], hasBoundary)
	}
}

func TestReverseMaximinAgainstBruteForce(t *testing.T) {
	sizes := []int{0, 1, 2, 3, 100, 2000}
	if testing.Short() {
		sizes = []int{0, 1, 2, 3, 100, 400}
	}
	for _, kind := range searchKinds {
		for _, d := range []int{1, 2, 3} {
			for _, n := range sizes {
				for _, set := range testPointSets(n, d) {
					rng := rand.New(rand.NewPCG(1, 1))
					boundaries := map[string][]float64{"none": nil, "faces": facePoints(rng, 10*d, d)}
					if set.name == "lattice" {
						// A lattice boundary one step outside the lattice: exact ties.
						boundaries["faces"] = latticePoints(1, d)
						for k := range d {
							boundaries["faces"][k] = -1
						}
					}
					for _, bname := range []string{"none", "faces"} {
						boundary := boundaries[bname]
						name := fmt.Sprintf("search=%v/d=%d/n=%d/set=%s/boundary=%s", kind, d, n, set.name, bname)
						t.Run(name, func(t *testing.T) {
							got := Settings{search: kind}.ReverseMaximin(set.points, d, boundary)
							checkOrderingInvariants(t, "", got, n, boundary != nil)
							// Reference: the O(N²) definition above; exact equality, since both
							// use the same distance and the same tie rules.
							want := bruteReverseMaximin(set.points, d, boundary)
							if !slices.Equal(got.Order, want.Order) {
								t.Errorf("Order differs from brute force\n got %v\nwant %v", head(got.Order), head(want.Order))
							}
							if !slices.Equal(got.LengthScale, want.LengthScale) {
								t.Errorf("LengthScale differs from brute force\n got %v\nwant %v", head(got.LengthScale), head(want.LengthScale))
							}
						})
					}
				}
			}
		}
	}
}

func head[T any](s []T) []T { return s[:min(len(s), 12)] }

func TestReverseMaximinSmallByHand(t *testing.T) {
	// Worked by hand from the definition (DESIGN.md §2): points 0,1,2,3,4 on a line. The
	// centroid is 2, so input index 2 is picked first (ℓ = ∞); then 0 and 4 tie at distance 2
	// and 0 wins by lower index; then 4 (ℓ = 2); then 1 and 3 tie at distance 1, 1 first.
	// Picking order 2,0,4,1,3 reversed.
	got := ReverseMaximin([]float64{0, 1, 2, 3, 4}, 1, nil)
	wantOrder := []int{3, 1, 4, 0, 2}
	wantScale := []float64{1, 1, 2, 2, math.Inf(1)}
	if !slices.Equal(got.Order, wantOrder) || !slices.Equal(got.LengthScale, wantScale) {
		t.Errorf("got %v %v, want %v %v", got.Order, got.LengthScale, wantOrder, wantScale)
	}
	// With boundary {−1, 5} the farthest point is 2 (distance 3), then 0 and 4 at distance 1
	// from the boundary tie with 1 and 3 at distance 1 from point 2: lowest index 0 wins, and
	// everything else follows at ℓ = 1 in index order.
	got = ReverseMaximin([]float64{0, 1, 2, 3, 4}, 1, []float64{-1, 5})
	wantOrder = []int{4, 3, 1, 0, 2}
	wantScale = []float64{1, 1, 1, 1, 3}
	if !slices.Equal(got.Order, wantOrder) || !slices.Equal(got.LengthScale, wantScale) {
		t.Errorf("boundary: got %v %v, want %v %v", got.Order, got.LengthScale, wantOrder, wantScale)
	}
}

func TestReverseMaximinDuplicates(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for _, kind := range searchKinds {
		for _, d := range []int{1, 2, 3} {
			base := uniformPoints(rng, 200, d)
			// Append 60 exact copies of existing points (some copied several times).
			points := slices.Clone(base)
			for range 60 {
				i := rng.IntN(200)
				points = append(points, base[i*d:(i+1)*d]...)
			}
			// And a set of identical points only.
			same := make([]float64, 50*d)
			for i := range same {
				same[i] = 0.5
			}
			for _, set := range []pointSet{{"copies", d, points}, {"identical", d, same}} {
				for _, boundary := range [][]float64{nil, facePoints(rng, 5, d)} {
					name := fmt.Sprintf("search=%v/d=%d/set=%s/boundary=%v", kind, d, set.name, boundary != nil)
					n := len(set.points) / d
					got := Settings{search: kind}.ReverseMaximin(set.points, d, boundary)
					checkOrderingInvariants(t, name, got, n, boundary != nil)
					// Each extra copy of a point is picked after its first copy at distance 0:
					// exactly n − (number of distinct points) length scales are 0.
					distinct := map[string]bool{}
					for i := range n {
						distinct[fmt.Sprint(set.points[i*d:(i+1)*d])] = true
					}
					zeros := 0
					for _, l := range got.LengthScale {
						if l == 0 {
							zeros++
						}
					}
					if zeros != n-len(distinct) {
						t.Errorf("%s: %d zero length scales, want %d", name, zeros, n-len(distinct))
					}
					want := bruteReverseMaximin(set.points, d, boundary)
					if !slices.Equal(got.Order, want.Order) || !slices.Equal(got.LengthScale, want.LengthScale) {
						t.Errorf("%s: differs from brute force", name)
					}
				}
			}
		}
	}
}

func TestReverseMaximinEmptyBoundaryIsNone(t *testing.T) {
	points := latticePoints(30, 2)
	a := ReverseMaximin(points, 2, nil)
	b := ReverseMaximin(points, 2, []float64{})
	if !slices.Equal(a.Order, b.Order) || !slices.Equal(a.LengthScale, b.LengthScale) {
		t.Errorf("empty boundary differs from nil boundary")
	}
}

func TestReverseMaximinDoesNotModifyInput(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	points := uniformPoints(rng, 300, 2)
	boundary := facePoints(rng, 20, 2)
	p0, b0 := slices.Clone(points), slices.Clone(boundary)
	ReverseMaximin(points, 2, boundary)
	if !slices.Equal(points, p0) || !slices.Equal(boundary, b0) {
		t.Errorf("ReverseMaximin modified its input")
	}
}

func TestReverseMaximinPanics(t *testing.T) {
	for _, c := range []struct {
		name     string
		points   []float64
		d        int
		boundary []float64
	}{
		{"d=0", []float64{1, 2}, 0, nil},
		{"length not multiple of d", []float64{1, 2, 3}, 2, nil},
		{"boundary not multiple of d", []float64{1, 2}, 2, []float64{1}},
		{"NaN coordinate", []float64{1, math.NaN()}, 2, nil},
		{"Inf boundary", []float64{1, 2}, 2, []float64{math.Inf(1), 0}},
	} {
		t.Run(c.name, func(t *testing.T) {
			defer func() {
				if r := recover(); r == nil {
					t.Errorf("no panic")
				} else if s, ok := r.(string); !ok || s[:10] != "ordering: " {
					t.Errorf("panic %v lacks the package prefix", r)
				}
			}()
			ReverseMaximin(c.points, c.d, c.boundary)
		})
	}
}

func BenchmarkReverseMaximin(b *testing.B) {
	for _, kind := range searchKinds {
		for _, size := range []struct {
			name string
			n    int
		}{{"1e4", 10000}, {"1e5", 100000}} {
			b.Run(fmt.Sprintf("search=%v/n=%s", kind, size.name), func(b *testing.B) {
				rng := rand.New(rand.NewPCG(1, 1))
				points := uniformPoints(rng, size.n, 2)
				s := Settings{search: kind}
				// Sanity check before timing: the invariants, and brute force at n = 1e4.
				o := s.ReverseMaximin(points, 2, nil)
				checkOrderingInvariants(b, "", o, size.n, false)
				if size.n <= 10000 {
					want := bruteReverseMaximin(points, 2, nil)
					if !slices.Equal(o.Order, want.Order) || !slices.Equal(o.LengthScale, want.LengthScale) {
						b.Fatal("ordering differs from brute force")
					}
				}
				b.ReportAllocs()
				b.ResetTimer()
				for b.Loop() {
					s.ReverseMaximin(points, 2, nil)
				}
			})
		}
	}
	// The O(N²) baseline beside it.
	b.Run("search=brute/n=1e4", func(b *testing.B) {
		points := uniformPoints(rand.New(rand.NewPCG(1, 1)), 10000, 2)
		b.ReportAllocs()
		for b.Loop() {
			bruteReverseMaximin(points, 2, nil)
		}
	})
}

// The tournament's float32 boxes must hold the float64 boxes: float32Below(v) is the largest
// float32 ≤ v and float32Above(v) the smallest ≥ v (checked against math.Nextafter32, the
// IEEE 754 neighbour), for exact, rounded, negative, tiny and huge values.
func TestFloat32Rounding(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 6))
	values := []float64{0, 1, -1, 0.1, -0.1, 1e-40, -1e-40, 1e30, -1e30, math.MaxFloat32, 1.5, math.Pi}
	for range 1000 {
		values = append(values, rng.NormFloat64()*math.Pow(10, float64(rng.IntN(20)-10)))
	}
	for _, v := range values {
		lo, hi := float32Below(v), float32Above(v)
		if float64(lo) > v || float64(math.Nextafter32(lo, float32(math.Inf(1)))) <= v && float64(lo) != v {
			t.Errorf("float32Below(%v) = %v", v, lo)
		}
		if float64(hi) < v || float64(math.Nextafter32(hi, float32(math.Inf(-1)))) >= v && float64(hi) != v {
			t.Errorf("float32Above(%v) = %v", v, hi)
		}
	}
}
