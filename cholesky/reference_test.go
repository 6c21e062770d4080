package cholesky

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// bruteMaximin is the reverse maximin ordering written plainly in O(N²) (DESIGN.md §2): first
// the point closest to the centroid, then repeatedly the point farthest from those picked,
// ties by lowest input index; positions are the reverse of the picking order.
func bruteMaximin(points []float64, d int) ordering.Ordering {
	n := len(points) / d
	centroid := make([]float64, d)
	for i := range n {
		for c := range d {
			centroid[c] += points[i*d+c] / float64(n)
		}
	}
	dist := func(i int, y []float64) float64 {
		var s float64
		for c := range d {
			t := points[i*d+c] - y[c]
			s += t * t
		}
		return math.Sqrt(s)
	}
	first := 0
	for i := range n {
		if dist(i, centroid) < dist(first, centroid) {
			first = i
		}
	}
	toPicked := make([]float64, n)
	picked := make([]bool, n)
	for i := range toPicked {
		toPicked[i] = math.Inf(1)
	}
	var order []int
	var scale []float64
	next := first
	for range n {
		order = append(order, next)
		scale = append(scale, toPicked[next])
		picked[next] = true
		for i := range n {
			toPicked[i] = min(toPicked[i], dist(i, points[next*d:(next+1)*d]))
		}
		next = -1
		for i := range n {
			if !picked[i] && (next < 0 || toPicked[i] > toPicked[next]) {
				next = i
			}
		}
	}
	slices.Reverse(order)
	slices.Reverse(scale)
	return ordering.Ordering{Order: order, LengthScale: scale}
}

// brutePattern returns, per column j (in positions), its rows: all i ≥ j within ρ·ℓⱼ when
// rho > 0, else j and its m nearest points at positions > j (ties by lower position).
func brutePattern(permuted []float64, d int, scale []float64, rho float64, m int) [][]int32 {
	n := len(permuted) / d
	dist := func(a, b int) float64 {
		var s float64
		for c := range d {
			t := permuted[a*d+c] - permuted[b*d+c]
			s += t * t
		}
		return math.Sqrt(s)
	}
	cols := make([][]int32, n)
	for j := range n {
		rows := []int32{int32(j)}
		if rho > 0 {
			for i := j + 1; i < n; i++ {
				if dist(i, j) <= rho*scale[j] {
					rows = append(rows, int32(i))
				}
			}
		} else {
			var cand []int32
			for i := j + 1; i < n; i++ {
				cand = append(cand, int32(i))
			}
			slices.SortStableFunc(cand, func(a, b int32) int {
				da, db := dist(int(a), j), dist(int(b), j)
				switch {
				case da < db:
					return -1
				case da > db:
					return 1
				}
				return int(a - b)
			})
			rows = append(rows, cand[:min(m, len(cand))]...)
			slices.Sort(rows)
		}
		cols[j] = rows
	}
	return cols
}

// bruteColumn is the closed form L_{s,j} = Θ_{s,s}⁻¹e₁ / √(e₁ᵀΘ_{s,s}⁻¹e₁) with j first in s
// (Schäfer, Katzfuss, Owhadi 2021, Theorem 2.1), solved with gonum's dense Cholesky.
// It also returns gonum's condition estimate of Θ_{s,s}.
func bruteColumn(t *testing.T, k kernels.Kernel, permuted []float64, d int, rows []int32) ([]float64, float64) {
	m := len(rows)
	a := mat.NewSymDense(m, nil)
	nugget := kernels.NuggetOf(k)
	for x := range m {
		for y := 0; y <= x; y++ {
			v := k.Eval(permuted[int(rows[x])*d:int(rows[x])*d+d], permuted[int(rows[y])*d:int(rows[y])*d+d])
			if x == y {
				v += nugget
			}
			a.SetSym(x, y, v)
		}
	}
	var c mat.Cholesky
	if !c.Factorize(a) {
		t.Fatalf("gonum: local block of %d rows is not positive definite", m)
	}
	e1 := mat.NewVecDense(m, nil)
	e1.SetVec(0, 1)
	var v mat.VecDense
	if err := c.SolveVecTo(&v, e1); err != nil {
		t.Fatal(err)
	}
	out := v.RawVector().Data
	s := math.Sqrt(out[0])
	for i := range out {
		out[i] /= s
	}
	return out, c.Cond()
}

func TestAgainstBruteForceReference(t *testing.T) {
	// The fast ordering, pattern and factor against the plain O(N²) ordering and pattern and
	// the dense per-column closed form, column by column. The two compute the same column by
	// different Cholesky orders, so they differ by rounding of order cond(Θ_{s,s})·ε
	// (Higham 2002, §10.1); clustered points make local blocks ill-conditioned. We assert
	// relative 1e-10, or condFactor·cond·ε where that is larger.
	const (
		tolerance  = 1e-10
		condFactor = 10.0
	)
	n := 1500
	if testing.Short() {
		n = 500
	}
	sets := []struct {
		name   string
		d      int
		points []float64
	}{
		{"uniform2d", 2, uniformPoints(n, 2, 21)},
		{"clustered2d", 2, clusteredPoints(n, 2, 22)},
		{"sphere3d", 3, spherePoints(n, 23)},
	}
	for _, set := range sets {
		ref := bruteMaximin(set.points, set.d)
		permuted := make([]float64, len(set.points))
		for p, i := range ref.Order {
			copy(permuted[p*set.d:(p+1)*set.d], set.points[i*set.d:(i+1)*set.d])
		}
		// Lambda 1: no aggregation, so the columns are exactly the brute-force pattern's.
		for _, pat := range []Settings{{Rho: 2, Lambda: 1}, {Rho: 3, Lambda: 1}, {Neighbors: 10, Lambda: 1}, {Neighbors: 30, Lambda: 1}} {
			cols := brutePattern(permuted, set.d, ref.LengthScale, pat.Rho, pat.Neighbors)
			for _, family := range allFamilies {
				// A length scale of a few point spacings; the Gaussian kernel gets a nugget
				// to keep its local blocks numerically positive definite.
				lengthScale, nugget := 0.05, 0.0
				if family == kernels.Gaussian {
					nugget = 1e-8
				}
				name := fmt.Sprintf("%s/n=%d/rho=%g/m=%d/%v/l=%g/nugget=%g", set.name, n, pat.Rho, pat.Neighbors, family, lengthScale, nugget)
				t.Run(name, func(t *testing.T) {
					k := kernels.Stationary{Family: family, Dimension: set.d, LengthScale: lengthScale, Nugget: nugget}
					s := pat
					f, err := New(context.Background(), set.points, set.d, k, &s)
					if err != nil {
						t.Fatal(err)
					}
					if !slices.Equal(f.order, ref.Order) || !slices.Equal(f.lengthScale, ref.LengthScale) {
						t.Fatal("ordering differs from the brute-force maximin")
					}
					worst, condScaled := 0.0, 0
					for j := range n {
						rows, vals := f.col(j)
						if !slices.Equal(rows, cols[j]) {
							t.Fatalf("column %d: rows %v, brute force %v", j, rows, cols[j])
						}
						want, cond := bruteColumn(t, k, permuted, set.d, cols[j])
						e := relativeError(vals, want)
						tol := tolerance
						if c := condFactor * cond * 0x1p-52; c > tol {
							tol = c
							condScaled++
						}
						worst = max(worst, e/tol)
						if e > tol {
							t.Fatalf("column %d (%d rows): relative error %.3g, bound %.3g (local cond %.3g)", j, len(rows), e, tol, cond)
						}
					}
					t.Logf("nnz/N = %.1f, worst error/bound %.3g, columns with a cond-scaled bound: %d of %d", float64(f.NNZ())/float64(n), worst, condScaled, n)
				})
			}
		}
	}
}
