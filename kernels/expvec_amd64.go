//go:build amd64 && !purego

package kernels

// haveSSE2Rows: SSE2 is part of every amd64 processor. Build with -tags purego for the
// portable Go code only.
const haveSSE2Rows = true

// haveAVX2Rows reports whether the AVX2 routines (four entries per instruction) may run: set
// from CPUID at start-up, and by tests to compare them with the SSE2 ones.
var haveAVX2Rows = cpuHasAVX2()

// cpuHasAVX2 reports whether the processor and operating system support AVX2. Implemented in
// expvec_amd64.s.
func cpuHasAVX2() bool

// expNegativeQuads is expNegativePairs for i < 4·quads, with AVX2, and reports whether every
// src[i] was in [0, 708] (if so, every dst[i] is right and the caller need not look at them
// again). Implemented in expvec_amd64.s.
//
//go:noescape
func expNegativeQuads(dst, src *float64, quads int) (inRange bool)

// sqrtScaledQuads is sqrtScaledPairs for i < 4·quads, with AVX2. Implemented in
// expvec_amd64.s.
//
//go:noescape
func sqrtScaledQuads(dst, src *float64, quads int, c float64)

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
