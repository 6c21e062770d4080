package kernels

import "math"

// expNegatives sets dst[i] = e^(−src[i]) for every i < len(src); len(dst) must be at least
// len(src). It is the kernels' exponential for whole rows: on amd64 an AVX2 routine
// (expvec_amd64.s) computes four entries per step where the processor has AVX2, and an SSE2
// routine two, both bit for bit as expNegativeScalar, the definition, which also serves the
// last odd entry, other architectures, and every src[i] outside [0, 708] (where the
// routines' range reduction does not hold).
func expNegatives(dst, src []float64) {
	dst = dst[:len(src)]
	// Entries below vector were computed by a vector routine, those below checked were
	// also found in its range by it; the rest are checked here.
	vector, checked := 0, 0
	if haveAVX2Rows {
		if quads := len(src) / 4; quads > 0 {
			vector = 4 * quads
			if expNegativeQuads(&dst[0], &src[0], quads) {
				checked = vector
			}
		}
	}
	if haveSSE2Rows {
		if pairs := (len(src) - vector) / 2; pairs > 0 {
			expNegativePairs(&dst[vector], &src[vector], pairs)
			vector += 2 * pairs
		}
	}
	for i := checked; i < len(src); i++ {
		if s := src[i]; i >= vector || !(s >= 0 && s <= 708) {
			dst[i] = expNegativeScalar(s)
		}
	}
}

// sqrtScaled sets dst[i] = √(c·src[i]) for every i < len(src), four entries per AVX2
// instruction or two per SSE2 one on amd64 (the same bits as math.Sqrt(c * src[i])); len(dst)
// must be at least len(src). dst may be src.
func sqrtScaled(dst, src []float64, c float64) {
	dst = dst[:len(src)]
	vector := 0
	if haveAVX2Rows {
		if quads := len(src) / 4; quads > 0 {
			sqrtScaledQuads(&dst[0], &src[0], quads, c)
			vector = 4 * quads
		}
	}
	if haveSSE2Rows {
		if pairs := (len(src) - vector) / 2; pairs > 0 {
			sqrtScaledPairs(&dst[vector], &src[vector], pairs, c)
			vector += 2 * pairs
		}
	}
	for i := vector; i < len(src); i++ {
		dst[i] = math.Sqrt(c * src[i])
	}
}

// Constants of expNegativeScalar. ln2Hi has its low 32 bits zero, so k·ln2Hi is exact for
// the |k| ≤ 1022 used; ln2Lo = ln 2 − ln2Hi. roundMagic = 1.5·2⁵² rounds to an integer when
// added to a number of magnitude below 2⁵¹, and then holds that integer in its low bits.
const (
	expLog2e      = 1.44269504088896338700e+00
	expLn2Hi      = 6.93147180369123816490e-01
	expLn2Lo      = 1.90821492927058770002e-10
	expRoundMagic = 0x1.8p52
)

// expNegativeScalar returns e^(−s) for s ≥ 0 (and for NaN, NaN; for s < 0, math.Exp(−s)).
// Method (the textbook one, e.g. J.-M. Muller, Elementary Functions, 3rd ed., §11): −s =
// k·ln 2 + r with k = round(−s/ln 2) (by adding and subtracting 1.5·2⁵²) and |r| ≤ ½ ln 2,
// then eʳ by its Taylor polynomial of degree 13 in Estrin's scheme (truncation below 5·10⁻¹⁸
// relative on that interval), then the exact scaling by 2ᵏ, whose exponent field is read off
// the rounded sum's low bits. Above 708 it defers to math.Exp, which handles the subnormal
// range. The explicit float64 conversions keep every operation separately rounded, as the
// SSE2 routine computes them. Measured against math.Exp in expvec_test.go.
func expNegativeScalar(s float64) float64 {
	if !(s >= 0 && s <= 708) {
		return math.Exp(-s) // subnormal results, +Inf, NaN, and s < 0
	}
	x := -s
	rounded := float64(float64(x*expLog2e) + expRoundMagic)
	k := float64(rounded - expRoundMagic)
	r := float64(x-float64(k*expLn2Hi)) - float64(k*expLn2Lo)
	r2 := float64(r * r)
	r4 := float64(r2 * r2)
	r8 := float64(r4 * r4)
	t1 := float64(1 + r)
	t2 := float64(r2 * float64(0.5+float64(r*(1.0/6))))
	t3 := float64(r4 * float64(float64(1.0/24+float64(r*(1.0/120)))+float64(r2*float64(1.0/720+float64(r*(1.0/5040))))))
	inner := float64(float64(1.0/40320+float64(r*(1.0/362880))) + float64(r2*float64(1.0/3628800+float64(r*(1.0/39916800)))))
	inner = float64(inner + float64(r4*float64(1.0/479001600+float64(r*(1.0/6227020800)))))
	p := float64(float64(float64(t1+t2)+t3) + float64(r8*inner))
	scale := math.Float64frombits((math.Float64bits(rounded) + 1023) << 52)
	return float64(p * scale)
}
