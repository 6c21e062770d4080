//go:build !amd64 || purego

package kernels

const haveSSE2Rows = false

var haveAVX2Rows = false

func expNegativeQuads(dst, src *float64, quads int) bool {
	panic("kernels: no vector exponential")
}

func sqrtScaledQuads(dst, src *float64, quads int, c float64) {
	panic("kernels: no vector square root")
}

func expNegativePairs(dst, src *float64, pairs int) { panic("kernels: no vector exponential") }

func sqrtScaledPairs(dst, src *float64, pairs int, c float64) {
	panic("kernels: no vector square root")
}

func cpuHasAVX2() bool { return false }
