package bench

import (
	"math"

	"github.com/kchol/kchol/cholesky"
)

// Accuracy is how well a factor's Θ̃ matches the exact Θ of a dense reference.
type Accuracy struct {
	// KL is KL(N(0,Θ) ‖ N(0,Θ̃)); KLPerPoint is KL/N.
	KL         float64 `json:"kl"`
	KLPerPoint float64 `json:"kl_per_point"`
	// Trace is tr(MᵀΘM), N at the KL-optimal factor (a check of the factor, reported).
	Trace float64 `json:"trace"`
	// LogDetError is |log det Θ̃ − log det Θ| / |log det Θ|.
	LogDetError float64 `json:"logdet_rel_error"`
	// SolveError is ‖Θ̃⁻¹b − Θ⁻¹b‖/‖Θ⁻¹b‖ for a standard normal b.
	SolveError float64 `json:"solve_rel_error"`
	// MulError is ‖Θ̃v − Θv‖/‖Θv‖ for a standard normal v.
	MulError float64 `json:"mul_rel_error"`
}

// MeasureAccuracy compares the factor with the dense reference of the same points (in the
// same order). The right-hand side and the vector v are standard normal from seed and
// seed+1. Cost O(N² + Σⱼ nnzⱼ²).
func MeasureAccuracy(f *cholesky.Factor, ref *DenseReference, seed uint64) Accuracy {
	n := f.N()
	var a Accuracy
	a.KL, a.Trace = KLDivergence(f, ref)
	a.KLPerPoint = a.KL / float64(n)
	a.LogDetError = math.Abs(f.LogDet()-ref.LogDet) / math.Abs(ref.LogDet)
	b := Normal(n, seed)
	a.SolveError = RelativeError(f.SolveTo(nil, b), ref.Solve(b))
	v := Normal(n, seed+1)
	a.MulError = RelativeError(f.MulCovTo(nil, v), ref.Mul(v))
	return a
}

// FactorBytes returns the memory of the factor's storage, 12 bytes per nonzero (an int32 row
// index and a float64 value) plus the points and the per-point arrays, 8(d+3) bytes per
// point (as the cholesky package documentation states).
func FactorBytes(f *cholesky.Factor) int64 {
	return 12*int64(f.NNZ()) + 8*int64(f.Dim()+3)*int64(f.N())
}
