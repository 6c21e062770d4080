package cholesky

import "gonum.org/v1/gonum/mat"

// KLDivergence returns KL(N(0,Θ) ‖ N(0,Θ̃)) for the exact kernel matrix theta (in the user's
// point order) and its log-determinant, from
//
//	2·KL = tr(LᵀΘL) − N − log det Θ + log det Θ̃
//
// (the KL divergence of two centred Gaussians; Schäfer, Katzfuss, Owhadi 2021, §2; DESIGN.md
// §4). It also returns tr(LᵀΘL), which is N at the KL-optimal factor, as a check. It reads
// Σⱼ mⱼ² entries of theta for columns of mⱼ rows, so it suits a dense theta (the accuracy
// tables use gonum's mat.SymDense up to N ≈ 10⁴) or any mat.Symmetric with cheap At.
// It panics if theta is not N×N.
func (f *Factor) KLDivergence(theta mat.Symmetric, logDetTheta float64) (kl, trace float64) {
	if theta.SymmetricDim() != f.n {
		panic("cholesky: the kernel matrix is not N×N")
	}
	var users []int
	for j := range f.n {
		rows, vals := f.col(j)
		users = users[:0]
		for _, r := range rows {
			users = append(users, f.order[r])
		}
		for a, ia := range users {
			var s float64
			for b, ib := range users {
				s += theta.At(ia, ib) * vals[b]
			}
			trace += vals[a] * s
		}
	}
	return 0.5 * (trace - float64(f.n) - logDetTheta + f.LogDet()), trace
}
