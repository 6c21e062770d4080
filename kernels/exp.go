package kernels

import "math"

// expNonPositive returns eˣ for x ≤ 0 (and for NaN, NaN). It is math.Exp specialised to the
// kernel profiles, which only ever evaluate e^(−s) with s ≥ 0; it is about 1.7 times as fast
// as math.Exp in BenchmarkExp on the machines we measured, with a worst error of about 1.5
// ulp against it (exp_test.go). Method: the table-driven one of P. T. P. Tang,
// "Table-driven implementation of the exponential function in IEEE floating-point
// arithmetic", ACM Trans. Math. Softw. 15(2), 1989: x = (32k + j)·(ln 2)/32 + r with
// |r| ≤ (ln 2)/64, the constant split into a high part with trailing zero bits and a low part
// so that n·hi is exact; then eˣ = 2ᵏ · 2^(j/32) · eʳ with 2^(j/32) from a 32-entry table and
// eʳ − 1 by its Taylor polynomial of degree 6 (truncation below 4·10⁻¹⁸ relative on that
// interval). Below −708 it defers to math.Exp, which handles the subnormal range.
func expNonPositive(x float64) float64 {
	if !(x >= -708) {
		return math.Exp(x) // subnormal results, −Inf and NaN
	}
	const (
		inv32 = 32 / math.Ln2
		hi    = 6.93147180369123816490e-01 / 32 // (ln 2)/32 with its low 32 bits zero
		lo    = 1.90821492927058770002e-10 / 32 // (ln 2)/32 − hi
	)
	// n = round(32x/ln 2); x ≤ 0, so subtracting ½ and truncating rounds to nearest. Then
	// j = n mod 32 (two's complement) and k = ⌊n/32⌋ (arithmetic shift), n = 32k + j.
	n := int64(x*inv32 - 0.5)
	r := (x - float64(n)*hi) - float64(n)*lo
	r2 := r * r
	q := r + r2*((0.5+r*(1.0/6))+r2*((1.0/24+r*(1.0/120))+r2*(1.0/720)))
	t := expTable[n&31]
	return (t + t*q) * math.Float64frombits(uint64((n>>5)+1023)<<52)
}

// expTable[j] = 2^(j/32), from math.Exp2; its accuracy is checked through expNonPositive
// against math.Exp in exp_test.go.
var expTable = func() (t [32]float64) {
	for j := range t {
		t[j] = math.Exp2(float64(j) / 32)
	}
	return t
}()
