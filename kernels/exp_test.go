package kernels

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestExpNonPositiveMatchesMathExp(t *testing.T) {
	// Reference: the standard library's math.Exp (error below 1 ulp, by the error analysis in
	// the comments of its source, math/exp.go, taken from FreeBSD's e_exp.c).
	// We accept 4 ulp relative (4·2⁻⁵² ≈ 8.9e-16).
	const tolerance = 4 * 0x1p-52
	rng := rand.New(rand.NewPCG(1, 1))
	worst := 0.0
	check := func(x float64) {
		got, want := expNonPositive(x), math.Exp(x)
		if want == 0 {
			if got != 0 {
				t.Fatalf("exp(%v) = %v, want 0", x, got)
			}
			return
		}
		e := math.Abs(got-want) / want
		worst = max(worst, e)
		if e > tolerance {
			t.Fatalf("exp(%v) = %.17g, math.Exp %.17g (relative %.3g)", x, got, want, e)
		}
	}
	for i := range 200000 {
		check(-float64(i) * 1e-5) // [−2, 0], where the kernels spend most of their time
		check(-40 * rng.Float64())
		check(-750 * rng.Float64())
	}
	for _, x := range []float64{0, math.Copysign(0, -1), -1e-300, -0.5 * math.Ln2, -math.Ln2, -707.9, -708, -708.1, -745, -746, math.Inf(-1)} {
		check(x)
	}
	if !math.IsNaN(expNonPositive(math.NaN())) {
		t.Error("exp(NaN) is not NaN")
	}
	t.Logf("worst relative error %.3g (%.2f ulp)", worst, worst/0x1p-52)
}

var expSink float64

func BenchmarkExp(b *testing.B) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = -float64(i) / 256
	}
	b.Run("math.Exp", func(b *testing.B) {
		for b.Loop() {
			for _, v := range x {
				expSink += math.Exp(v)
			}
		}
	})
	b.Run("expNonPositive", func(b *testing.B) {
		for b.Loop() {
			for _, v := range x {
				expSink += expNonPositive(v)
			}
		}
	})
}
