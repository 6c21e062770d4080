package bench

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Nyström baseline: Θ ≈ Θ_r = F Fᵀ + σ² I with F = Θ_{:,I} C⁻ᵀ, Θ_{I,I} = C Cᵀ, for r
// inducing points I (C. K. I. Williams, M. Seeger, Using the Nyström method to speed up kernel
// machines, NIPS 2001; Rasmussen & Williams 2006, §8.3.1 for the low-rank-plus-noise form).

// NystromNuggets are the nuggets σ² (relative to the mean diagonal of Θ) tried by the Nyström
// baseline; the one with the lowest KL divergence is reported, which favours the baseline.
var NystromNuggets = []float64{1e-8, 1e-6, 1e-4, 1e-3, 1e-2, 1e-1}

// NystromAccuracy is the accuracy of one rank-r Nyström approximation.
type NystromAccuracy struct {
	Rank int `json:"rank"`
	// Nugget is the σ² (absolute) with the lowest KL, chosen from NystromNuggets.
	Nugget float64 `json:"nugget"`
	Accuracy
}

// Nystrom precomputes, for nested inducing sets (the first r entries of inducing, for every
// r ≤ len(inducing)), what the KL divergence and the solves of Θ_r need: W = Θ_{I,:} Θ Θ_{:,I}
// and Z = Θ_{I,:} Θ_{:,I}, for the largest I. Cost O(N² R) time, O(N R) memory for R inducing
// points.
type Nystrom struct {
	ref      *DenseReference
	inducing []int
	// k is Θ_{:,I} (N×R); z = kᵀk and w = kᵀΘk (R×R).
	k, z, w    *mat.Dense
	traceTheta float64
}

// NewNystrom prepares the baseline for the inducing points (indices into the points of ref,
// distinct). It panics on an empty or out-of-range index list.
func NewNystrom(ref *DenseReference, inducing []int) *Nystrom {
	n := ref.Theta.SymmetricDim()
	r := len(inducing)
	if r == 0 || r > n {
		panic("bench: Nyström needs between 1 and N inducing points")
	}
	k := mat.NewDense(n, r, nil)
	for c, i := range inducing {
		for a := range n {
			k.Set(a, c, ref.Theta.At(a, i))
		}
	}
	var tk mat.Dense
	tk.Mul(ref.Theta, k)
	w := mat.NewDense(r, r, nil)
	w.Mul(k.T(), &tk)
	z := mat.NewDense(r, r, nil)
	z.Mul(k.T(), k)
	var trace float64
	for i := range n {
		trace += ref.Theta.At(i, i)
	}
	return &Nystrom{ref: ref, inducing: inducing, k: k, z: z, w: w, traceTheta: trace}
}

// errNystromRank reports an inducing block that is not numerically positive definite.
var errNystromRank = errors.New("bench: the Nyström inducing block is not positive definite")

// Measure returns the accuracy of the rank-r approximation (the first r inducing points) at
// the best nugget of NystromNuggets (scaled by the mean diagonal of Θ). With
// G = FᵀF and H = FᵀΘF (r×r),
//
//	Θ_r⁻¹ = σ⁻²(I − F (σ²I + G)⁻¹ Fᵀ)          (Woodbury identity)
//	tr(Θ_r⁻¹Θ) = σ⁻²(tr Θ − tr((σ²I + G)⁻¹ H))
//	log det Θ_r = N log σ² + log det(I + G/σ²)  (matrix determinant lemma)
//
// Cost O(r³ + N r) per nugget plus O(N r) for the solves.
func (ny *Nystrom) Measure(r int, seed uint64) (NystromAccuracy, error) {
	n := ny.ref.Theta.SymmetricDim()
	if r < 1 || r > len(ny.inducing) {
		panic("bench: Nyström rank out of range")
	}
	// C = chol(Θ_{I,I}) on the first r inducing points.
	c := mat.NewSymDense(r, nil)
	for a := range r {
		for b := a; b < r; b++ {
			c.SetSym(a, b, ny.k.At(ny.inducing[a], b))
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(c) {
		return NystromAccuracy{}, errNystromRank
	}
	var lower mat.TriDense
	chol.LTo(&lower)
	// G = C⁻¹ Z C⁻ᵀ, H = C⁻¹ W C⁻ᵀ (the leading r×r blocks).
	g := congruence(&lower, ny.z.Slice(0, r, 0, r))
	h := congruence(&lower, ny.w.Slice(0, r, 0, r))
	scale := ny.traceTheta / float64(n)
	best := NystromAccuracy{Rank: r}
	best.KL = math.Inf(1)
	for _, rel := range NystromNuggets {
		s2 := rel * scale
		m := mat.NewSymDense(r, nil)
		for a := range r {
			for b := a; b < r; b++ {
				v := g.At(a, b)
				if a == b {
					v += s2
				}
				m.SetSym(a, b, v)
			}
		}
		var mc mat.Cholesky
		if !mc.Factorize(m) {
			continue
		}
		var mh mat.Dense
		if err := mc.SolveTo(&mh, h); err != nil {
			continue
		}
		trace := (ny.traceTheta - mat.Trace(&mh)) / s2
		// log det(σ²I + G) = r log σ² + log det(I + G/σ²).
		logDet := float64(n-r)*math.Log(s2) + mc.LogDet()
		kl := 0.5 * (trace - float64(n) + logDet - ny.ref.LogDet)
		if kl < best.KL {
			best.Nugget, best.KL, best.Trace = s2, kl, trace
			best.LogDetError = math.Abs(logDet-ny.ref.LogDet) / math.Abs(ny.ref.LogDet)
		}
	}
	if math.IsInf(best.KL, 1) {
		return NystromAccuracy{}, errNystromRank
	}
	best.KLPerPoint = best.KL / float64(n)
	// F = Θ_{:,I} C⁻ᵀ, N×r.
	f := mat.DenseCopyOf(ny.k.Slice(0, n, 0, r))
	blas64.Trsm(blas.Right, blas.Trans, 1, lowerGeneral(&lower), f.RawMatrix())
	b := Normal(n, seed)
	best.SolveError = RelativeError(nystromSolve(f, best.Nugget, b), ny.ref.Solve(b))
	v := Normal(n, seed+1)
	var fv, ffv mat.VecDense
	fv.MulVec(f.T(), mat.NewVecDense(n, v))
	ffv.MulVec(f, &fv)
	approx := ffv.RawVector().Data
	for i := range approx {
		approx[i] += best.Nugget * v[i]
	}
	best.MulError = RelativeError(approx, ny.ref.Mul(v))
	return best, nil
}

// nystromSolve returns (F Fᵀ + σ²I)⁻¹ b by the Woodbury identity. Cost O(N r + r³).
func nystromSolve(f *mat.Dense, s2 float64, b []float64) []float64 {
	n, r := f.Dims()
	var g mat.Dense
	g.Mul(f.T(), f)
	for a := range r {
		g.Set(a, a, g.At(a, a)+s2)
	}
	var ftb, y mat.VecDense
	ftb.MulVec(f.T(), mat.NewVecDense(n, b))
	if err := y.SolveVec(&g, &ftb); err != nil {
		panic("bench: " + err.Error())
	}
	var fy mat.VecDense
	fy.MulVec(f, &y)
	x := make([]float64, n)
	for i := range x {
		x[i] = (b[i] - fy.AtVec(i)) / s2
	}
	return x
}

// congruence returns C⁻¹ A C⁻ᵀ for lower-triangular C and symmetric A (as a symmetric matrix).
func congruence(c *mat.TriDense, a mat.Matrix) *mat.SymDense {
	r, _ := a.Dims()
	t := mat.DenseCopyOf(a)
	lg := lowerGeneral(c)
	blas64.Trsm(blas.Left, blas.NoTrans, 1, lg, t.RawMatrix())
	blas64.Trsm(blas.Right, blas.Trans, 1, lg, t.RawMatrix())
	out := mat.NewSymDense(r, nil)
	for i := range r {
		for j := i; j < r; j++ {
			out.SetSym(i, j, 0.5*(t.At(i, j)+t.At(j, i)))
		}
	}
	return out
}

func lowerGeneral(c *mat.TriDense) blas64.Triangular {
	raw := c.RawTriangular()
	return blas64.Triangular{Uplo: blas.Lower, Diag: blas.NonUnit, N: raw.N, Stride: raw.Stride, Data: raw.Data}
}
