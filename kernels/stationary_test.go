package kernels

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// besselK returns the modified Bessel function of the second kind K_ν(z) for z > 0 from the
// integral representation K_ν(z) = ∫₀^∞ exp(−z cosh t) cosh(ν t) dt (DLMF 10.32.9), by
// Gauss–Legendre quadrature on [0, T] where the integrand has decayed below 1e-300 relative.
// It is independent of the closed forms the package uses.
func besselK(nu, z float64) float64 {
	// exp(−z cosh T) < 1e-300·exp(−z) once z(cosh T − 1) > 700.
	upper := math.Acosh(1 + 700/z)
	f := func(t float64) float64 { return math.Exp(-z*math.Cosh(t)) * math.Cosh(nu*t) }
	return quad.Fixed(f, 0, upper, 2000, quad.Legendre{}, 0)
}

// maternGeneral is GPML eq. 4.14: k(r) = 2^{1−ν}/Γ(ν) (√(2ν) r/ℓ)^ν K_ν(√(2ν) r/ℓ), times σ².
func maternGeneral(nu, variance, lengthScale, r float64) float64 {
	if r == 0 {
		return variance
	}
	z := math.Sqrt(2*nu) * r / lengthScale
	return variance * math.Pow(2, 1-nu) / math.Gamma(nu) * math.Pow(z, nu) * besselK(nu, z)
}

func TestStationaryAgainstGeneralMatern(t *testing.T) {
	// Source: Rasmussen & Williams 2006, GPML eq. 4.14 (general Matérn) evaluated with K_ν by
	// quadrature; the package uses the half-integer closed forms of eq. 4.17.
	const tolerance = 1e-10
	nus := map[Family]float64{Matern12: 0.5, Matern32: 1.5, Matern52: 2.5}
	for family, nu := range nus {
		for _, lengthScale := range []float64{0.3, 1, 2.5} {
			for _, variance := range []float64{1, 3.5} {
				for _, r := range []float64{0, 1e-3, 0.1, 0.5, 1, 2, 5} {
					name := fmt.Sprintf("%v/l=%g/var=%g/r=%g", family, lengthScale, variance, r)
					t.Run(name, func(t *testing.T) {
						k := Stationary{Family: family, Dimension: 2, Variance: variance, LengthScale: lengthScale}
						// Put the two points r apart along a diagonal direction.
						x := []float64{0.2, -0.7}
						y := []float64{0.2 + r*0.6, -0.7 + r*0.8}
						got := k.Eval(x, y)
						want := maternGeneral(nu, variance, lengthScale, r)
						if math.Abs(got-want) > tolerance*variance {
							t.Errorf("k = %.15g, eq. 4.14 gives %.15g", got, want)
						}
					})
				}
			}
		}
	}
}

func TestStationaryStatedValues(t *testing.T) {
	// Values at r = ℓ = 1, σ² = 1 from the closed forms, computed by hand (from memory:
	// e^{-1} = 0.36787944117144233, e^{-√3} = 0.17692120631776423, e^{-√5} = 0.10688150862...,
	// e^{-1/2} = 0.6065306597126334).
	const tolerance = 1e-12
	cases := []struct {
		family Family
		want   float64
	}{
		{Matern12, 0.36787944117144233},
		{Matern32, (1 + math.Sqrt(3)) * 0.17692120631776423},
		{Matern52, (1 + math.Sqrt(5) + 5.0/3) * math.Exp(-math.Sqrt(5))},
		{Gaussian, 0.6065306597126334},
	}
	for _, c := range cases {
		t.Run(c.family.String(), func(t *testing.T) {
			k := Stationary{Family: c.family, Dimension: 1, LengthScale: 1}
			if got := k.Eval([]float64{0}, []float64{1}); math.Abs(got-c.want) > tolerance {
				t.Errorf("k(r=1) = %.17g, want %.17g", got, c.want)
			}
			if got := k.Eval([]float64{3}, []float64{3}); got != 1 {
				t.Errorf("k(r=0) = %v, want the variance 1", got)
			}
		})
	}
}

func TestPerDimensionMatchesRescaledScalar(t *testing.T) {
	// Property: with length scales ℓ_k, k(x, y) equals the unit-length-scale kernel at
	// x_k/ℓ_k, y_k/ℓ_k (definition of the anisotropic form, GPML §4.2 "ARD").
	const tolerance = 1e-14
	rng := rand.New(rand.NewPCG(1, 1))
	for _, family := range []Family{Matern12, Matern32, Matern52, Gaussian} {
		for d := 1; d <= 5; d++ {
			t.Run(fmt.Sprintf("%v/d=%d", family, d), func(t *testing.T) {
				scales := make([]float64, d)
				for i := range scales {
					scales[i] = 0.1 + 2*rng.Float64()
				}
				aniso := Stationary{Family: family, LengthScales: scales, Variance: 2}
				unit := Stationary{Family: family, Dimension: d, LengthScale: 1, Variance: 2}
				for range 50 {
					x, y := make([]float64, d), make([]float64, d)
					xs, ys := make([]float64, d), make([]float64, d)
					for i := range d {
						x[i], y[i] = rng.Float64(), rng.Float64()
						xs[i], ys[i] = x[i]/scales[i], y[i]/scales[i]
					}
					got, want := aniso.Eval(x, y), unit.Eval(xs, ys)
					if math.Abs(got-want) > tolerance*want {
						t.Fatalf("anisotropic %v, rescaled scalar %v", got, want)
					}
				}
			})
		}
	}
}

// slowKernel hides Stationary's fast path, so FillBlock and FillLower use Eval.
type slowKernel struct{ Stationary }

func (s slowKernel) FillBlock() {} // shadows the promoted method: slowKernel is no BlockFiller

func TestFastPathMatchesEval(t *testing.T) {
	// Property: the block fast path equals entry-by-entry Eval plus the nugget on the diagonal.
	// The fast path multiplies by 1/ℓ where Eval divides by ℓ: the scaled distances differ in
	// the last bits, and exp(−r²/2) amplifies that by about r², hence the tolerance.
	const tolerance = 1e-13
	rng := rand.New(rand.NewPCG(1, 1))
	for _, family := range []Family{Matern12, Matern32, Matern52, Gaussian} {
		for _, d := range []int{1, 2, 3, 4, 6} {
			t.Run(fmt.Sprintf("%v/d=%d", family, d), func(t *testing.T) {
				const n = 9
				x := make([]float64, n*d)
				for i := range x {
					x[i] = rng.NormFloat64()
				}
				k := Stationary{Family: family, Dimension: d, LengthScale: 0.7, Variance: 1.3, Nugget: 0.25}
				slow := slowKernel{k}
				if _, ok := Kernel(slow).(BlockFiller); ok {
					t.Fatal("slowKernel must not be a BlockFiller")
				}
				rows := []int32{0, 3, 3, 8, 5}
				cols := []int32{3, 1, 8, 0}
				const stride = 6
				fast := make([]float64, len(rows)*stride)
				ref := make([]float64, len(rows)*stride)
				FillBlock(k, fast, stride, x, rows, cols)
				FillBlock(slow, ref, stride, x, rows, cols)
				for a, i := range rows {
					for b, j := range cols {
						want := k.Eval(x[int(i)*d:int(i)*d+d], x[int(j)*d:int(j)*d+d])
						if i == j {
							want += 0.25
						}
						for _, got := range []float64{fast[a*stride+b], ref[a*stride+b]} {
							if math.Abs(got-want) > tolerance*want {
								t.Errorf("block entry (%d,%d) = %v, want %v", a, b, got, want)
							}
						}
					}
				}
				idx := []int32{4, 2, 7, 0}
				lowFast := make([]float64, len(idx)*len(idx))
				lowRef := make([]float64, len(idx)*len(idx))
				for i := range lowFast {
					lowFast[i], lowRef[i] = -1, -1
				}
				FillLower(k, lowFast, len(idx), x, idx)
				FillLower(slow, lowRef, len(idx), x, idx)
				for a := range idx {
					for b := range idx {
						if b > a {
							if lowFast[a*len(idx)+b] != -1 || lowRef[a*len(idx)+b] != -1 {
								t.Errorf("upper entry (%d,%d) was written", a, b)
							}
							continue
						}
						want := k.Eval(x[int(idx[a])*d:int(idx[a])*d+d], x[int(idx[b])*d:int(idx[b])*d+d])
						if a == b {
							want += 0.25
						}
						for _, got := range []float64{lowFast[a*len(idx)+b], lowRef[a*len(idx)+b]} {
							if math.Abs(got-want) > tolerance*want {
								t.Errorf("lower entry (%d,%d) = %v, want %v", a, b, got, want)
							}
						}
					}
				}
			})
		}
	}
}

func TestFillLowerAllocatesNothing(t *testing.T) {
	k := Stationary{Family: Matern32, Dimension: 2, LengthScale: 0.1}
	x := make([]float64, 2*40)
	for i := range x {
		x[i] = float64(i) / 80
	}
	idx := make([]int32, 40)
	for i := range idx {
		idx[i] = int32(i)
	}
	dst := make([]float64, 40*40)
	var kernel Kernel = k // converted once, as a factor holds it
	if allocs := testing.AllocsPerRun(20, func() { FillLower(kernel, dst, 40, x, idx) }); allocs != 0 {
		t.Errorf("FillLower allocated %v times per call", allocs)
	}
}

func TestValidateAndParse(t *testing.T) {
	bad := []Stationary{
		{},
		{Family: Matern32, Dimension: 2},
		{Family: Matern32, Dimension: 0, LengthScale: 1},
		{Family: Matern32, Dimension: 2, LengthScale: math.Inf(1)},
		{Family: Matern32, Dimension: 2, LengthScale: 1, Variance: -1},
		{Family: Matern32, Dimension: 2, LengthScale: 1, Nugget: math.NaN()},
		{Family: Matern32, Dimension: 3, LengthScales: []float64{1, 2}},
		{Family: Matern32, LengthScales: []float64{1, 0}},
		{Family: 9, Dimension: 1, LengthScale: 1},
	}
	for i, k := range bad {
		if k.Validate() == nil {
			t.Errorf("case %d: %+v validated", i, k)
		}
	}
	good := Stationary{Family: Gaussian, LengthScales: []float64{1, 2}}
	if err := good.Validate(); err != nil || good.Dim() != 2 {
		t.Errorf("valid kernel: err %v, dim %d", err, good.Dim())
	}
	for f := Matern12; f <= Gaussian; f++ {
		g, err := ParseFamily(f.String())
		if err != nil || g != f {
			t.Errorf("ParseFamily(%q) = %v, %v", f.String(), g, err)
		}
	}
	if _, err := ParseFamily("matern72"); err == nil {
		t.Error("ParseFamily accepted matern72")
	}
}

// BenchmarkFillLower times FillLower per entry, with and (where the processor has AVX2)
// without the AVX2 row routines.
func BenchmarkFillLower(b *testing.B) {
	paths := rowPaths(b)
	for _, family := range []Family{Matern12, Matern32, Gaussian} {
		for _, s := range []int{8, 40, 160} {
			for _, avx2 := range paths {
				b.Run(fmt.Sprintf("%v/s=%d/avx2=%v", family, s, avx2), func(b *testing.B) {
					haveAVX2Rows = avx2
					benchmarkFillLower(b, family, s)
				})
			}
		}
	}
}

func benchmarkFillLower(b *testing.B, family Family, s int) {
	k := Stationary{Family: family, Dimension: 2, LengthScale: 0.1}
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, 2*s)
	for i := range x {
		x[i] = rng.Float64()
	}
	idx := make([]int32, s)
	for i := range idx {
		idx[i] = int32(i)
	}
	dst := make([]float64, s*s)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		FillLower(k, dst, s, x, idx)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(s*(s+1)/2), "ns/entry")
}

func TestFillLowerLargeBlockMatchesEval(t *testing.T) {
	// Blocks too large for FillLower's stack copy take the other path; both must agree with
	// Eval (same tolerance reasoning as TestFastPathMatchesEval).
	const tolerance = 1e-13
	rng := rand.New(rand.NewPCG(2, 2))
	for _, n := range []int{localPoints / 2, localPoints/2 + 1} { // around the 2D limit
		x := make([]float64, 2*n)
		for i := range x {
			x[i] = rng.Float64()
		}
		idx := make([]int32, n)
		for i := range idx {
			idx[i] = int32(n - 1 - i)
		}
		k := Stationary{Family: Matern32, Dimension: 2, LengthScale: 0.3}
		dst := make([]float64, n*n)
		FillLower(k, dst, n, x, idx)
		for a := 0; a < n; a += 37 {
			for b := 0; b <= a; b += 11 {
				want := k.Eval(x[2*idx[a]:2*idx[a]+2], x[2*idx[b]:2*idx[b]+2])
				if got := dst[a*n+b]; math.Abs(got-want) > tolerance*want {
					t.Fatalf("n=%d: entry (%d,%d) = %v, want %v", n, a, b, got, want)
				}
			}
		}
	}
}
