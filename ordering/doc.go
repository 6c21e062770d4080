// Package ordering computes the reverse maximin ordering of a point set and the sparsity
// patterns of the sparse inverse Cholesky factor built on it: the radius pattern
// S_ρ = {(i, j) : i ≥ j, dist(xᵢ, xⱼ) ≤ ρ·ℓⱼ}, the nearest-neighbour pattern, and the greedy
// pattern (Greedy), which chooses each column's rows among its nearest coarser points by the
// conditional variance they remove and so needs the kernel. Aggregate groups columns into
// supernodes that share one row set.
//
// Points are one flat row-major []float64 with dimension d. Every distance in the package is
// the Euclidean distance computed as √(Σₖ (aₖ − bₖ)²), summed in coordinate order, so that
// results are exact and reproducible: ties are broken by index, never by rounding luck.
//
// The methods follow F. Schäfer, T. J. Sullivan, H. Owhadi, Compression, inversion, and
// approximate PCA of dense kernel matrices at near-linear computational complexity, Multiscale
// Model. Simul. 19(2), 2021, and F. Schäfer, M. Katzfuss, H. Owhadi, Sparse Cholesky
// factorization by Kullback–Leibler minimization, SIAM J. Sci. Comput. 43(3), 2021; the greedy
// pattern that of J. Huan, J. Guinness, M. Katzfuss, H. Owhadi, F. Schäfer, Sparse Cholesky
// factorization by greedy conditional selection, 2023.
package ordering
