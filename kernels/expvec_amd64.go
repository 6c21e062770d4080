//go:build amd64 && !purego

package kernels

// haveSSE2Rows: SSE2 is part of every amd64 processor. Build with -tags purego for the
// portable Go code only.
const haveSSE2Rows = true

// expNegativePairs sets dst[i] = e^(−src[i]) for i < 2·pairs, bit for bit as
// expNegativeScalar, for src[i] in [0, 708]; other entries get unspecified values (the
// caller recomputes them). Implemented in expvec_amd64.s.
//
//go:noescape
func expNegativePairs(dst, src *float64, pairs int)

// sqrtScaledPairs sets dst[i] = √(c·src[i]) for i < 2·pairs, bit for bit as
// math.Sqrt(c * src[i]). Implemented in expvec_amd64.s.
//
//go:noescape
func sqrtScaledPairs(dst, src *float64, pairs int, c float64)
