package kernels

import "math"

// expNonPositive returns eˣ for x ≤ 0 (and for NaN, NaN). It is math.Exp specialised to the
// kernel profiles, which only ever evaluate e^(−s) with s ≥ 0, and about twice as fast on the
// machines we measured, because its range reduction and polynomial inline into the filling
// loops. Method (the textbook one, e.g. J.-M. Muller, Elementary Functions, 3rd ed., §11):
// x = k·ln 2 + r with |r| ≤ ½ ln 2, ln 2 split into a high part with trailing zero bits and a
// low part so that k·ln2Hi is exact, then eʳ by its Taylor polynomial of degree 13 (truncation
// below 5·10⁻¹⁸ relative on that interval), then the exact scaling by 2ᵏ. Below −708 it defers
// to math.Exp, which handles the subnormal range. Measured against math.Exp in exp_test.go.
func expNonPositive(x float64) float64 {
	if !(x >= -708) {
		return math.Exp(x) // subnormal results, −Inf and NaN
	}
	const (
		log2e  = 1.44269504088896338700e+00
		ln2Hi  = 6.93147180369123816490e-01 // ln 2 with its low 32 bits zero
		ln2Lo  = 1.90821492927058770002e-10 // ln 2 − ln2Hi
		invF3  = 1.0 / 6
		invF4  = 1.0 / 24
		invF5  = 1.0 / 120
		invF6  = 1.0 / 720
		invF7  = 1.0 / 5040
		invF8  = 1.0 / 40320
		invF9  = 1.0 / 362880
		invF10 = 1.0 / 3628800
		invF11 = 1.0 / 39916800
		invF12 = 1.0 / 479001600
		invF13 = 1.0 / 6227020800
	)
	// k = round(x/ln 2); x ≤ 0, so subtracting ½ and truncating rounds to nearest.
	k := float64(int64(x*log2e - 0.5))
	r := (x - k*ln2Hi) - k*ln2Lo
	// Estrin's scheme: shorter dependency chains than Horner's, so consecutive calls in a
	// filling loop overlap.
	r2 := r * r
	r4 := r2 * r2
	r8 := r4 * r4
	p := (1 + r) + r2*(0.5+r*invF3) +
		r4*((invF4+r*invF5)+r2*(invF6+r*invF7)) +
		r8*((invF8+r*invF9)+r2*(invF10+r*invF11)+r4*(invF12+r*invF13))
	return p * math.Float64frombits(uint64(int64(k)+1023)<<52)
}
