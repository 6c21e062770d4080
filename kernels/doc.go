// Package kernels provides covariance functions (kernels) and fills blocks of their Gram
// matrices Θᵢⱼ = k(xᵢ, xⱼ) + nugget·δᵢⱼ.
//
// A Kernel needs only Dim and Eval. Filling a matrix entry by entry through an interface call
// is several times slower than an inlined loop, so kernels that can also implement
// BlockFiller, and the package functions FillBlock and FillLower use it when present.
//
// Stationary covers the Matérn family at ν = 1/2, 3/2, 5/2 and the Gaussian
// (squared-exponential) kernel in the forms of C. E. Rasmussen and C. K. I. Williams,
// Gaussian Processes for Machine Learning, MIT Press, 2006, eq. 4.9 and 4.14–4.17.
package kernels
