package kernels

import (
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"
)

func TestExpNegativeScalarMatchesMathExp(t *testing.T) {
	// Reference: the standard library's math.Exp (error below 1 ulp, by the error analysis in
	// the comments of its source, math/exp.go, taken from FreeBSD's e_exp.c). We accept 4 ulp
	// relative.
	const tolerance = 4 * 0x1p-52
	rng := rand.New(rand.NewPCG(3, 3))
	worst := 0.0
	check := func(s float64) {
		got, want := expNegativeScalar(s), math.Exp(-s)
		if want == 0 {
			if got != 0 {
				t.Fatalf("e^−%v = %v, want 0", s, got)
			}
			return
		}
		e := math.Abs(got-want) / want
		worst = max(worst, e)
		if e > tolerance {
			t.Fatalf("e^−%v = %.17g, math.Exp %.17g (relative %.3g)", s, got, want, e)
		}
	}
	for i := range 200000 {
		check(float64(i) * 1e-5)
		check(40 * rng.Float64())
		check(750 * rng.Float64())
	}
	for _, s := range []float64{0, math.Copysign(0, -1), 1e-300, 0.5 * math.Ln2, math.Ln2, 707.9, 708, 708.1, 745, 746, math.Inf(1)} {
		check(s)
	}
	if !math.IsNaN(expNegativeScalar(math.NaN())) {
		t.Error("e^−NaN is not NaN")
	}
	t.Logf("worst relative error %.3g (%.2f ulp)", worst, worst/0x1p-52)
}

// rowPaths returns the vector paths this processor has: the AVX2 routines off (SSE2 pairs
// on amd64, or the portable code) and, where the processor has AVX2, on. The caller sets
// haveAVX2Rows to each in turn; the start-up setting is restored when tb finishes.
func rowPaths(tb testing.TB) []bool {
	supported := haveAVX2Rows
	tb.Cleanup(func() { haveAVX2Rows = supported })
	if supported {
		return []bool{false, true}
	}
	return []bool{false}
}

// withRowPaths runs f once per vector path (rowPaths).
func withRowPaths(t *testing.T, f func(t *testing.T)) {
	for _, avx2 := range rowPaths(t) {
		haveAVX2Rows = avx2
		t.Run(map[bool]string{false: "without-avx2", true: "avx2"}[avx2], f)
	}
}

// The processor reports AVX2 here exactly when Linux lists avx2 among its flags; a check of
// the CPUID sequence against the kernel's own reading, where there is one.
func TestAVX2DetectionAgreesWithLinux(t *testing.T) {
	data, err := os.ReadFile("/proc/cpuinfo")
	if err != nil || !haveSSE2Rows {
		t.Skip("no /proc/cpuinfo or not amd64 with assembly")
	}
	var flags []string
	for _, line := range strings.Split(string(data), "\n") {
		if strings.HasPrefix(line, "flags") {
			flags = strings.Fields(line)
			break
		}
	}
	if want := slices.Contains(flags, "avx2"); cpuHasAVX2() != want {
		t.Errorf("CPUID says AVX2 = %v, /proc/cpuinfo says %v", cpuHasAVX2(), want)
	}
	t.Logf("AVX2 rows: %v", haveAVX2Rows)
}

func TestExpNegativesMatchesScalar(t *testing.T) { withRowPaths(t, testExpNegativesMatchesScalar) }

func TestExpNegativesSingleOutOfRange(t *testing.T) {
	withRowPaths(t, testExpNegativesSingleOutOfRange)
}

// One entry outside [0, 708] in a row of in-range ones, at every position of rows of 1 to 13:
// the vector routines must notice it alone (each kind of out-of-range value on its own), and
// the row must still have expNegativeScalar's bits everywhere.
func testExpNegativesSingleOutOfRange(t *testing.T) {
	for _, bad := range []float64{708.5, 750, math.Inf(1), -1, math.Copysign(1e-300, -1), math.Inf(-1), math.NaN()} {
		for n := 1; n <= 13; n++ {
			for at := range n {
				src := make([]float64, n)
				for i := range src {
					src[i] = 0.37 * float64(i+1)
				}
				src[at] = bad
				dst := make([]float64, n)
				expNegatives(dst, src)
				for i, s := range src {
					want := expNegativeScalar(s)
					if math.Float64bits(dst[i]) != math.Float64bits(want) && !(math.IsNaN(dst[i]) && math.IsNaN(want)) {
						t.Fatalf("bad %v at %d of %d: e^−%v = %v, scalar %v", bad, at, n, s, dst[i], want)
					}
				}
			}
		}
	}
}

// The AVX2 routine reports a row of in-range entries as such (0, the smallest subnormal, 708
// itself and values between), so the common case skips the second pass, and reports each kind
// of out-of-range entry (above 708, negative, infinite, NaN) in every lane.
func TestExpNegativeQuadsReportsRange(t *testing.T) {
	if !haveAVX2Rows {
		t.Skip("no AVX2 routine on this machine")
	}
	in := []float64{0, math.Copysign(0, -1), 5e-324, 1, 707.99, 708, 3.5, 0.25}
	dst := make([]float64, len(in))
	if !expNegativeQuads(&dst[0], &in[0], len(in)/4) {
		t.Errorf("in-range row %v reported out of range", in)
	}
	for _, bad := range []float64{708.0000000000001, -5e-324, math.Inf(1), math.Inf(-1), math.NaN()} {
		for lane := range len(in) {
			src := slices.Clone(in)
			src[lane] = bad
			if expNegativeQuads(&dst[0], &src[0], len(src)/4) {
				t.Errorf("%v in lane %d not reported", bad, lane)
			}
		}
	}
}

func testExpNegativesMatchesScalar(t *testing.T) {
	// The row routines (AVX2 quads and SSE2 pairs on amd64) must give the bits of
	// expNegativeScalar for every entry, including the last odd ones and entries outside
	// [0, 708].
	rng := rand.New(rand.NewPCG(4, 4))
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 64, 1001, 1003} {
		src := make([]float64, n)
		for i := range src {
			switch rng.IntN(8) {
			case 0:
				src[i] = 750 * rng.Float64()
			case 1:
				src[i] = []float64{0, math.Copysign(0, -1), 708, 708.5, -1, math.Inf(1), math.NaN(), 1e-300}[rng.IntN(8)]
			default:
				src[i] = 5 * rng.Float64()
			}
		}
		dst := make([]float64, n)
		expNegatives(dst, src)
		for i, s := range src {
			want := expNegativeScalar(s)
			if math.Float64bits(dst[i]) != math.Float64bits(want) && !(math.IsNaN(dst[i]) && math.IsNaN(want)) {
				t.Fatalf("n=%d: e^−%v = %v (bits %#x), scalar %v (bits %#x)", n, s, dst[i], math.Float64bits(dst[i]), want, math.Float64bits(want))
			}
		}
	}
	// Exhaustive over a fine grid of [0, 708]: pairs of neighbouring inputs.
	src := make([]float64, 1<<16)
	for i := range src {
		src[i] = 708 * float64(i) / float64(len(src)-1)
	}
	dst := make([]float64, len(src))
	expNegatives(dst, src)
	for i, s := range src {
		if want := expNegativeScalar(s); dst[i] != want {
			t.Fatalf("e^−%v = %v, scalar %v", s, dst[i], want)
		}
	}
}

func BenchmarkExpNegatives(b *testing.B) {
	src := make([]float64, 1024)
	for i := range src {
		src[i] = float64(i) / 256
	}
	dst := make([]float64, len(src))
	for _, avx2 := range rowPaths(b) {
		haveAVX2Rows = avx2
		b.Run(map[bool]string{false: "rows", true: "rows-avx2"}[avx2], func(b *testing.B) {
			for b.Loop() {
				expNegatives(dst, src)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(src)), "ns/entry")
		})
	}
	b.Run("scalar", func(b *testing.B) {
		for b.Loop() {
			for i, s := range src {
				dst[i] = expNegativeScalar(s)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(src)), "ns/entry")
	})
	b.Run("math.Exp", func(b *testing.B) {
		for b.Loop() {
			for i, s := range src {
				dst[i] = math.Exp(-s)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(src)), "ns/entry")
	})
}

func TestSqrtScaledMatchesMathSqrt(t *testing.T) { withRowPaths(t, testSqrtScaledMatchesMathSqrt) }

func testSqrtScaledMatchesMathSqrt(t *testing.T) {
	// (V)SQRTPD and (V)MULPD are correctly rounded IEEE operations, as math.Sqrt and * are
	// (the Go specification and IEEE 754), so the bits must agree for every entry and length.
	rng := rand.New(rand.NewPCG(5, 5))
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 64, 333} {
		for _, c := range []float64{1, 3, 5} {
			src := make([]float64, n)
			for i := range src {
				src[i] = math.Ldexp(rng.Float64(), rng.IntN(40)-20)
			}
			if n > 3 {
				src[0], src[1], src[2] = 0, math.Inf(1), math.MaxFloat64
			}
			dst := make([]float64, n)
			sqrtScaled(dst, src, c)
			for i, s := range src {
				if want := math.Sqrt(c * s); math.Float64bits(dst[i]) != math.Float64bits(want) {
					t.Fatalf("n=%d c=%g: √(c·%v) = %v, math.Sqrt %v", n, c, s, dst[i], want)
				}
			}
			sqrtScaled(src, src, c) // in place
			for i := range src {
				if src[i] != dst[i] {
					t.Fatalf("n=%d c=%g: in place entry %d = %v, want %v", n, c, i, src[i], dst[i])
				}
			}
		}
	}
}
