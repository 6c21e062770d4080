package cholesky

// Dense references for the tests: gonum's mat.Cholesky is the reference implementation of the
// exact factorisation; everything here is written plainly, O(N²) or O(N³).

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

// denseKernelMatrix returns Θ (nugget included) for points in the given order.
func denseKernelMatrix(k kernels.Kernel, points []float64, d int) *mat.SymDense {
	n := len(points) / d
	theta := mat.NewSymDense(n, nil)
	nugget := kernels.NuggetOf(k)
	for i := range n {
		for j := 0; j <= i; j++ {
			v := k.Eval(points[i*d:(i+1)*d], points[j*d:(j+1)*d])
			if i == j {
				v += nugget
			}
			theta.SetSym(i, j, v)
		}
	}
	return theta
}

// denseCholesky factors theta with gonum, failing the test if it is not positive definite.
func denseCholesky(t testing.TB, theta *mat.SymDense) *mat.Cholesky {
	t.Helper()
	var c mat.Cholesky
	if !c.Factorize(theta) {
		t.Fatalf("gonum: the dense kernel matrix is not positive definite")
	}
	return &c
}

// denseL returns the factor in the user's order as a dense matrix, M = Π L Πᵀ.
func denseL(f *Factor) *mat.Dense {
	m := mat.NewDense(f.n, f.n, nil)
	for j := range f.n {
		rows, vals := f.col(j)
		for k, r := range rows {
			m.Set(f.order[r], f.order[j], vals[k])
		}
	}
	return m
}

// klDivergence returns KL(N(0,Θ) ‖ N(0,(LLᵀ)⁻¹)) from the dense Θ (user order) and its log det:
// 2·KL = tr(LᵀΘL) − N − log det Θ − 2 Σ log Lᵢᵢ (DESIGN.md §4; the Gaussian KL formula, e.g.
// Schäfer, Katzfuss, Owhadi 2021, eq. 2.3). It also returns tr(LᵀΘL).
func klDivergence(f *Factor, theta *mat.SymDense, logDetTheta float64) (kl, trace float64) {
	// tr(LᵀΘL) = Σ_j L_{:,j}ᵀ Θ L_{:,j}, using the sparse columns.
	for j := range f.n {
		rows, vals := f.col(j)
		for a, ra := range rows {
			ia := f.order[ra]
			var s float64
			for b, rb := range rows {
				s += theta.At(ia, f.order[rb]) * vals[b]
			}
			trace += vals[a] * s
		}
	}
	return 0.5 * (trace - float64(f.n) - logDetTheta + f.LogDet()), trace
}

// relativeError returns ‖a − b‖₂ / ‖b‖₂.
func relativeError(a, b []float64) float64 {
	var num, den float64
	for i := range a {
		num += (a[i] - b[i]) * (a[i] - b[i])
		den += b[i] * b[i]
	}
	return math.Sqrt(num / den)
}

// Point sets for the tests, deterministic from the seed.

func uniformPoints(n, d int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, seed))
	x := make([]float64, n*d)
	for i := range x {
		x[i] = rng.Float64()
	}
	return x
}

// clusteredPoints: 12 Gaussian blobs of widths 0.005–0.08 plus 10 % uniform background in the
// unit cube, clipped into it.
func clusteredPoints(n, d int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, seed))
	const blobs = 12
	centres := make([]float64, blobs*d)
	widths := make([]float64, blobs)
	for b := range blobs {
		for c := range d {
			centres[b*d+c] = 0.1 + 0.8*rng.Float64()
		}
		widths[b] = 0.005 * math.Pow(16, rng.Float64())
	}
	x := make([]float64, n*d)
	for i := range n {
		if rng.Float64() < 0.1 {
			for c := range d {
				x[i*d+c] = rng.Float64()
			}
			continue
		}
		b := rng.IntN(blobs)
		for c := range d {
			x[i*d+c] = min(1, max(0, centres[b*d+c]+widths[b]*rng.NormFloat64()))
		}
	}
	return x
}

// spherePoints: uniform on the unit sphere in ℝ³ (normalised standard normal vectors, a
// standard fact: the normal distribution is rotation invariant).
func spherePoints(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, seed))
	x := make([]float64, 3*n)
	for i := range n {
		var s float64
		for c := range 3 {
			x[3*i+c] = rng.NormFloat64()
			s += x[3*i+c] * x[3*i+c]
		}
		s = math.Sqrt(s)
		for c := range 3 {
			x[3*i+c] /= s
		}
	}
	return x
}
