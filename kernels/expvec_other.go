//go:build !amd64 || purego

package kernels

const haveSSE2Rows = false

func expNegativePairs(dst, src *float64, pairs int) { panic("kernels: no vector exponential") }

func sqrtScaledPairs(dst, src *float64, pairs int, c float64) {
	panic("kernels: no vector square root")
}
