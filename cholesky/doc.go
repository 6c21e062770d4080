// Package cholesky computes the Kullback–Leibler-optimal sparse inverse Cholesky factor of a
// dense kernel matrix and uses it to solve, take log-determinants and sample.
//
// # Overview
//
// Θ is the N×N kernel (covariance) matrix Θᵢⱼ = k(xᵢ, xⱼ) of N points. New orders the points
// coarse-to-fine by reverse maximin (package ordering), chooses a sparsity pattern (by default
// each point and its m nearest coarser points; optionally the radius pattern S_ρ), and computes
// the lower-triangular L on that pattern that minimises KL(N(0,Θ) ‖ N(0,(LLᵀ)⁻¹)). In closed
// form, column j is L_{s,j} = Θ_{s,s}⁻¹e₁ / √(e₁ᵀΘ_{s,s}⁻¹e₁) for its row set s, which is the
// Vecchia approximation. Then
//
//	Θ̃⁻¹ = L Lᵀ ≈ Θ⁻¹,   log det Θ̃ = −2 Σ log Lⱼⱼ,   Θ̃ = L⁻ᵀ L⁻¹,   samples L⁻ᵀ z,
//
// each at O(nnz) cost. The method is that of F. Schäfer, M. Katzfuss and H. Owhadi, Sparse
// Cholesky factorization by Kullback–Leibler minimization, SIAM J. Sci. Comput. 43(3), 2021,
// building on A. V. Vecchia, J. R. Stat. Soc. B 50, 1988, and the maximin ordering of
// F. Schäfer, T. J. Sullivan and H. Owhadi, Multiscale Model. Simul. 19(2), 2021.
//
// Every method takes and returns vectors in the user's point order; internally L lives in
// the positions of the ordering, and in the user's order the factor is M = Π L Πᵀ.
//
// # Storage
//
// L is stored by compressed columns: for column j (a position), the row positions
// rows[colStart[j]:colStart[j+1]] ascend and start with j itself, and the values sit beside
// them. Row indices are int32, so N < 2³¹; column starts are int64. The factor also keeps the
// points (in position order), the kernel and the ordering, so that exact operators need nothing
// else. Memory is 12 bytes per nonzero plus about 8(d+3) bytes per point.
//
// # Concurrency
//
// Columns are independent. New computes them on Settings.Workers goroutines (default
// GOMAXPROCS) with golang.org/x/sync/errgroup; each worker owns a workspace sized once for the
// largest column, computes whole columns and writes only their values, so the result is the
// same bits for any number of workers (a test checks 1, 2 and 7). Below 512 points New runs
// on one goroutine. The context is checked between tasks of 64 columns. A finished Factor is
// read-only and safe for concurrent use.
//
// # Accuracy
//
// The factor is an approximation. Its error is measured by KL(N(0,Θ) ‖ N(0,Θ̃)), which is
// zero for the full pattern (ρ = +Inf) and, by construction, never increases when the pattern
// grows. At the KL-optimal factor tr(LᵀΘL) = N, so log det Θ̃ − log det Θ = 2·KL: the
// log-determinant is accurate when KL is small compared with N. Solves with Θ̃⁻¹ are much
// less accurate than the log-determinant, and the radius pattern is much worse at this than
// the nearest-neighbour pattern. Measured on 2000 uniform points in the unit square with
// Matérn 3/2, length scale 0.1 (the package's KL test): with m = 30 neighbours (31 nonzeros
// per column) KL/N = 7.9·10⁻⁴, the log-determinant's relative error 3.6·10⁻⁴ and the relative
// solve error 0.13 % for a random right-hand side and 1.3 % for one drawn from the process;
// with S_ρ at ρ = 3 (9 per column) KL/N = 0.15, log det error 7 %, and solve errors of 85 % and
// more at every ρ up to 8 (likely the effect DESIGN.md §3 describes: points with a very close
// coarser neighbour get tiny row sets; not isolated here). Users who need Θ⁻¹b itself should
// use the factor as a preconditioner for an iterative solve with the exact Θ. Check the accuracy on your own data (with a dense reference on a subset) before
// relying on it.
//
// Two points that coincide make Θ singular: New returns an error naming them unless the
// kernel has a nugget. A local block that is not numerically positive definite is retried with
// a diagonal jitter of 10⁻¹², 10⁻¹⁰ and then 10⁻⁸ times its largest diagonal entry; Jittered
// counts such columns, and New fails naming the point if even the last jitter does not help.
package cholesky
