package bench

import (
	"context"
	"errors"
	"fmt"
	"math"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// DenseReference is the exact kernel matrix Θ of a point set and its dense Cholesky
// factorisation by gonum, the reference every approximation is measured against.
type DenseReference struct {
	// Theta is Θ (nugget included) in the order of the points.
	Theta *mat.SymDense
	// Cholesky is gonum's factorisation Θ = UᵀU.
	Cholesky mat.Cholesky
	// LogDet is log det Θ.
	LogDet float64
	// FillTime is the time to compute Θ; FactorTime the time of gonum's Cholesky.Factorize.
	FillTime, FactorTime time.Duration
}

// ErrDenseNotPositiveDefinite is returned when gonum's dense Cholesky fails.
var ErrDenseNotPositiveDefinite = errors.New("bench: the dense kernel matrix is not numerically positive definite")

// NewDenseReference computes Θ for the points (flat, row-major, d per point) and kernel k with
// the exact matrix-free cholesky.KernelMatrix, and factors it with gonum's mat.Cholesky.
// It returns an error wrapping ErrDenseNotPositiveDefinite if gonum's factorisation fails, and
// ctx.Err() when cancelled. Cost O(N² d) to fill, O(N³/3) to factor, 16 N² bytes of memory.
func NewDenseReference(ctx context.Context, points []float64, d int, k kernels.Kernel, workers int) (*DenseReference, error) {
	n := len(points) / d
	ref := &DenseReference{Theta: mat.NewSymDense(n, nil)}
	start := time.Now()
	km := cholesky.NewKernelMatrix(points, d, k)
	raw := ref.Theta.RawSymmetric()
	// Fill the upper triangle row by row from the matrix-free operator's entries.
	for i := range n {
		if i%256 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		row := raw.Data[i*raw.Stride : i*raw.Stride+n]
		for j := i; j < n; j++ {
			row[j] = km.At(i, j)
		}
	}
	ref.FillTime = time.Since(start)
	start = time.Now()
	if !ref.Cholesky.Factorize(ref.Theta) {
		return nil, fmt.Errorf("%w (N = %d)", ErrDenseNotPositiveDefinite, n)
	}
	ref.FactorTime = time.Since(start)
	ref.LogDet = ref.Cholesky.LogDet()
	if c := ref.Cholesky.Cond(); !(c < maxDenseCondition) {
		return nil, fmt.Errorf("%w: condition estimate %.3g ≥ %.0e, dense solves are meaningless (N = %d)", ErrDenseNotPositiveDefinite, c, maxDenseCondition, n)
	}
	return ref, nil
}

// maxDenseCondition is the largest condition estimate of a usable dense reference: beyond
// about 1/ε ≈ 4.5·10¹⁵ a dense solve has no correct digits (a standard fact of floating-point
// linear algebra, e.g. Higham 2002, §7.1); we stop at 10¹⁴.
const maxDenseCondition = 1e14

// Solve returns Θ⁻¹ b by gonum's dense Cholesky solve. Cost O(N²).
func (r *DenseReference) Solve(b []float64) []float64 {
	var x mat.VecDense
	if err := r.Cholesky.SolveVecTo(&x, mat.NewVecDense(len(b), b)); err != nil {
		// gonum reports a condition number above 1/ε as mat.Condition, with the solution
		// computed; NewDenseReference refuses such matrices, so anything else is a bug.
		var cond mat.Condition
		if !errors.As(err, &cond) {
			panic("bench: " + err.Error())
		}
	}
	return x.RawVector().Data
}

// Mul returns Θ v (gonum's SymDense.MulVec). Cost O(N²).
func (r *DenseReference) Mul(v []float64) []float64 {
	var y mat.VecDense
	y.MulVec(r.Theta, mat.NewVecDense(len(v), v))
	return y.RawVector().Data
}

// RelativeError returns ‖a − b‖₂ / ‖b‖₂ (+Inf when b = 0 ≠ a, 0 when both are 0). It panics if
// the lengths differ.
func RelativeError(a, b []float64) float64 {
	if len(a) != len(b) {
		panic("bench: vectors of different lengths")
	}
	var num, den float64
	for i := range a {
		num += (a[i] - b[i]) * (a[i] - b[i])
		den += b[i] * b[i]
	}
	if num == 0 {
		return 0
	}
	return math.Sqrt(num / den)
}

// KLDivergence returns KL(N(0,Θ) ‖ N(0,Θ̃)) for the factor from the dense Θ, and
// tr(LᵀΘL), which is N at the KL-optimal factor: Factor.KLDivergence on ref.Theta.
// Cost O(Σⱼ nnzⱼ²).
func KLDivergence(f *cholesky.Factor, ref *DenseReference) (kl, trace float64) {
	return f.KLDivergence(ref.Theta, ref.LogDet)
}

// Normal returns n standard normal values from the seed (rand.NewPCG(seed, seed)).
func Normal(n int, seed uint64) []float64 {
	rng := newRand(seed)
	v := make([]float64, n)
	for i := range v {
		v[i] = rng.NormFloat64()
	}
	return v
}
